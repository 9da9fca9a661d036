"""starkiln.engine.pipeline.render: the one render path, checked against colorimetry from outside the project.

References:

- CIE 15:2004 Colorimetry: Illuminant A chromaticity (Table T.3), summation at 1 nm (7.1).
- colour-science's spectral route for blackbodies (sd_blackbody -> sd_to_XYZ) and its
  dominant_wavelength, RGB_to_HEX.
- CODATA 2018 Wien displacement constant b = 2.897771955e-3 m K.
- IEC 61966-2-1:1999: sRGB luminance row 0.2126, 0.7152, 0.0722.
- Facts of the trade marked "common practice".
"""

import re
from pathlib import Path

import numpy as np
import pytest

from starkiln.engine.colour.displays import PRESETS
from starkiln.engine.errors import InputRangeError
from starkiln.engine.colour.observers import XYZ_to_xy, xy_to_uv1976
from starkiln.engine.pipeline.render import Rendered, blackbody_XYZ, render
from starkiln.engine.colour.quantisation import to_8bit, to_hex
from starkiln.engine.pipeline.settings import Settings

ENGINE_DIR = Path(__file__).resolve().parent.parent / "engine"
WIEN_B_CODATA_2018 = 2.897771955e-3  # m K
CIE_T3_D65 = np.array([0.31271, 0.32902])  # CIE 15:2004 Table T.3, 2 degree
CIE_T3_A = (0.44757, 0.40745)  # CIE 15:2004 Table T.3, Illuminant A, 2 degree


def test_illuminant_a():
    # CIE 15:2004: Illuminant A is a Planckian radiator at 2856 K, chromaticity
    # (0.44757, 0.40745). Not exact here, for two reasons: CIE defines A with the old second
    # radiation constant c2 = 1.435e-2 m K at 2848 K, which is 2856 K only with
    # c2 = 1.4388e-2 (2848 * 1.4388 / 1.435 = 2856); we use CODATA 2018
    # c2 = 1.438776877e-2 (the CIE's A is then 2848 * 1.438776877 / 1.435 ~ 2855.5 K), and a
    # 1 nm summation over 360-830 nm rather than the tabulated A spectrum. Hence 5e-4.
    np.testing.assert_allclose(XYZ_to_xy(blackbody_XYZ(2856.0)), CIE_T3_A, atol=5e-4)
    np.testing.assert_allclose(render(Settings(), 2856.0).xy, CIE_T3_A, atol=5e-4)


@pytest.mark.parametrize("observer", ["cie1931", "cie1964"])
def test_blackbody_chromaticity_against_colour(blackbody_xy_ref, observer):
    # colour.sd_blackbody(T, SpectralShape(360, 830, 1)) -> colour.sd_to_XYZ (1 nm summation)
    # -> xy -> u'v'; 40 log-spaced temperatures 1000-40000 K; du'v' <= 1e-5. colour rounds c2
    # to 1.4388e-2, which moves u'v' by at most ~4e-6 here.
    temps = np.geomspace(1000.0, 40000.0, 40)
    ref_uv = xy_to_uv1976(blackbody_xy_ref(temps, observer))
    ours_bb = xy_to_uv1976(XYZ_to_xy(blackbody_XYZ(temps, observer)))
    ours_render = xy_to_uv1976(render(Settings(observer=observer), temps).xy)
    for ours in (ours_bb, ours_render):
        duv = np.hypot(*(ours - ref_uv).T)
        assert duv.max() <= 1e-5


def test_rendered_XYZ_has_unit_luminance():
    # Contract: XYZ scaled to Y = 1; xy = (X, Y) / (X + Y + Z) (CIE 15:2004 eq. 7.3).
    r = render(Settings(), np.array([800.0, 3000.0, 12000.0]))
    np.testing.assert_allclose(r.XYZ[:, 1], 1.0, rtol=1e-12)
    np.testing.assert_allclose(r.xy, r.XYZ[:, :2] / r.XYZ.sum(axis=-1, keepdims=True), rtol=1e-12)


# --- facts of the trade ------------------------------------------------------------------

DENSE = np.geomspace(500.0, 100000.0, 3000)


def test_no_star_renders_green():
    # Common practice: no blackbody looks green. With default settings (D65 scene white,
    # sRGB) the green channel is never strictly the largest, over 500-100000 K.
    rgb = render(Settings(), DENSE).rgb_linear
    green_top = (rgb[:, 1] > rgb[:, 0]) & (rgb[:, 1] > rgb[:, 2])
    assert not green_top.any()


@pytest.mark.parametrize("display", sorted(PRESETS))
def test_no_star_renders_green_on_any_preset(display):
    # Common practice, as above, on every display preset with a D65 scene white.
    rgb = render(Settings(display=display), DENSE[::5]).rgb_linear
    assert not ((rgb[:, 1] > rgb[:, 0]) & (rgb[:, 1] > rgb[:, 2])).any()


def test_dominant_wavelength_never_green(colour):
    # Common practice: a blackbody's dominant wavelength relative to D65 (CIE 15:2004
    # Table T.3) is never in the green, 495-570 nm. colour.dominant_wavelength gives
    # negative (complementary) values for purples: those are not green.
    temps = DENSE[::3]
    xy = render(Settings(), temps).xy
    cmfs = colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"]
    wl = np.asarray(colour.dominant_wavelength(xy, CIE_T3_D65, cmfs)[0])
    assert wl.shape == temps.shape
    assert not ((wl >= 495.0) & (wl <= 570.0)).any()
    # sanity: cool stars are dominated by long wavelengths (> 580 nm, orange-red)
    assert np.all(wl[temps < 3000.0] > 580.0)


def test_star_peaking_at_500nm_is_near_white():
    # Wien (CODATA 2018 b): a star peaking at 500 nm has T = b / 500 nm ~ 5796 K; the Sun's
    # light looks white, not green (common practice).
    t = WIEN_B_CODATA_2018 / 500e-9
    assert t == pytest.approx(5795.5, abs=0.1)
    rgb = render(Settings(), t).rgb_linear
    assert np.all(rgb >= 0.75)
    assert not (rgb[1] > rgb[0] and rgb[1] > rgb[2])


def test_srgb_cannot_hold_cool_blackbodies():
    # Common practice: the sRGB gamut holds the Planckian locus down to about 1900 K only.
    s = Settings()
    cool = np.geomspace(500.0, 1800.0, 200)
    warm = np.geomspace(2000.0, 100000.0, 400)
    assert not render(s, cool).in_gamut.any()
    assert render(s, warm).in_gamut.all()
    lo, hi = 1800.0, 2000.0
    while hi - lo > 0.1:  # bisection on the render path's in_gamut
        mid = 0.5 * (lo + hi)
        if bool(render(s, mid).in_gamut):
            hi = mid
        else:
            lo = mid
    assert 1850.0 <= lo <= 1950.0


def test_hot_stars_are_blue_and_cool_stars_red():
    # Common practice: O stars look blue-white (blue channel largest), M dwarfs orange-red.
    rgb = render(Settings(), np.array([30000.0, 3000.0])).rgb_linear
    assert rgb[0, 2] == 1.0 and rgb[0, 0] < rgb[0, 2]
    assert rgb[1, 0] == 1.0 and rgb[1, 2] < 0.5


def test_luminance_normalisation_gives_the_asked_luminance():
    # IEC 61966-2-1: relative luminance of linear sRGB is 0.2126 R + 0.7152 G + 0.0722 B;
    # in-gamut stars under luminance normalisation have that luminance = luminance_Y.
    s = Settings(normalisation="luminance", luminance_Y=0.3)
    r = render(s, np.geomspace(2000.0, 100000.0, 50))
    assert r.in_gamut.all()
    Y = r.rgb_linear @ np.array([0.2126, 0.7152, 0.0722])
    np.testing.assert_allclose(Y, 0.3, atol=1e-4)


# --- shapes, hex, errors -----------------------------------------------------------------

def test_any_shape_and_deduplication():
    # Contract: outputs take the input's shape (+ a last axis); numpy broadcasting rules.
    t = np.array([[1000.0, 5772.0, 1000.0], [20000.0, 5772.0, 3000.0]])
    r = render(Settings(), t)
    assert isinstance(r, Rendered)
    assert r.rgb_linear.shape == (2, 3, 3) and r.xy.shape == (2, 3, 2)
    assert r.in_gamut.shape == (2, 3) and r.hex().shape == (2, 3)
    np.testing.assert_array_equal(r.intensity, np.ones((2, 3)))
    np.testing.assert_array_equal(r.rgb_dimmed_encoded, r.rgb_encoded)
    assert r.magnitude is None and r.cone_weight is None
    one = render(Settings(), 5772.0)
    assert one.rgb_linear.shape == (3,) and np.ndim(one.in_gamut) == 0
    np.testing.assert_allclose(r.rgb_linear[0, 1], one.rgb_linear, atol=1e-12)
    np.testing.assert_array_equal(r.rgb_linear[0, 0], r.rgb_linear[0, 2])


def test_encoded_is_the_display_transfer_of_linear(colour):
    # rgb_encoded = the display's transfer function of rgb_linear (IEC 61966-2-1 for sRGB,
    # colour.models.eotf_inverse_sRGB).
    r = render(Settings(), DENSE[::10])
    np.testing.assert_allclose(r.rgb_encoded, colour.models.eotf_inverse_sRGB(r.rgb_linear),
                               atol=1e-12)


def test_hex_against_colour(colour):
    # colour.notation.HEX_to_RGB parses our '#rrggbb'; 8-bit rounding to nearest means the
    # parsed value is within half a code (0.5 / 255) of rgb_encoded (common practice;
    # colour's own RGB_to_HEX truncates, so it is not used as the reference).
    r = render(Settings(), DENSE[::30])
    ours = r.hex()
    assert all(re.fullmatch(r"#[0-9a-f]{6}", h) for h in ours)
    parsed = np.array([colour.notation.HEX_to_RGB(h) for h in ours])
    assert np.abs(parsed - r.rgb_encoded).max() <= 0.5 / 255 + 1e-12
    assert str(render(Settings(), 30000.0).hex())[-2:] == "ff"  # blue channel at 1.0


def test_to_8bit_rounding():
    # Common practice: v * 255 rounded half up; 0 -> 0, 1 -> 255, 0.5 -> 128 (127.5 rounds up).
    np.testing.assert_array_equal(to_8bit(np.array([0.0, 1.0, 0.5, 0.498, 1.2, -0.1])),
                                  [0, 255, 128, 127, 255, 0])
    assert str(to_hex(np.array([1.0, 0.5, 0.0]))) == "#ff8000"


@pytest.mark.parametrize("bad", [0.0, -5.0, 400.0, 200000.0, float("nan"), float("inf")])
def test_render_rejects_bad_temperatures(bad):
    # Supported range 500-100000 K (engine contract); one-line message naming the value.
    with pytest.raises(InputRangeError) as exc:
        render(Settings(), np.array([5000.0, bad]))
    assert f"{bad:g}" in str(exc.value) and "\n" not in str(exc.value)


# --- engine never imports Qt ------------------------------------------------------------

def test_engine_sources_do_not_import_qt():
    # Project rule: engine/ never imports a window toolkit.
    pattern = re.compile(r"^\s*(?:from|import)\s+(PySide6|PySide2|PyQt5|PyQt6|pyqtgraph|qtpy)\b",
                         re.MULTILINE)
    offenders = [p.name for p in sorted(ENGINE_DIR.glob("*.py")) if pattern.search(p.read_text())]
    assert offenders == []


def test_engine_import_does_not_load_qt(python_run):
    code = ("import sys, starkiln.engine.pipeline.render, starkiln.cli.main, starkiln.engine.pipeline.settings\n"
            "starkiln.cli.main.build_parser()\n"
            "bad = [m for m in ('PySide6', 'pyqtgraph', 'PyQt5', 'PyQt6') if m in sys.modules]\n"
            "print('QT:' + ','.join(bad))\n")
    res = python_run(code)
    assert res.returncode == 0, res.stderr
    assert res.stdout.strip() == "QT:"
