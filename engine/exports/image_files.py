"""Image files for exports: PNG (8/16-bit, with a text chunk) and OpenEXR (float, with an attribute).

Writers take arrays exactly as they are to be stored and never add
timestamps, so equal inputs give byte-identical files.

- PNG, 8 or 16 bits, written here strip by strip (:func:`write_png_strips`: filter type
  0, one zlib stream, ``tEXt`` chunks right after ``IHDR``; pypng frames the chunks).
  Pillow cannot write 16-bit RGB/RGBA, nor an image it does not hold whole.
- EXR through the OpenEXR Python bindings (``OpenEXR.File(header, channels)``,
  OpenEXR 3.x), 32-bit float channels R, G, B (, A), ZIP compression
  (lossless), the metadata as string header attributes and the display
  primaries as the standard ``chromaticities`` attribute.

References
----------
[PNG], section 11.3.4.3 (``tEXt``: Latin-1 keyword of 1-79
characters, a null separator, Latin-1 text); [OpenEXR] technical introduction
(header attributes, ``chromaticities``).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from starkiln.engine.errors import StarkilnError

PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"
EXR_MAGIC = b"\x76\x2f\x31\x01"


def _check_image(array: np.ndarray) -> np.ndarray:
    a = np.asarray(array)
    if a.ndim != 3 or a.shape[2] not in (3, 4):
        raise StarkilnError(f"image array must be (H, W, 3) or (H, W, 4), got shape {a.shape}")
    return np.ascontiguousarray(a)


def write_png(path, array: np.ndarray, text: dict[str, str] | None = None,
              compression: int = 6) -> None:
    """Write an 8-bit (uint8) or 16-bit (uint16) RGB/RGBA PNG with ``tEXt`` chunks.

    Parameters
    ----------
    path : path-like
        Destination (written directly: callers wrap it in
        :func:`starkiln.engine.atomic.atomic_path`).
    array : numpy.ndarray
        ``(H, W, 3|4)`` uint8 or uint16; row 0 is the top of the image.
    text : dict, optional
        Keyword -> Latin-1 text, stored uncompressed (``tEXt``).
    compression : int
        zlib level 0-9.

    References
    ----------
    [PNG] sections 11.2.2 (IHDR, bit depths 8 and 16 for colour
    types 2 and 6) and 11.3.4.3 (tEXt).
    """
    a = _check_image(array)
    write_png_strips(path, [a], a.shape[1], a.shape[0], text, compression)


def write_png_strips(path, strips, width: int, height: int, text: dict[str, str] | None = None,
                     compression: int = 6) -> None:
    """Write a PNG from horizontal strips, top to bottom, without holding the whole image.

    The strips (each ``(h, width, 3|4)``, all uint8 or all uint16, heights summing to
    ``height``) are filtered with filter type 0 (None) and fed to one zlib stream, so an
    image far larger than the cache is encoded strip by strip (a contact sheet of 4096
    swatches is 217 MB of pixels). The file is signature, ``IHDR``, the ``tEXt`` chunks,
    ``IDAT`` chunks of at most 1 MiB, ``IEND``; nothing varies between runs.

    Parameters
    ----------
    path : path-like
        Destination (callers wrap it in :func:`starkiln.engine.atomic.atomic_path`).
    strips : iterable of numpy.ndarray
    width, height : int
        Image size in pixels.
    text : dict, optional
        Keyword (1-79 characters) -> Latin-1 text.
    compression : int
        zlib level 0-9.

    References
    ----------
    [PNG] sections 5.3 (chunk layout, CRC), 9.2 (filter type 0), 10 (zlib
    stream split over consecutive IDAT chunks), 11.2.2 (IHDR), 11.3.4.3 (tEXt); [RFC1950].
    """
    import struct
    import zlib

    import png

    text = dict(text or {})
    for key, value in text.items():
        if not 1 <= len(key) <= 79:
            raise StarkilnError(f"PNG text keyword {key!r} must have 1-79 characters")
        value.encode("latin-1")
    packer = zlib.compressobj(compression)
    idat = []
    pending = []
    pending_size = 0
    header = None
    rows_seen = 0
    for strip in strips:
        a = _check_image(strip)
        if a.dtype not in (np.uint8, np.uint16):
            raise StarkilnError(f"PNG samples must be uint8 or uint16, got {a.dtype}")
        if header is None:
            header = (a.dtype, a.shape[2])
        elif header != (a.dtype, a.shape[2]):
            raise StarkilnError("PNG strips must share one sample type and channel count")
        if a.shape[1] != width:
            raise StarkilnError(f"PNG strip width {a.shape[1]} differs from the image width {width}")
        h = a.shape[0]
        rows_seen += h
        samples = a.astype(">u2") if a.dtype == np.uint16 else a
        lines = np.zeros((h, 1 + samples.shape[1] * samples.shape[2] * samples.itemsize), np.uint8)
        lines[:, 1:] = samples.reshape(h, -1).view(np.uint8)  # filter byte 0 (None) per line
        pending.append(packer.compress(lines))
        pending_size += len(pending[-1])
        if pending_size >= 1 << 20:
            idat.append(b"".join(pending))
            pending, pending_size = [], 0
    if header is None or rows_seen != height:
        raise StarkilnError(f"PNG strips hold {rows_seen} rows; the image has {height}")
    pending.append(packer.flush())
    idat.append(b"".join(pending))
    dtype, channels = header
    depth = 16 if dtype == np.uint16 else 8
    chunks = [(b"IHDR", struct.pack(">IIBBBBB", width, height, depth, 6 if channels == 4 else 2,
                                    0, 0, 0))]
    chunks += [(b"tEXt", key.encode("latin-1") + b"\x00" + value.encode("latin-1"))
               for key, value in text.items()]
    chunks += [(b"IDAT", data) for data in idat if data]
    chunks.append((b"IEND", b""))
    with open(path, "wb") as fh:
        png.write_chunks(fh, chunks)


def write_exr(path, array: np.ndarray, attributes: dict[str, str] | None = None,
              chromaticities=None) -> None:
    """Write a 32-bit float RGB/RGBA OpenEXR file with string header attributes.

    Parameters
    ----------
    path : path-like
        Destination (callers wrap it in :func:`starkiln.engine.atomic.atomic_path`).
    array : numpy.ndarray
        ``(H, W, 3|4)`` values, stored as float32; row 0 is the top of the image
        (OpenEXR's ``INCREASING_Y`` line order, y down).
    attributes : dict, optional
        Attribute name -> string value.
    chromaticities : sequence of 8 floats, optional
        Red, green, blue and white xy of the RGB values (the standard
        ``chromaticities`` attribute).

    References
    ----------
    [OpenEXR] technical introduction ("chromaticities" attribute; data window, y
    down); OpenEXR Python bindings 3.x (``OpenEXR.File(header, channels)``).
    """
    import OpenEXR

    a = np.ascontiguousarray(_check_image(array), dtype=np.float32)
    header = {"compression": OpenEXR.ZIP_COMPRESSION, "type": OpenEXR.scanlineimage}
    for key, value in (attributes or {}).items():
        header[key] = str(value)
    if chromaticities is not None:
        header["chromaticities"] = tuple(float(v) for v in chromaticities)
    channels = {"RGBA" if a.shape[2] == 4 else "RGB": a}
    with OpenEXR.File(header, channels) as f:
        f.write(str(path))


def read_embedded_text(path, key: str = "starkiln") -> str:
    """The text stored under ``key`` in a PNG ``tEXt``/``zTXt``/``iTXt`` chunk or an EXR attribute.

    Raises
    ------
    starkiln.engine.errors.StarkilnError
        The file cannot be read, is neither PNG nor EXR, or holds no ``key``.

    References
    ----------
    [PNG] section 11.3.4; [OpenEXR] header attributes.
    """
    path = Path(path)
    try:
        with open(path, "rb") as fh:
            magic = fh.read(8)
    except OSError as exc:
        raise StarkilnError(f"{path}: cannot read ({exc.strerror})") from None
    if magic == PNG_SIGNATURE:
        value = _png_text(path, key)
    elif magic[:4] == EXR_MAGIC:
        import OpenEXR

        try:
            with OpenEXR.File(str(path), header_only=True) as f:
                value = f.header().get(key)
        except Exception as exc:  # the bindings raise RuntimeError and others
            raise StarkilnError(f"{path}: not a readable OpenEXR file ({exc})") from None
        if value is not None and not isinstance(value, str):
            value = None
    else:
        raise StarkilnError(f"{path}: neither a PNG nor an OpenEXR file")
    if value is None:
        raise StarkilnError(f"{path}: holds no {key!r} metadata; accepted: a texture written "
                            "by 'starkiln lut'")
    return value


def _png_text(path, key: str):
    """Scan a PNG's chunks for ``tEXt``/``zTXt``/``iTXt`` under ``key``; no pixels are decoded."""
    import zlib

    import png

    want = key.encode("latin-1")
    try:
        with open(path, "rb") as fh:
            return _scan_png_text(png.Reader(file=fh), want)
    except UnicodeDecodeError as exc:
        raise StarkilnError(f"{path}: the {key!r} text is not UTF-8 (byte "
                            f"{exc.object[exc.start]:#04x} at offset {exc.start}); accepted: a "
                            "UTF-8 iTXt chunk (ISO/IEC 15948 11.3.4.5)") from None
    except (png.Error, zlib.error, IndexError, OSError) as exc:
        raise StarkilnError(f"{path}: not a readable PNG ({exc})") from None


def _scan_png_text(reader, want: bytes):
    """The text of the first text chunk whose keyword is ``want`` ([PNG] section 11.3.4)."""
    import zlib

    while True:
        tag, data = reader.chunk(lenient=True)
        if tag == b"IEND":
            return None
        if tag not in (b"tEXt", b"zTXt", b"iTXt"):
            continue
        keyword, _, rest = data.partition(b"\x00")
        if keyword != want:
            continue
        if tag == b"tEXt":  # keyword NUL text (Latin-1)
            return rest.decode("latin-1")
        if tag == b"zTXt":  # keyword NUL method(0 = zlib) stream
            return zlib.decompress(rest[1:]).decode("latin-1")
        # iTXt: keyword NUL flag method language NUL translated-keyword NUL text (UTF-8)
        compressed, rest = rest[0], rest[2:]
        _language, _, rest = rest.partition(b"\x00")
        _translated, _, text = rest.partition(b"\x00")
        return (zlib.decompress(text) if compressed else text).decode("utf-8")


def read_embedded_json(path, key: str = "starkiln") -> dict:
    """The JSON object stored under ``key`` (see :func:`read_embedded_text`)."""
    from starkiln.engine.errors import parse_json

    data = parse_json(read_embedded_text(path, key), f"{path}: {key!r} metadata",
                      "the metadata 'starkiln lut' writes", StarkilnError)
    if not isinstance(data, dict):
        raise StarkilnError(f"{path}: {key!r} metadata is not a JSON object")
    return data
