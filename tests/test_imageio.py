"""Image writers and readers (starkiln.engine.exports.image_files), checked with independent readers.

References: ISO/IEC 15948:2004 (PNG: chunk layout, IHDR bit depths, tEXt =
keyword NUL text); pypng and Pillow as independent PNG readers; the OpenEXR
Python bindings (OpenEXR 3.x) as the EXR reader.
"""

import numpy as np
import pytest

from starkiln.engine.errors import StarkilnError
from starkiln.engine.exports.image_files import read_embedded_json, read_embedded_text, write_exr, write_png


def _png_chunks(path):
    import png

    return list(png.Reader(filename=str(path)).chunks())


def _read_png_pypng(path):
    import png

    w, h, rows, info = png.Reader(filename=str(path)).asDirect()
    planes = info["planes"]
    arr = np.array([np.asarray(r) for r in rows]).reshape(h, w, planes)
    return arr, info


def _ramp(h, w, c, dtype):
    top = np.iinfo(dtype).max
    rng = np.random.default_rng(7)
    a = rng.integers(0, top + 1, size=(h, w, c), dtype=np.int64)
    a[0, 0] = 0
    a[-1, -1] = top
    return a.astype(dtype)


@pytest.mark.parametrize("channels", [3, 4])
def test_png8_reads_back_through_pillow_and_pypng(tmp_path, channels):
    from PIL import Image

    a = _ramp(5, 7, channels, np.uint8)
    p = tmp_path / "t.png"
    write_png(p, a, {"starkiln": '{"k": 1}'})
    with Image.open(p) as img:
        assert img.mode == ("RGBA" if channels == 4 else "RGB")
        assert np.array_equal(np.asarray(img), a)
        assert img.text["starkiln"] == '{"k": 1}'
    b, info = _read_png_pypng(p)
    assert info["bitdepth"] == 8 and np.array_equal(b, a)
    # ISO/IEC 15948 section 11.3.4.3: tEXt = keyword, NUL, Latin-1 text
    texts = [d for t, d in _png_chunks(p) if t == b"tEXt"]
    assert texts == [b'starkiln\x00{"k": 1}']


@pytest.mark.parametrize("channels", [3, 4])
def test_png16_reads_back_through_pypng(tmp_path, channels):
    a = _ramp(6, 9, channels, np.uint16)
    p = tmp_path / "t.png"
    write_png(p, a, {"starkiln": "{}"})
    b, info = _read_png_pypng(p)
    assert info["bitdepth"] == 16 and info["alpha"] == (channels == 4)
    assert np.array_equal(b, a)
    kinds = [t for t, _ in _png_chunks(p)]
    # PNG chunk order: IHDR first, IEND last; tEXt before the image data here
    assert kinds[0] == b"IHDR" and kinds[-1] == b"IEND"
    assert kinds.index(b"tEXt") < kinds.index(b"IDAT")
    assert b"tIME" not in kinds  # no timestamps: deterministic files
    assert read_embedded_text(p) == "{}"


def test_pillow_reads_the_text_chunk_of_a_16_bit_png(tmp_path):
    from PIL import Image

    p = tmp_path / "t.png"
    write_png(p, _ramp(2, 2, 3, np.uint16), {"starkiln": '{"a": [1, 2]}'})
    with Image.open(p) as img:
        assert img.text["starkiln"] == '{"a": [1, 2]}'


@pytest.mark.parametrize("channels", [3, 4])
def test_exr_reads_back_through_openexr(tmp_path, channels):
    import OpenEXR

    rng = np.random.default_rng(3)
    a = rng.random((4, 6, channels)).astype(np.float32)
    p = tmp_path / "t.exr"
    chroma = (0.64, 0.33, 0.30, 0.60, 0.15, 0.06, 0.3127, 0.3290)
    write_exr(p, a, {"starkiln": '{"x": 2}'}, chromaticities=chroma)
    with OpenEXR.File(str(p), separate_channels=True) as f:
        ch = f.channels()
        h = f.header()
        names = "RGBA"[:channels]
        assert sorted(ch) == sorted(names)
        for i, n in enumerate(names):
            assert ch[n].pixels.dtype == np.float32
            assert np.array_equal(ch[n].pixels, a[..., i])
        assert h["starkiln"] == '{"x": 2}'
        assert np.allclose(h["chromaticities"], chroma, atol=1e-7)
    assert read_embedded_json(p) == {"x": 2}


@pytest.mark.parametrize("kind", ["zTXt", "iTXt", "iTXt-zip", "after-IDAT"])
def test_metadata_is_found_in_every_png_text_chunk_kind(tmp_path, kind):
    # ISO/IEC 15948 section 11.3.4: tEXt, zTXt and iTXt may sit anywhere between IHDR and IEND
    import png
    from PIL import Image, PngImagePlugin

    p = tmp_path / "k.png"
    info = PngImagePlugin.PngInfo()
    if kind == "zTXt":
        info.add_text("starkiln", '{"z": 1}', zip=True)
    elif kind.startswith("iTXt"):
        info.add_itxt("starkiln", '{"z": 1}', zip=kind.endswith("zip"))
    Image.new("RGB", (3, 2), (1, 2, 3)).save(p, pnginfo=info)
    if kind == "after-IDAT":
        chunks = list(png.Reader(filename=str(p)).chunks())
        chunks.insert(-1, (b"tEXt", b'starkiln\x00{"z": 1}'))
        with open(p, "wb") as fh:
            png.write_chunks(fh, chunks)
    kinds = [t for t, _ in _png_chunks(p)]
    assert kind[:4].encode() in kinds or kind == "after-IDAT"
    assert read_embedded_json(p) == {"z": 1}


def test_embedded_json_errors_are_one_line(tmp_path):
    p = tmp_path / "plain.png"
    write_png(p, _ramp(2, 2, 3, np.uint8), {})
    for path in (p, tmp_path / "missing.png"):
        with pytest.raises(StarkilnError) as err:
            read_embedded_json(path)
        assert "\n" not in str(err.value)
    junk = tmp_path / "junk.png"
    junk.write_bytes(b"not an image at all")
    with pytest.raises(StarkilnError, match="neither a PNG nor an OpenEXR"):
        read_embedded_json(junk)
    bad = tmp_path / "bad.png"
    write_png(bad, _ramp(2, 2, 3, np.uint8), {"starkiln": "{not json"})
    with pytest.raises(StarkilnError, match="not valid JSON"):
        read_embedded_json(bad)
    cut = tmp_path / "cut.png"
    cut.write_bytes(bad.read_bytes()[:40])  # truncated inside the first chunks
    with pytest.raises(StarkilnError, match="not a readable PNG"):
        read_embedded_json(cut)


def test_writers_reject_bad_arrays(tmp_path):
    with pytest.raises(StarkilnError):
        write_png(tmp_path / "a.png", np.zeros((2, 2), np.uint8))
    with pytest.raises(StarkilnError):
        write_png(tmp_path / "a.png", np.zeros((2, 2, 3), np.float32))
    with pytest.raises(StarkilnError):
        write_exr(tmp_path / "a.exr", np.zeros((2, 2, 2), np.float32))


# --- strip-by-strip PNG writing ---------------------------------------------------------------

def test_png_from_strips_reads_back_equal_with_pillow_and_pypng(tmp_path):
    # Pillow and pypng are independent PNG readers (ISO/IEC 15948:2004).
    import png
    from PIL import Image

    from starkiln.engine.exports.image_files import write_png_strips

    rng = np.random.default_rng(3)
    strips = [rng.integers(0, 256, size=(h, 9, 3), dtype=np.uint8) for h in (1, 4, 2)]
    p = tmp_path / "s.png"
    write_png_strips(p, iter(strips), 9, 7, {"starkiln": '{"k": 3}'}, compression=1)
    whole = np.concatenate(strips)
    with Image.open(p) as img:
        assert img.mode == "RGB" and img.size == (9, 7)
        assert np.array_equal(np.asarray(img), whole)
        assert img.text["starkiln"] == '{"k": 3}'
    w, h, rows, info = png.Reader(filename=str(p)).read()
    assert (w, h, info["bitdepth"]) == (9, 7, 8)
    assert np.array_equal(np.vstack(list(rows)).reshape(7, 9, 3), whole)


def test_png_16bit_rgba_from_strips_keeps_every_sample(tmp_path):
    import png

    from starkiln.engine.exports.image_files import write_png_strips

    a = _ramp(5, 3, 4, np.uint16)
    p = tmp_path / "s16.png"
    write_png_strips(p, [a[:2], a[2:]], 3, 5)
    w, h, rows, info = png.Reader(filename=str(p)).read()
    assert info["bitdepth"] == 16 and info["alpha"]
    assert np.array_equal(np.vstack(list(rows)).reshape(5, 3, 4), a)


def test_png_strips_must_add_up_to_the_image(tmp_path):
    from starkiln.engine.exports.image_files import write_png_strips

    with pytest.raises(StarkilnError, match="3 rows; the image has 4"):
        write_png_strips(tmp_path / "x.png", [np.zeros((3, 2, 3), np.uint8)], 2, 4)
    with pytest.raises(StarkilnError, match="width"):
        write_png_strips(tmp_path / "x.png", [np.zeros((4, 3, 3), np.uint8)], 2, 4)
