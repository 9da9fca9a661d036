"""Palettes (starkiln.engine.exports.palettes): swatch sets and the JSON, CSV, GPL and contact-sheet writers.

References used here:
- GIMP palette format as GIMP reads it: GIMP source, app/core/gimppalette-load.c,
  gimp_palette_load_gpl (first line starts with "GIMP Palette"; then "Name: ";
  then optionally "Columns: " with 0-256; lines starting with "#" are comments;
  other lines are R G B split on spaces/tabs, 0-255, and an optional name to the
  end of the line), and app/core/gimppalette-save.c ("%3d %3d %3d\\t%s\\n", LF).
- RFC 4180 (CSV) via Python's csv reader; the JSON standard via json.loads.
- 8-bit quantisation floor(v * 255 + 0.5) (common practice).
- colour-science: sRGB encoding colour.cctf_encoding (IEC 61966-2-1).
"""

import csv
import io
import json
import re
import warnings

import numpy as np
import pytest

from starkiln.engine.errors import StarkilnError
from starkiln.engine.exports.contact_sheets import sheet_swatch_boxes
from starkiln.engine.exports.palettes import (build_palette, class_temperatures, palette_csv, palette_dict,
                            palette_gpl, step_temperatures, write_palette)
from starkiln.engine.pipeline.render import render
from starkiln.engine.pipeline.settings import Settings


def parse_gimp_palette(data: bytes):
    """A strict reader of the rules of GIMP's gimp_palette_load_gpl (module docstring)."""
    text = data.decode("utf-8")
    assert "\r" not in text, "GIMP palettes use LF line ends"
    lines = text.split("\n")
    assert lines[-1] == "", "file ends with a newline"
    lines = lines[:-1]
    assert lines[0].startswith("GIMP Palette")
    assert lines[1].startswith("Name: ")
    name = lines[1][len("Name: "):].strip()
    i, columns = 2, None
    if lines[2].startswith("Columns: "):
        columns = int(lines[2][len("Columns: "):].strip())
        assert 0 <= columns <= 256
        i = 3
    colours = []
    for line in lines[i:]:
        assert line != "", "a blank line would be read as a colour by GIMP"
        if line.startswith("#"):
            continue
        m = re.match(r"^[ \t]*(\d+)[ \t]+(\d+)[ \t]+(\d+)(?:[ \t](.*))?$", line)
        assert m, f"not an 'R G B<tab>name' row: {line!r}"
        rgb = tuple(int(m.group(k)) for k in (1, 2, 3))
        assert all(0 <= v <= 255 for v in rgb)
        colours.append((rgb, m.group(4)))
    return name, columns, colours


def test_steps_include_both_ends_and_follow_the_axis():
    t = step_temperatures((2000.0, 20000.0), 5, "mired")
    assert t[0] == 2000.0 and t[-1] == 20000.0
    # mired = 1e6 / T (common practice): equal steps in reciprocal temperature
    assert np.allclose(np.diff(1e6 / t), (1e6 / 20000 - 1e6 / 2000) / 4)
    tl = step_temperatures((2000.0, 20000.0), 5, "log")
    assert np.allclose(tl[1:] / tl[:-1], 10 ** 0.25)
    tk = step_temperatures((2000.0, 20000.0), 4, "linear")
    assert np.allclose(np.diff(tk), 6000.0)


@pytest.mark.parametrize("steps", [1, 0, 4097, 2.5])
def test_steps_out_of_range_are_refused(steps):
    with pytest.raises(StarkilnError):
        step_temperatures((2000.0, 20000.0), steps)


def test_reversed_range_is_refused():
    with pytest.raises(StarkilnError):
        build_palette(Settings(), range_K=(9000, 3000), steps=4)


def test_classes_cover_the_main_sequence_table():
    from starkiln.engine.stars.temperature import SPECTRAL_CLASS_TEFF_K

    names, temps = class_temperatures(index_model="relation")
    assert len(names) == len(SPECTRAL_CLASS_TEFF_K)
    assert names[0] == "O5V" and names[-1] == "M8V"
    # temperatures fall from O to M (the spectral sequence, common practice)
    assert np.all(np.diff(temps) < 0)
    # By synthetic photometry (default) the colours' blackbodies fall too, O5V-O8.5V alike
    # (all B-V -0.32 in [Mamajek2018]); G2V (B-V 0.650) within 2 % of the Sun's 5772 K.
    names, temps = class_temperatures()
    assert np.all(np.diff(temps) <= 0) and temps[0] > temps[-1]
    assert temps[names.index("G2V")] == pytest.approx(5772.0, rel=0.02)
    names, temps = class_temperatures(["g2v", "K0"])
    assert names == ("G2V", "K0V")


def test_json_swatches_are_the_render_path(tmp_path):
    s = Settings().replace(display="display-p3")
    p = build_palette(s, range_K=(1800.0, 30000.0), steps=9)
    path = tmp_path / "p.json"
    write_palette(p, path)
    data = json.loads(path.read_text("utf-8"))
    assert set(data) >= {"settings", "swatches"}
    assert Settings.from_dict(data["settings"]) == s
    ref = render(s, np.array([sw["temperature_K"] for sw in data["swatches"]]))
    for k, sw in enumerate(data["swatches"]):
        assert set(sw) >= {"temperature_K", "hex", "rgb_encoded", "rgb_linear"}
        assert np.allclose(sw["rgb_linear"], ref.rgb_linear[k], atol=0)
        assert np.allclose(sw["rgb_encoded"], ref.rgb_encoded[k], atol=0)
        q = [int(np.floor(v * 255 + 0.5)) for v in ref.rgb_encoded[k]]  # common practice
        assert sw["hex"] == "#{:02x}{:02x}{:02x}".format(*q)
        assert sw["rgb_8bit"] == q


def test_json_encoding_matches_the_srgb_standard(colour):
    # IEC 61966-2-1 encoding as implemented by colour-science, applied to the linear values
    p = build_palette(Settings(), range_K=(2000.0, 20000.0), steps=7)
    d = palette_dict(p)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        for sw in d["swatches"]:
            enc = colour.cctf_encoding(np.array(sw["rgb_linear"]), function="sRGB")
            assert np.allclose(sw["rgb_encoded"], enc, atol=1e-12)


def test_csv_has_a_header_and_one_row_a_swatch():
    p = build_palette(Settings(), use_classes=True, classes=["B0V", "A0V", "G2V", "M0V"])
    data = palette_csv(p).decode("utf-8")
    assert "\r\n" in data  # RFC 4180 line ends
    rows = list(csv.DictReader(io.StringIO(data, newline="")))
    assert len(rows) == 4
    assert [r["spectral_class"] for r in rows] == ["B0V", "A0V", "G2V", "M0V"]
    ref = render(Settings(), np.array([float(r["temperature_K"]) for r in rows]))
    for k, r in enumerate(rows):
        enc = [float(r[c]) for c in ("r_encoded", "g_encoded", "b_encoded")]
        lin = [float(r[c]) for c in ("r_linear", "g_linear", "b_linear")]
        assert np.array_equal(enc, ref.rgb_encoded[k]) and np.array_equal(lin, ref.rgb_linear[k])
        q8 = [int(r[c]) for c in ("r_8bit", "g_8bit", "b_8bit")]
        assert np.abs(np.array(q8) / 255.0 - ref.rgb_encoded[k]).max() <= 0.5 / 255 + 1e-12
        assert r["hex"] == "#{:02x}{:02x}{:02x}".format(*q8)


def test_gpl_follows_the_gimp_palette_format():
    p = build_palette(Settings(), range_K=(1000.0, 40000.0), steps=12)
    name, columns, colours = parse_gimp_palette(palette_gpl(p, name="Cinderfold Ridge dome"))
    assert name == "Cinderfold Ridge dome"
    assert columns == 8
    assert len(colours) == 12
    ref = render(Settings(), p.temperature_K)
    for (rgb, label), enc, t in zip(colours, ref.rgb_encoded, p.temperature_K):
        # 8-bit within half a level of the render path's encoded value
        assert np.abs(np.array(rgb) / 255.0 - enc).max() <= 0.5 / 255 + 1e-12
        assert label.startswith(f"{t:.0f} K")


def test_gpl_name_cannot_break_the_format():
    p = build_palette(Settings(), range_K=(3000.0, 9000.0), steps=2)
    name, _, colours = parse_gimp_palette(palette_gpl(p, name="two\nlines\tand tab"))
    assert "\n" not in name and len(colours) == 2


def test_sheet_shows_each_swatch_as_a_solid_block_on_dark(tmp_path):
    from PIL import Image

    s = Settings()
    p = build_palette(s, range_K=(2000.0, 25000.0), steps=10)
    path = tmp_path / "sheet.png"
    write_palette(p, path, name="Brackenmoor Hollow planetarium")
    with Image.open(path) as img:
        px = np.asarray(img.convert("RGB"))
        meta = json.loads(img.text["starkiln"])
    # dark background (corner pixel): Rec. 709 luma below 10 %
    corner = px[2, 2] / 255.0
    assert 0.2126 * corner[0] + 0.7152 * corner[1] + 0.0722 * corner[2] < 0.1
    ref = render(s, p.temperature_K)
    for (x0, y0, x1, y1), enc in zip(sheet_swatch_boxes(10), ref.rgb_encoded):
        block = px[y0:y1 + 1, x0:x1 + 1].reshape(-1, 3)
        assert (block == block[0]).all()
        assert np.abs(block[0] / 255.0 - enc).max() <= 0.5 / 255 + 1e-12
    # labels were drawn: text pixels differ from the background under each swatch
    x0, y0, x1, y1 = sheet_swatch_boxes(10)[0]
    label = px[y1 + 2:y1 + 36, x0:x1 + 1]
    assert (label != px[2, 2]).any()
    assert "display srgb" in meta["title"] and "white D65" in meta["title"]
    assert len(meta["swatches"]) == 10


def test_unknown_palette_extension_is_refused(tmp_path):
    p = build_palette(Settings(), range_K=(3000.0, 9000.0), steps=2)
    with pytest.raises(StarkilnError, match="accepted: .json, .csv, .gpl, .png"):
        write_palette(p, tmp_path / "p.txt")
    assert not list(tmp_path.iterdir())


@pytest.mark.parametrize("name", ["p.json", "p.csv", "p.gpl", "p.png"])
def test_palette_files_are_deterministic(tmp_path, name):
    s = Settings()
    (tmp_path / "a").mkdir()
    (tmp_path / "b").mkdir()
    write_palette(build_palette(s, steps=5), tmp_path / "a" / name)
    write_palette(build_palette(s, steps=5), tmp_path / "b" / name)
    assert (tmp_path / "a" / name).read_bytes() == (tmp_path / "b" / name).read_bytes()


# --- the one palette export, and the contact sheet's text -------------------------------------

def test_export_palette_writes_what_build_and_write_give(tmp_path):
    from starkiln.engine.exports.palettes import export_palette

    s = Settings()
    out = tmp_path / "p.gpl"
    p = export_palette(s, out, range_K=(2500.0, 12000.0), steps=5, name="Fernhollow dome")
    ref = tmp_path / "ref.gpl"
    write_palette(build_palette(s, range_K=(2500.0, 12000.0), steps=5), ref, name="Fernhollow dome")
    assert out.read_bytes() == ref.read_bytes()
    assert p.names == ("2500 K",) + p.names[1:4] + ("12000 K",)


def test_export_palette_checks_the_destination_before_rendering(tmp_path, monkeypatch):
    import starkiln.engine.exports.palettes as palettes
    from starkiln.engine.atomic import OutputExistsError
    from starkiln.engine.errors import StarkilnError

    def no_render(*args, **kwargs):
        raise AssertionError("rendered although the file could not be written")

    monkeypatch.setattr(palettes, "build_palette", no_render)
    with pytest.raises(StarkilnError, match="does not exist"):
        palettes.export_palette(Settings(), tmp_path / "nowhere" / "p.json")
    (tmp_path / "old.json").write_text("{}")
    with pytest.raises(OutputExistsError):
        palettes.export_palette(Settings(), tmp_path / "old.json")
    assert (tmp_path / "old.json").read_text() == "{}"
    with pytest.raises(StarkilnError, match="extension"):
        palettes.export_palette(Settings(), tmp_path / "p.txt")


def test_public_api_names_the_two_exports():
    import starkiln
    from starkiln.engine.exports.palettes import export_palette
    from starkiln.engine.exports.texture_spec import TextureSpec
    from starkiln.engine.exports.textures import export_texture

    assert starkiln.export_palette is export_palette
    assert starkiln.export_texture is export_texture and starkiln.TextureSpec is TextureSpec


def test_sheet_labels_match_pillow_drawing_the_same_text():
    # Pillow's ImageDraw.text (bundled font) as the reference rendering of each label line.
    from PIL import Image, ImageDraw

    from starkiln.engine.exports.contact_sheets import (SHEET_BACKGROUND, SHEET_FAINT_TEXT,
                                                        SHEET_TEXT, _fonts, sheet_pixels)

    p = build_palette(Settings(), range_K=(2000.0, 25000.0), steps=10)
    px = sheet_pixels(p)
    _, font = _fonts()
    for k, (x0, y0, x1, y1) in enumerate(sheet_swatch_boxes(10)):
        for text, dy, colour in ((p.names[k], 4, SHEET_TEXT), (p.hex[k], 20, SHEET_FAINT_TEXT)):
            ref = Image.new("RGB", (x1 - x0 + 1, 18), SHEET_BACKGROUND)
            ImageDraw.Draw(ref).text((0, 0), text, fill=colour, font=font)
            ref = np.asarray(ref).astype(int)
            got = px[y1 + 1 + dy:y1 + 1 + dy + 18, x0:x1 + 1].astype(int)
            ink = (ref != np.array(SHEET_BACKGROUND)).any(axis=-1)
            assert ink.sum() > 50  # the reference has ink
            close = np.abs(got - ref).max(axis=-1) <= 2
            # Equal but where two glyphs' anti-aliased edges overlap ("ff"): Pillow composites
            # them one after the other, the sheet keeps the larger coverage.
            assert close[ink].mean() > 0.97 and close.mean() > 0.99, (text, close[ink].mean())
