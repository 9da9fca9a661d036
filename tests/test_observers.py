"""starkiln.engine.colour.observers: colour-matching functions, luminous efficiency, chromaticity maths.

Reference: colour-science (its CIE 15:2004 / CIE S 010:2004 datasets and conversion
functions), and CIE 15:2004 section 7.3 (the spectral locus bounds the chromaticity
diagram).
"""

import numpy as np
import pytest

from starkiln.engine.errors import SettingsError
from starkiln.engine.colour.observers import (
    XYZ_to_xy,
    check_observer,
    cmfs,
    inside_spectral_locus,
    spectral_locus_xy,
    v_photopic,
    v_scotopic,
    xy_to_uv1976,
    xy_to_XYZ,
)

CMF_NAMES = {"cie1931": "CIE 1931 2 Degree Standard Observer",
             "cie1964": "CIE 1964 10 Degree Standard Observer"}


@pytest.mark.parametrize("observer", ["cie1931", "cie1964"])
def test_cmfs_equal_colour_science(colour, observer):
    # CIE 15:2004 Tables T.4 / T.5 at 1 nm, as shipped by colour-science (360-830 nm).
    ref = colour.MSDS_CMFS[CMF_NAMES[observer]]
    assert ref.shape.start == 360 and ref.shape.end == 830 and ref.shape.interval == 1
    np.testing.assert_array_equal(cmfs(observer), ref.values)


def test_cmf_spot_values_cie_15():
    # CIE 15:2004 Table T.4 (2 degree), 555 nm: xbar 0.512050, ybar 1.000000, zbar 0.005750;
    # 600 nm: 1.062200, 0.631000, 0.000800 (from memory of the 1 nm table, as in colour).
    wl = np.arange(360, 831)
    c = cmfs("cie1931")
    np.testing.assert_allclose(c[wl == 555][0], [0.512050, 1.0, 0.005750], atol=1e-6)
    np.testing.assert_allclose(c[wl == 600][0], [1.062200, 0.631000, 0.000800], atol=1e-6)


def test_v_photopic_equals_colour_science(colour):
    # CIE 1924 photopic V(lambda) (CIE S 010:2004) from colour.SDS_LEFS; V(555) = 1.
    ref = colour.SDS_LEFS["CIE 1924 Photopic Standard Observer"]
    wl = np.arange(360, 831)
    np.testing.assert_allclose(v_photopic(), ref[wl], atol=1e-12)
    assert v_photopic()[wl == 555][0] == pytest.approx(1.0)
    # photopic V equals ybar of the 1931 observer (CIE 15:2004 section 3.2)
    np.testing.assert_allclose(v_photopic(), colour.MSDS_CMFS[CMF_NAMES["cie1931"]].values[:, 1],
                               atol=1e-6)


def test_v_scotopic_equals_colour_science(colour):
    # CIE 1951 scotopic V'(lambda) from colour.SDS_LEFS, tabulated 380-780 nm; the engine
    # sets it to 0 outside (documented). CIE S 010:2004: V' peaks at 507 nm with value 1
    # (colour interpolates the 5 nm table, so 506-508 nm are all 1 to 3 decimals).
    ref = colour.SDS_LEFS["CIE 1951 Scotopic Standard Observer"]
    wl = np.arange(360, 831)
    inside = (wl >= ref.shape.start) & (wl <= ref.shape.end)
    np.testing.assert_allclose(v_scotopic()[inside], ref[wl[inside]], atol=1e-12)
    assert np.all(v_scotopic()[~inside] == 0.0)
    assert v_scotopic()[wl == 507][0] == pytest.approx(1.0, abs=1e-3)
    assert 505 <= wl[np.argmax(v_scotopic())] <= 509


def test_tables_are_read_only():
    # Cached tables are shared between callers: they must not be writable (design contract).
    with pytest.raises(ValueError):
        cmfs("cie1931")[0, 0] = 1.0


def test_check_observer_aliases_and_errors():
    # Names from CIE 15:2004 section 3 (2 and 10 degree observers).
    assert check_observer("CIE1931") == "cie1931"
    assert check_observer("2") == "cie1931"
    assert check_observer("10") == "cie1964"
    assert check_observer("cie_1964") == "cie1964"
    with pytest.raises(SettingsError) as exc:
        check_observer("cie2006")
    msg = str(exc.value)
    assert "cie2006" in msg and "cie1931" in msg and "\n" not in msg


def test_XYZ_to_xy_and_back_against_colour(colour):
    # colour.XYZ_to_xy / colour.xy_to_XYZ (CIE 15:2004 eq. 7.3) on random tristimulus values.
    rng = np.random.default_rng(2004)
    XYZ = rng.uniform(0.01, 1.0, size=(200, 3))
    np.testing.assert_allclose(XYZ_to_xy(XYZ), colour.XYZ_to_xy(XYZ), rtol=1e-12)
    xy = colour.XYZ_to_xy(XYZ)
    np.testing.assert_allclose(xy_to_XYZ(xy), colour.xy_to_XYZ(xy), rtol=1e-12)
    # with a luminance: xyY -> XYZ
    Y = XYZ[:, 1]
    np.testing.assert_allclose(xy_to_XYZ(xy, Y), colour.xyY_to_XYZ(np.column_stack([xy, Y])),
                               rtol=1e-12)


def test_uv1976_against_colour(colour):
    # colour.xy_to_Luv_uv: CIE 1976 u', v' (CIE 15:2004 eq. 8.1); the 4-digit D65 is at
    # u'v' = (0.1978, 0.4683) (from memory).
    rng = np.random.default_rng(1976)
    xy = rng.uniform([0.1, 0.1], [0.6, 0.6], size=(100, 2))
    np.testing.assert_allclose(xy_to_uv1976(xy), colour.xy_to_Luv_uv(xy), rtol=1e-12)
    np.testing.assert_allclose(xy_to_uv1976([0.3127, 0.3290]), [0.1978, 0.4683], atol=1e-4)


@pytest.mark.parametrize("observer,hi", [("cie1931", 700), ("cie1964", 720)])
def test_spectral_locus_against_colour(colour, observer, hi):
    # Chromaticities of monochromatic stimuli: colour.XYZ_to_xy of the CMFs, 380 nm to the
    # documented upper end.
    ref = colour.MSDS_CMFS[CMF_NAMES[observer]]
    wl = np.arange(380, hi + 1)
    expected = colour.XYZ_to_xy(ref[wl])
    np.testing.assert_allclose(spectral_locus_xy(observer), expected, rtol=1e-12)


@pytest.mark.parametrize("observer", ["cie1931", "cie1964"])
def test_inside_spectral_locus(colour, observer):
    # CIE 15:2004 section 7.3: real colours lie inside the locus and the purple line.
    # Points just inside / just outside are built from colour-science's locus.
    cm = colour.MSDS_CMFS[CMF_NAMES[observer]]
    white = np.array([1 / 3, 1 / 3])  # equal-energy white E (CIE 15:2004 section 3.1)
    wl = np.arange(400, 681, 10)
    locus = colour.XYZ_to_xy(cm[wl])
    just_in = white + 0.98 * (locus - white)
    just_out = white + 1.02 * (locus - white)
    assert inside_spectral_locus(just_in, observer).all()
    assert not inside_spectral_locus(just_out, observer).any()
    # Purple line: the midpoint of 400 and 680 nm is on it; a little toward white is inside.
    mid = 0.5 * (locus[0] + locus[-1])
    assert inside_spectral_locus(white + 0.95 * (mid - white), observer)
    assert not inside_spectral_locus(white + 1.05 * (mid - white), observer)
    # Well-known whites inside, impossible chromaticities outside (x + y > 1, far blue).
    assert inside_spectral_locus(np.array([[0.3127, 0.3290], [1 / 3, 1 / 3], [0.44757, 0.40745]]),
                                 observer).all()
    assert not inside_spectral_locus(np.array([[0.7, 0.5], [0.1, 0.05], [0.0, 0.0]]),
                                     observer).any()
    assert not inside_spectral_locus(np.array([np.nan, 0.3]), observer)
