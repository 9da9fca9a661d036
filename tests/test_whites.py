"""starkiln.engine.colour.whites: scene whites and chromatic adaptation.

References:

- CIE 15:2004 Colorimetry, Table T.3 (chromaticities of the CIE illuminants), section 3.1
  (daylight, equal-energy E), eq. 3.3-3.5 (daylight locus).
- SMPTE RP 431-2:2011: DCI projector white x = 0.314, y = 0.351.
- colour-science: colour.temperature.CCT_to_xy_CIE_D, colour.sd_CIE_illuminant_D_series,
  colour.adaptation (CHROMATIC_ADAPTATION_TRANSFORMS, matrix_chromatic_adaptation_VonKries).
"""

import numpy as np
import pytest

from starkiln.engine.colour.displays import PRESETS
from starkiln.engine.errors import SettingsError
from starkiln.engine.colour.observers import xy_to_uv1976
from starkiln.engine.pipeline.render import blackbody_XYZ, render
from starkiln.engine.pipeline.settings import Settings
from starkiln.engine.colour.whites import (
    ADAPTATIONS,
    CAT_MATRICES,
    WHITE_PRESETS,
    adaptation_matrix,
    check_adaptation,
    daylight_xy,
    normalise_white_spec,
    resolve_white,
)

C2_CODATA_2018 = 1.438776877e-2  # m K, CODATA 2018

# CIE 15:2004 Table T.3, CIE 1931 2 degree observer.
CIE_T3_2DEG = {"D65": (0.31271, 0.32902), "D50": (0.34567, 0.35850),
               "D55": (0.33242, 0.34743), "D75": (0.29902, 0.31485)}
# CIE 15:2004 Table T.3, CIE 1964 10 degree observer: D65.
CIE_T3_10DEG_D65 = (0.31382, 0.33100)


@pytest.mark.parametrize("name", sorted(CIE_T3_2DEG))
def test_daylight_illuminants_cie_table_t3(name):
    # CIE 15:2004 Table T.3 (2 degree observer), within 1e-4.
    np.testing.assert_allclose(resolve_white(name).xy, CIE_T3_2DEG[name], atol=1e-4)
    np.testing.assert_allclose(resolve_white(name, "cie1931").xy, CIE_T3_2DEG[name], atol=1e-4)


def test_d65_ten_degree_cie_table_t3():
    # CIE 15:2004 Table T.3: D65 for the CIE 1964 10 degree observer.
    np.testing.assert_allclose(resolve_white("D65", "cie1964").xy, CIE_T3_10DEG_D65, atol=1e-4)


def test_d65_against_colour_tabulated_spectrum(colour):
    # colour.SDS_ILLUMINANTS["D65"] is the CIE tabulated D65 (300-780 nm at 5 nm); its
    # chromaticity by colour's own route (ASTM E308), both observers.
    sd = colour.SDS_ILLUMINANTS["D65"]
    for observer, name in (("cie1931", "CIE 1931 2 Degree Standard Observer"),
                           ("cie1964", "CIE 1964 10 Degree Standard Observer")):
        ref = colour.XYZ_to_xy(colour.sd_to_XYZ(sd, colour.MSDS_CMFS[name]))
        np.testing.assert_allclose(resolve_white("D65", observer).xy, ref, atol=1e-4)


def test_equal_energy_and_dci():
    # CIE 15:2004 section 3.1: E has x = y = 1/3; SMPTE RP 431-2:2011: DCI (0.314, 0.351).
    assert resolve_white("E").xy == pytest.approx((1 / 3, 1 / 3), abs=1e-15)
    assert resolve_white("dci").xy == pytest.approx((0.314, 0.351), abs=1e-15)
    assert set(WHITE_PRESETS) == {"D50", "D55", "D65", "D75", "E", "DCI", "ACES"}


def test_aces_white_against_colour_science(colour):
    # SMPTE ST 2065-1: the ACES white x = 0.32168, y = 0.33767 (colour-science's ACEScg and
    # ACES2065-1 colourspaces carry the same whitepoint).
    for space in (colour.models.RGB_COLOURSPACE_ACESCG, colour.models.RGB_COLOURSPACE_ACES2065_1):
        assert resolve_white("ACES").xy == pytest.approx(tuple(space.whitepoint), abs=1e-12)


def test_daylight_6504_against_colour_locus_formula(colour):
    # colour.temperature.CCT_to_xy_CIE_D(6504): CIE 15:2004 eq. 3.3-3.5, within 1e-4.
    ref = colour.temperature.CCT_to_xy_CIE_D(6504.0)
    np.testing.assert_allclose(resolve_white("daylight:6504").xy, ref, atol=1e-4)


@pytest.mark.parametrize("cct", [4000.0, 5003.0, 6504.0, 9300.0, 25000.0])
def test_daylight_2deg_is_the_locus_point(colour, cct):
    # For the 2 degree observer daylight:<K> is the daylight-locus point
    # (colour.temperature.CCT_to_xy_CIE_D, CIE 15:2004 eq. 3.3-3.5).
    ref = colour.temperature.CCT_to_xy_CIE_D(cct)
    np.testing.assert_allclose(resolve_white(f"daylight:{cct:g}", "cie1931").xy, ref, atol=1e-9)


@pytest.mark.parametrize("cct", [4000.0, 5003.0, 6504.0, 9300.0, 25000.0])
def test_daylight_10deg_spectrum_route_against_colour(colour, cct):
    # For the 10 degree observer the locus formula does not apply: the CIE daylight
    # spectrum at the CCT is integrated. colour-science's route: the xy of eq. 3.3-3.5,
    # sd_CIE_illuminant_D_series (M1, M2 rounded as CIE directs), linearly interpolated to
    # 1 nm (CIE 15:2004 3.1), integrated with the 10 degree CMFs over 360-830 nm.
    xy_d = colour.temperature.CCT_to_xy_CIE_D(cct)
    sd = colour.sd_CIE_illuminant_D_series(xy_d).copy()
    sd.interpolator = colour.LinearInterpolator
    sd.align(colour.SpectralShape(360, 830, 1))
    cmfs = colour.MSDS_CMFS["CIE 1964 10 Degree Standard Observer"]
    ref = colour.XYZ_to_xy(colour.sd_to_XYZ(sd, cmfs, method="Integration"))
    np.testing.assert_allclose(resolve_white(f"daylight:{cct:g}", "cie1964").xy, ref, atol=1e-5)


def test_daylight_locus_formula_against_colour(colour):
    # colour.temperature.CCT_to_xy_CIE_D: CIE 15:2004 eq. 3.3-3.5, across 4000-25000 K.
    ccts = np.linspace(4000.0, 25000.0, 43)
    ref = np.array([colour.temperature.CCT_to_xy_CIE_D(c) for c in ccts])
    np.testing.assert_allclose(daylight_xy(ccts), ref, atol=1e-12)


@pytest.mark.parametrize("spec", ["daylight:3000", "daylight:30000", "daylight:abc",
                                  "xy:0.7,0.5", "xy:0.1,0.05", "xy:0.3", "xy:nan,0.3",
                                  "blackbody:100", "blackbody:200000", "D60", "F2", "",
                                  "illuminant:D65"])
def test_bad_whites_rejected(spec):
    # Daylight is defined for 4000-25000 K (CIE 15:2004 section 3.1); chromaticities must
    # lie inside the spectral locus (CIE 15:2004 section 7.3); presets per the contract.
    with pytest.raises(SettingsError) as exc:
        resolve_white(spec)
    msg = str(exc.value)
    assert "\n" not in msg
    assert repr(spec.strip()) in msg


def test_xy_white_inside_locus_is_kept():
    # Any chromaticity inside the locus is accepted as given (the 4-digit D65 of ITU-R BT.709).
    assert resolve_white("xy:0.3127,0.3290").xy == (0.3127, 0.3290)
    assert normalise_white_spec(" XY:0.3127, 0.3290 ") == "xy:0.3127,0.3290"
    assert normalise_white_spec("d65") == "D65"


@pytest.mark.parametrize("temperature_K", [1000.0, 2856.0, 5000.0, 9000.0, 40000.0])
@pytest.mark.parametrize("observer", ["cie1931", "cie1964"])
def test_blackbody_white_is_the_blackbody(blackbody_xy_ref, temperature_K, observer):
    # colour-science spectral route (sd_blackbody with CODATA 2018 c2, 1 nm summation).
    white = resolve_white(f"blackbody:{temperature_K:g}", observer)
    ref = blackbody_xy_ref(temperature_K, observer, c2=C2_CODATA_2018)
    np.testing.assert_allclose(white.xy, ref, atol=1e-9)
    # and the render path's chromaticity of the same star
    r = render(Settings(observer=observer), temperature_K)
    np.testing.assert_allclose(white.xy, r.xy, atol=1e-12)


@pytest.mark.parametrize("display", sorted(PRESETS))
@pytest.mark.parametrize("adaptation", [a for a in ADAPTATIONS if a != "none"])
def test_star_at_scene_white_temperature_is_neutral(display, adaptation):
    # Common practice: what is white looks white. With scene white blackbody:T, a star at
    # T adapts exactly onto the display white: linear RGB (1, 1, 1), equal encoded channels.
    temps = np.array([1000.0, 2856.0, 6504.0, 25000.0, 100000.0])
    for t in temps:
        s = Settings(scene_white=f"blackbody:{t:g}", adaptation=adaptation, display=display)
        r = render(s, t)
        np.testing.assert_allclose(r.rgb_linear, [1.0, 1.0, 1.0], atol=1e-9)
        assert bool(r.in_gamut)
        assert np.ptp(r.rgb_encoded) < 1e-9
    if display == "srgb":
        assert str(render(Settings(scene_white="blackbody:3000", adaptation=adaptation),
                          3000.0).hex()) == "#ffffff"


def test_adaptation_none_leaves_blackbody_tinted():
    # Without adaptation a 3000 K scene white does not become neutral on a D65 display
    # (CIE 15:2004: 3000 K is far from D65); the red channel stays largest.
    r = render(Settings(scene_white="blackbody:3000", adaptation="none"), 3000.0)
    assert r.rgb_linear[0] == 1.0 and r.rgb_linear[2] < 0.7


# --- chromatic adaptation transforms ----------------------------------------------------

COLOUR_CAT_NAMES = {"bradford": "Bradford", "cat02": "CAT02", "cat16": "CAT16",
                    "von-kries": "Von Kries"}


@pytest.mark.parametrize("method", sorted(COLOUR_CAT_NAMES))
def test_cat_matrices_equal_colour(colour, method):
    # colour.adaptation.CHROMATIC_ADAPTATION_TRANSFORMS (Lam 1985; CIE 159:2004;
    # Li et al. 2017; Hunt-Pointer-Estevez).
    ref = colour.adaptation.CHROMATIC_ADAPTATION_TRANSFORMS[COLOUR_CAT_NAMES[method]]
    np.testing.assert_allclose(CAT_MATRICES[method], ref, atol=1e-12)


@pytest.mark.parametrize("method", sorted(COLOUR_CAT_NAMES))
def test_adaptation_matrix_equals_colour_von_kries(colour, method):
    # colour.adaptation.matrix_chromatic_adaptation_VonKries(XYZ_w, XYZ_wr, transform).
    pairs = [("D65", "D50"), ("blackbody:3000", "D65"), ("D75", "DCI"), ("E", "blackbody:9000")]
    for a, b in pairs:
        src, dst = resolve_white(a).XYZ, resolve_white(b).XYZ
        ref = colour.adaptation.matrix_chromatic_adaptation_VonKries(
            src, dst, transform=COLOUR_CAT_NAMES[method])
        np.testing.assert_allclose(adaptation_matrix(src, dst, method), ref, atol=1e-9)


@pytest.mark.parametrize("method", ADAPTATIONS)
def test_adaptation_round_trip_and_white_mapping(method):
    # von Kries (1902) transforms are diagonal in cone space: A->B then B->A is the identity
    # and the source white maps exactly onto the target white (Fairchild 2013, ch. 9).
    a, b = resolve_white("blackbody:2500").XYZ, resolve_white("D65").XYZ
    forward = adaptation_matrix(a, b, method)
    back = adaptation_matrix(b, a, method)
    np.testing.assert_allclose(forward @ back, np.eye(3), atol=1e-12)
    np.testing.assert_allclose(back @ forward, np.eye(3), atol=1e-12)
    if method == "none":
        np.testing.assert_array_equal(forward, np.eye(3))
    else:
        np.testing.assert_allclose(forward @ a, b, rtol=1e-12)
        np.testing.assert_allclose(back @ b, a, rtol=1e-12)


def test_check_adaptation_names():
    # Names per the contract; aliases as typed by users; one-line error otherwise.
    assert check_adaptation("Von Kries") == "von-kries"
    assert check_adaptation("CIECAT02") == "cat02"
    with pytest.raises(SettingsError) as exc:
        check_adaptation("sharp")
    assert "'sharp'" in str(exc.value) and "bradford" in str(exc.value)
    assert "\n" not in str(exc.value)


def test_blackbody_white_far_from_d65_in_uv():
    # Common practice: a 3000 K blackbody sits well away from D65 (du'v' > 0.05) while a
    # 6504 K blackbody is within 0.01 of it (D65 lies slightly above the Planckian locus).
    d65 = xy_to_uv1976(np.array(resolve_white("D65").xy))
    for t, lo, hi in ((3000.0, 0.05, 1.0), (6504.0, 0.0, 0.01)):
        xy = blackbody_XYZ(t)[:2] / blackbody_XYZ(t).sum()
        d = np.hypot(*(xy_to_uv1976(xy) - d65))
        assert lo < d < hi
