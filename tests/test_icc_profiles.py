"""`starkiln displays import`: matrix/TRC ICC display profiles read through LittleCMS.

References: LittleCMS (through Pillow's ImageCms) as the reference implementation of [ICC1];
[IEC61966-2-1] for the sRGB primaries, white and curve; colour-science for Bradford
([Lam1985]) and CIELAB ([CIE15]) in the 1 000-colour comparison.
"""

from __future__ import annotations

import io
import subprocess
import sys

import numpy as np
import pytest
from PIL import Image, ImageCms

import icc_bytes as ib
from starkiln.engine.colour.displays import PRESETS, load_display_profile, srgb_decode
from starkiln.engine.colour.icc_profiles import display_from_icc, import_icc_profile
from starkiln.engine.errors import SettingsError

SRGB_XY = [(0.64, 0.33), (0.30, 0.60), (0.15, 0.06)]  # [IEC61966-2-1] Table 1
D65_XY = (0.3127, 0.3290)  # [IEC61966-2-1]
D50_ICC = np.array([0.9642, 1.0, 0.8249])  # [ICC1] 7.2.16


@pytest.fixture
def lcms_srgb(tmp_path):
    """The sRGB profile LittleCMS builds, written to a file."""
    path = tmp_path / "lcms-srgb.icc"
    path.write_bytes(ImageCms.ImageCmsProfile(ImageCms.createProfile("sRGB")).tobytes())
    return path


def _write(tmp_path, name, data: bytes):
    path = tmp_path / name
    path.write_bytes(data)
    return path


def test_the_test_writer_reads_back_through_littlecms():
    # LittleCMS (the reference reader) sees the colorants, white, luminance and class written
    data = ib.matrix_trc(SRGB_XY, D65_XY, ib.curv_gamma(2.2), lumi=120.0)
    info = ImageCms.getOpenProfile(io.BytesIO(data)).profile
    assert info.device_class == "mntr" and info.is_matrix_shaper
    np.testing.assert_allclose(info.media_white_point[0], D50_ICC, atol=2e-5)
    np.testing.assert_allclose(info.luminance[0][1], 120.0)
    # the grey axis through LittleCMS's own 8-bit transform follows gamma 563/256 (u8Fixed8):
    # L* of grey v is CIELAB of Y = v^2.199 ([CIE15] eq. 8.1) within one 8-bit L step
    grey = np.arange(256, dtype=np.uint8)
    img = Image.fromarray(np.repeat(grey[None, :, None], 3, axis=2), "RGB")
    t = ImageCms.buildTransform(ImageCms.getOpenProfile(io.BytesIO(data)),
                                ImageCms.createProfile("LAB"), "RGB", "LAB", flags=ImageCms.Flags.NOOPTIMIZE)
    L8 = np.asarray(ImageCms.applyTransform(img, t))[0, :, 0].astype(float)
    Y = (grey / 255.0) ** (563 / 256)
    L = np.where(Y > (6 / 29) ** 3, 116 * np.cbrt(Y) - 16, Y * (29 / 3) ** 3)
    assert np.max(np.abs(L * 255 / 100 - L8)) <= 1.0


def test_littlecms_srgb_gives_the_srgb_preset(lcms_srgb):
    # LittleCMS's built-in sRGB ([IEC61966-2-1] primaries and D65) -> the srgb preset, 1e-4
    d = display_from_icc(lcms_srgb).display
    preset = PRESETS["srgb"]
    for field in ("red_xy", "green_xy", "blue_xy", "white_xy"):
        np.testing.assert_allclose(getattr(d, field), getattr(preset, field), atol=1e-4)
    assert d.transfer == "srgb"


TOE_CURVE = 0.02 * np.linspace(0, 1, 17) + 0.98 * np.linspace(0, 1, 17) ** 2.6


@pytest.mark.parametrize("make", ["lcms-srgb", "gamma-2.2", "table"])
def test_1000_colours_agree_with_littlecms(make, lcms_srgb, tmp_path):
    """LittleCMS's transform (profile -> Lab D50, 8-bit, unoptimised) and the imported display
    (decode, its RGB -> XYZ, Bradford to D50 by colour-science, CIELAB by colour-science)
    agree within one 8-bit Lab code (1/255 of the L range; 1 unit of a*, b*)."""
    import colour

    trc = ib.curv_gamma(2.2) if make == "gamma-2.2" else ib.curv_table(TOE_CURVE)
    path = lcms_srgb if make == "lcms-srgb" else _write(
        tmp_path, "p.icc", ib.matrix_trc(SRGB_XY, D65_XY, trc))
    d = display_from_icc(path).display
    rgb8 = np.random.default_rng(11).integers(0, 256, (1000, 3), dtype=np.uint8)
    t = ImageCms.buildTransform(ImageCms.getOpenProfile(str(path)),
                                ImageCms.createProfile("LAB"), "RGB", "LAB", flags=ImageCms.Flags.NOOPTIMIZE)
    raw = np.asarray(ImageCms.applyTransform(Image.fromarray(rgb8[None], "RGB"), t))[0]
    lcms = np.column_stack([raw[:, 0].astype(float) * 100 / 255, raw[:, 1].view(np.int8),
                            raw[:, 2].view(np.int8)]).astype(float)
    XYZ = d.decode(rgb8 / 255.0) @ d.rgb_to_XYZ.T
    XYZ50 = colour.adaptation.chromatic_adaptation_VonKries(
        XYZ, colour.xy_to_XYZ(np.array(d.white_xy)), D50_ICC, "Bradford")
    ours = colour.XYZ_to_Lab(XYZ50, colour.XYZ_to_xy(D50_ICC))
    err = np.abs(ours - lcms) * np.array([255 / 100, 1.0, 1.0])
    assert err.max() < 1.0, err.max()


def test_gamma_profile_imports_as_gamma(tmp_path):
    # curveType with one entry is a u8Fixed8 gamma ([ICC1] 10.6): 0x0233 = 2.19921875
    path = _write(tmp_path, "g.icc", ib.matrix_trc(SRGB_XY, D65_XY, ib.curv_gamma(2.2),
                                                   lumi=120.0))
    d = display_from_icc(path).display
    assert d.transfer == "gamma" and d.gamma == pytest.approx(563 / 256, abs=1e-6)
    assert d.peak_luminance_cd_m2 == pytest.approx(120.0)


def test_parametric_srgb_curve_imports_as_srgb(tmp_path):
    # parametricCurveType function 3 with the [IEC61966-2-1] constants ([ICC1] 10.18)
    trc = ib.para(3, [2.4, 1 / 1.055, 0.055 / 1.055, 1 / 12.92, 0.04045])
    d = display_from_icc(_write(tmp_path, "p.icc", ib.matrix_trc(SRGB_XY, D65_XY, trc))).display
    assert d.transfer == "srgb"


def test_table_profile_imports_as_table(tmp_path):
    # a curve no formula fits: a gamma-2.6 curve with a lifted toe, 17 entries
    v = np.linspace(0, 1, 17)
    entries = 0.02 * v + 0.98 * v ** 2.6
    path = _write(tmp_path, "t.icc", ib.matrix_trc(SRGB_XY, D65_XY, ib.curv_table(entries)))
    d = display_from_icc(path).display
    assert d.transfer == "table" and len(d.transfer_samples) == 17
    np.testing.assert_allclose(d.transfer_samples, np.round(entries * 65535) / 65535, atol=1e-9)
    # and the JSON written holds it, read back equal
    out = tmp_path / "t.json"
    import_icc_profile(path, out)
    assert load_display_profile(out) == d


def test_v2_profile_without_chad_adapts_back_with_bradford(tmp_path):
    # v2 style: wtpt is the display white, colorants adapted to D50 by Bradford (colour-science)
    p3 = [(0.680, 0.320), (0.265, 0.690), (0.150, 0.060)]  # [EG432-1]
    data = ib.matrix_trc(p3, D65_XY, ib.curv_gamma(2.4), chad=False, version=0x02100000)
    imported = display_from_icc(_write(tmp_path, "v2.icc", data))
    d = imported.display
    for got, want in zip((d.red_xy, d.green_xy, d.blue_xy, d.white_xy), p3 + [D65_XY]):
        np.testing.assert_allclose(got, want, atol=1e-4)
    assert any("Bradford" in n for n in imported.notes)


def _bad_profiles(tmp_path, lcms_srgb):
    good = lcms_srgb.read_bytes()
    lut = ib.profile({"desc": ib.mluc("lut"), "wtpt": ib.xyz_tag(D50_ICC),
                      "A2B0": b"mAB " + b"\0" * 28})
    return {
        "lut.icc": (lut, "LUT-based"),
        "printer.icc": (ib.profile({"desc": ib.mluc("p")}, device_class=b"prtr",
                                   colour_space=b"CMYK", pcs=b"Lab "), "output (printer)"),
        "input.icc": (ib.matrix_trc(SRGB_XY, D65_XY, ib.curv_gamma(2.2))[:12] + b"scnr"
                      + ib.matrix_trc(SRGB_XY, D65_XY, ib.curv_gamma(2.2))[16:], "input"),
        "abstract.icc": (ib.profile({"desc": ib.mluc("a")}, device_class=b"abst",
                                    colour_space=b"Lab ", pcs=b"Lab "), "abstract"),
        "truncated.icc": (good[: len(good) // 2], "truncated"),
        "notes.icc": (b"these are not the colours you are looking for\n", "not an ICC"),
    }


def test_bad_profiles_are_refused_naming_the_file_and_the_kinds_read(tmp_path, lcms_srgb):
    for name, (data, says) in _bad_profiles(tmp_path, lcms_srgb).items():
        path = _write(tmp_path, name, data)
        with pytest.raises(SettingsError) as exc:
            display_from_icc(path)
        msg = str(exc.value)
        assert name in msg and says in msg and "matrix/TRC display" in msg, msg
        assert "\n" not in msg
    with pytest.raises(SettingsError, match="missing.icc: no such file"):
        display_from_icc(tmp_path / "missing.icc")


def _cli(*args, cwd):
    return subprocess.run([sys.executable, "-m", "starkiln", *map(str, args)], cwd=cwd,
                          capture_output=True, text=True)


def test_cli_import_writes_the_profile_and_refuses_bad_input(tmp_path, lcms_srgb):
    r = _cli("displays", "import", lcms_srgb, "-o", "s.json", cwd=tmp_path)
    assert r.returncode == 0, r.stderr
    d = load_display_profile(tmp_path / "s.json")
    np.testing.assert_allclose(d.white_xy, D65_XY, atol=1e-4)  # [IEC61966-2-1]
    r = _cli("displays", "import", lcms_srgb, "-o", "s.json", cwd=tmp_path)
    assert r.returncode == 2 and "--force" in r.stderr
    assert _cli("displays", "import", lcms_srgb, "-o", "s.json", "--force",
                cwd=tmp_path).returncode == 0
    for name, (data, _) in _bad_profiles(tmp_path, lcms_srgb).items():
        _write(tmp_path, name, data)
        r = _cli("displays", "import", name, "-o", "bad.json", cwd=tmp_path)
        assert r.returncode == 2 and len(r.stderr.strip().splitlines()) == 1, r.stderr
        assert name in r.stderr
        assert not (tmp_path / "bad.json").exists()
    assert [p.name for p in tmp_path.iterdir() if p.name.startswith(".")] == []


def test_table_from_an_sampled_srgb_curve_reproduces_srgb_encode():
    # [IEC61966-2-1] section 5.2, written out here as the reference (not the code under test)
    from starkiln.engine.colour.displays import Display

    v = np.linspace(0, 1, 256)
    decoded = np.where(v <= 0.04045, v / 12.92, ((v + 0.055) / 1.055) ** 2.4)
    d = Display("t", *SRGB_XY, D65_XY, "table", 2.2, 80.0, "display", tuple(decoded))
    x = np.random.default_rng(3).random(10000)
    reference = np.where(x <= 0.0031308, 12.92 * x, 1.055 * x ** (1 / 2.4) - 0.055)
    assert np.max(np.abs(d.encode(x) - reference)) < 1e-4
    assert np.max(np.abs(d.decode(v) - srgb_decode(v))) < 1e-12  # at the samples: exact
