"""Image files for exports: PNG (8/16-bit, with a text chunk) and OpenEXR (float, with an attribute).

Writers take arrays exactly as they are to be stored and never add
timestamps, so equal inputs give byte-identical files.

- PNG, 8 or 16 bits, written here strip by strip (:func:`write_png_strips`: filter type
  0, one zlib stream, ``tEXt`` chunks right after ``IHDR``; pypng frames the chunks).
  Pillow cannot write 16-bit RGB/RGBA, nor an image it does not hold whole.
- PNG colour chunks (:func:`png_colour_chunks`, [PNG3] section 11.3.2): what the code values
  mean. The sRGB display gets ``sRGB`` (rendering intent 0, perceptual) with the ``gAMA``
  and ``cHRM`` values the specification gives for it; another display gets ``cHRM`` (its
  primaries and white) and ``gAMA`` (1 / gamma; 1/2.2 for the sRGB curve, as the
  specification's compatibility value; none for PQ, which no power describes); and every
  display whose primaries, white and transfer have ITU-T H.273 code points gets ``cICP``
  as well ([H273]; [PNG3] section 11.3.2.6), which a reader that knows it uses first.
  Every display but sRGB also embeds its ICC display profile as ``iCCP`` ([PNG3] section
  11.3.2.3: the profile name is the display's name made Latin-1 safe, the profile
  zlib-compressed), written by :func:`starkiln.engine.colour.icc_writer.icc_profile_bytes`
  (an ICC v4 matrix/TRC profile, which LittleCMS reads), so colour-managed readers that know
  neither ``cICP`` nor ``cHRM``/``gAMA`` still see the primaries, white and the whole tone
  curve (also the table and PQ curves no ``gAMA`` describes). The sRGB display gets no
  ``iCCP``: [PNG3] 11.3.2.5 forbids ``sRGB`` and ``iCCP`` together. The chunk is built once
  per display (cached). A working space is never a PNG (its values go
  outside 0-1): callers refuse it and point to EXR.
- EXR through the OpenEXR Python bindings (``OpenEXR.File(header, channels)``,
  OpenEXR 3.x), 32-bit float channels R, G, B (, A), ZIP compression
  (lossless), the metadata as string header attributes and the display
  primaries as the standard ``chromaticities`` attribute.

References
----------
[PNG], section 11.3.4.3 (``tEXt``: Latin-1 keyword of 1-79
characters, a null separator, Latin-1 text); [PNG3] section 11.3.2 (``cHRM``, ``gAMA``,
``iCCP``, ``sRGB``, ``cICP``); [ICC1] (the embedded profile); [H273] (code points); [OpenEXR] technical introduction
(header attributes, ``chromaticities``).
"""

from __future__ import annotations

from functools import lru_cache
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


#: ITU-T H.273 ColourPrimaries code points: (red, green, blue, white) xy ([H273] table 2;
#: the code numbers from memory, the chromaticities those of the standards they name).
H273_PRIMARIES = {
    1: ((0.64, 0.33), (0.30, 0.60), (0.15, 0.06), (0.3127, 0.3290)),  # BT.709 / sRGB
    9: ((0.708, 0.292), (0.170, 0.797), (0.131, 0.046), (0.3127, 0.3290)),  # BT.2020, BT.2100
    11: ((0.680, 0.320), (0.265, 0.690), (0.150, 0.060), (0.314, 0.351)),  # SMPTE RP 431-2
    12: ((0.680, 0.320), (0.265, 0.690), (0.150, 0.060), (0.3127, 0.3290)),  # SMPTE EG 432-1
}
#: ITU-T H.273 TransferCharacteristics code points for Starkiln's transfers ([H273] table 3,
#: the numbers from memory): 4 "assumed display gamma 2.2", 5 gamma 2.8, 8 linear,
#: 13 IEC 61966-2-1 (sRGB), 16 SMPTE ST 2084 (PQ). BT.1886's gamma 2.4 and gamma 2.6 have none.
H273_TRANSFERS = {("gamma", 2.2): 4, ("gamma", 2.8): 5, ("linear", None): 8, ("srgb", None): 13,
                  ("pq", None): 16}
#: [PNG3] section 11.3.2.2 / 11.3.2.5: the gAMA and cHRM values to write beside ``sRGB``.
SRGB_GAMA = 45455
SRGB_CHRM = (31270, 32900, 64000, 33000, 30000, 60000, 15000, 6000)


def _same_primaries(display, primaries, tol: float = 5e-4) -> bool:
    got = np.array([display.red_xy, display.green_xy, display.blue_xy, display.white_xy])
    return bool(np.all(np.abs(got - np.array(primaries)) <= tol))


def cicp_code_points(display):
    """The ITU-T H.273 code points of a display, ``(primaries, transfer, 0, 1)``, or None.

    Matrix coefficients 0 (RGB, as PNG requires) and full range 1. None when the primaries,
    white or transfer function has no code point (e.g. gamma 2.4).

    Parameters
    ----------
    display : starkiln.engine.colour.displays.Display

    Returns
    -------
    tuple of 4 int, or None

    References
    ----------
    [H273] tables 2-4; [PNG3] section 11.3.2.6 (``cICP``: matrix 0 and full range for RGB).

    Examples
    --------
    BT.2100 PQ is primaries 9, transfer 16 ([H273]; the values the PNG specification's own
    example uses):

    >>> from starkiln.engine.colour.displays import get_display
    >>> cicp_code_points(get_display("rec2100-pq"))
    (9, 16, 0, 1)
    >>> cicp_code_points(get_display("rec2020")) is None  # BT.1886 gamma 2.4 has no code
    True
    """
    prim = next((code for code, p in H273_PRIMARIES.items() if _same_primaries(display, p)),
                None)
    key = (display.transfer, round(display.gamma, 3) if display.transfer == "gamma" else None)
    transfer = H273_TRANSFERS.get(key)
    if prim is None or transfer is None:
        return None
    return (prim, transfer, 0, 1)


def png_colour_chunks(display) -> list[tuple[bytes, bytes]]:
    """The PNG chunks that say what a display's code values mean (module docstring).

    Parameters
    ----------
    display : starkiln.engine.colour.displays.Display
        A display (not a working space: PNG holds code values 0-1).

    Returns
    -------
    list of (bytes, bytes)
        ``(chunk type, data)`` in file order, to follow ``IHDR``: ``cICP`` (when it has code
        points), then ``sRGB`` or ``iCCP``, ``gAMA`` (not for PQ or a table), ``cHRM``.

    References
    ----------
    [PNG3] sections 11.3.2.2 (``gAMA``: 100000 / gamma), 11.3.2.1 (``cHRM``: x, y times
    100000, white first), 11.3.2.3 (``iCCP``), 11.3.2.5 (``sRGB``), 11.3.2.6 (``cICP``);
    [H273]; [ICC1].
    """
    import struct

    if display.kind == "working-space":
        raise StarkilnError(f"PNG holds display code values 0-1; working space {display.name!r} "
                            "holds scene-linear values outside that range: write .exr")
    chunks = []
    cicp = cicp_code_points(display)
    if cicp is not None:
        chunks.append((b"cICP", bytes(cicp)))
    if display.transfer == "srgb" and _same_primaries(display, H273_PRIMARIES[1], 1e-9):
        chunks.append((b"sRGB", b"\x00"))  # rendering intent 0: perceptual
        chunks.append((b"gAMA", struct.pack(">I", SRGB_GAMA)))
        chunks.append((b"cHRM", struct.pack(">8I", *SRGB_CHRM)))
        return chunks
    chunks.append((b"iCCP", iccp_chunk_data(display)))
    if display.transfer == "srgb":
        chunks.append((b"gAMA", struct.pack(">I", SRGB_GAMA)))
    elif display.transfer == "gamma":
        chunks.append((b"gAMA", struct.pack(">I", round(100000.0 / display.gamma))))
    elif display.transfer == "linear":
        chunks.append((b"gAMA", struct.pack(">I", 100000)))
    xy = [display.white_xy, display.red_xy, display.green_xy, display.blue_xy]
    chunks.append((b"cHRM", struct.pack(">8I", *(round(v * 100000.0) for p in xy for v in p))))
    return chunks


def iccp_profile_name(name: str) -> bytes:
    """A display name as a PNG ``iCCP`` profile name: Latin-1, 1-79 bytes.

    Characters outside printable Latin-1 (32-126, 161-255) become ``?``, runs of spaces one
    space, leading and trailing spaces go; an empty result is ``ICC profile``.

    Parameters
    ----------
    name : str

    Returns
    -------
    bytes

    References
    ----------
    [PNG3] sections 11.3.2.3 (``iCCP``: a profile name like a keyword) and 11.3.3.4 (keywords:
    1-79 bytes of printable Latin-1, no leading, trailing or consecutive spaces).

    Examples
    --------
    >>> iccp_profile_name("  Dome  \u2014 north ")
    b'Dome ? north'
    """
    import re

    chars = "".join(c if (32 <= ord(c) <= 126 or 161 <= ord(c) <= 255) else "?" for c in name)
    chars = re.sub(" +", " ", chars).strip()[:79].rstrip()
    return (chars or "ICC profile").encode("latin-1")


@lru_cache(maxsize=64)
def iccp_chunk_data(display) -> bytes:
    """The data of a display's ``iCCP`` chunk: name, NUL, method 0 (zlib), the profile.

    Parameters
    ----------
    display : starkiln.engine.colour.displays.Display

    Returns
    -------
    bytes
        Built once per display (cached).

    References
    ----------
    [PNG3] section 11.3.2.3; [RFC1950] (zlib); [ICC1] (the profile,
    :func:`starkiln.engine.colour.icc_writer.icc_profile_bytes`).
    """
    import zlib

    from starkiln.engine.colour.icc_writer import icc_profile_bytes

    return (iccp_profile_name(display.name) + b"\x00\x00"
            + zlib.compress(icc_profile_bytes(display), 9))


class PngText(dict):
    """``tEXt`` keyword -> text, plus the colour chunks (:func:`png_colour_chunks`) of the image.

    The writers take it where they take a plain dict of texts, so every caller of
    :func:`write_png` keeps the ``(path, array, text)`` form and the image still says what
    its code values mean.
    """

    def __init__(self, text=None, colour_chunks=()):
        super().__init__(text or {})
        self.colour_chunks = [(bytes(t), bytes(d)) for t, d in colour_chunks]


def write_png(path, array: np.ndarray, text: dict[str, str] | None = None,
              compression: int = 6, colour_chunks=()) -> None:
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
    colour_chunks : sequence of (bytes, bytes)
        Chunks from :func:`png_colour_chunks`, written right after ``IHDR`` (a
        :class:`PngText` ``text`` may carry them instead).

    References
    ----------
    [PNG] sections 11.2.2 (IHDR, bit depths 8 and 16 for colour
    types 2 and 6) and 11.3.4.3 (tEXt).
    """
    a = _check_image(array)
    write_png_strips(path, [a], a.shape[1], a.shape[0], text, compression, colour_chunks)


def write_png_strips(path, strips, width: int, height: int, text: dict[str, str] | None = None,
                     compression: int = 6, colour_chunks=()) -> None:
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
    colour_chunks : sequence of (bytes, bytes)
        Chunks from :func:`png_colour_chunks`, written right after ``IHDR`` (before ``PLTE``
        and ``IDAT``, as [PNG3] section 5.6 orders them), the ``iCCP`` with its compressed
        profile among them; ``sRGB`` with ``iCCP`` is refused ([PNG3] 11.3.2.5).

    References
    ----------
    [PNG] sections 5.3 (chunk layout, CRC), 9.2 (filter type 0), 10 (zlib
    stream split over consecutive IDAT chunks), 11.2.2 (IHDR), 11.3.4.3 (tEXt); [PNG3]
    11.3.2.3 (iCCP), 11.3.2.5 (sRGB); [RFC1950].
    """
    import struct
    import zlib

    import png

    colour_chunks = list(colour_chunks) + list(getattr(text, "colour_chunks", ()))
    kinds = [bytes(tag) for tag, _ in colour_chunks]
    if b"sRGB" in kinds and b"iCCP" in kinds:
        raise StarkilnError("a PNG holds an sRGB chunk or an iCCP chunk, not both "
                            "(PNG 3rd edition 11.3.2.5)")
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
    chunks += [(bytes(tag), bytes(data)) for tag, data in colour_chunks]
    chunks += [(b"tEXt", key.encode("latin-1") + b"\x00" + value.encode("latin-1"))
               for key, value in text.items()]
    chunks += [(b"IDAT", data) for data in idat if data]
    chunks.append((b"IEND", b""))
    with open(path, "wb") as fh:
        png.write_chunks(fh, chunks)


def write_exr(path, array: np.ndarray, attributes: dict[str, str] | None = None,
              chromaticities=None, pixel_type: str = "float") -> None:
    """Write a float RGB/RGBA OpenEXR file (32-bit, or 16-bit half) with string attributes.

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
    pixel_type : {"float", "half"}
        ``float``: 32-bit channels; ``half``: 16-bit IEEE 754 half channels (values
        beyond the largest half, 65504, are clipped to it rather than stored as infinity).

    References
    ----------
    [OpenEXR] technical introduction ("chromaticities" attribute; data window, y
    down; HALF and FLOAT pixel types); OpenEXR Python bindings 3.x
    (``OpenEXR.File(header, channels)``, a float16 array is stored as HALF); [IEEE754]
    binary16 (largest finite value 65504).
    """
    import OpenEXR

    if pixel_type not in ("float", "half"):
        raise StarkilnError(f"EXR pixel type {pixel_type!r} is not known; accepted: half, float")
    a = np.ascontiguousarray(_check_image(array), dtype=np.float32)
    if pixel_type == "half":
        limit = float(np.finfo(np.float16).max)
        a = np.clip(a, -limit, limit).astype(np.float16)
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
