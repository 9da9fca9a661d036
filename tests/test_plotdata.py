"""Tests of starkiln.engine.plotdata.plots: the data the window plots, checked against outside references.

The sky preview's data (starkiln.engine.plotdata.sky) is tested in test_plotdata_sky.py.

References used: colour-science (https://www.colour-science.org) as the reference
library; CIE 15:2004 tables; IEC 61966-2-1 (sRGB); SMPTE RP 431-2 (DCI-P3);
CODATA 2018 (Wien's constant); Wyszecki & Stiles (1982) for the mired.
"""

import json

import numpy as np
import pytest

from starkiln.engine.colour.displays import PRESETS, load_display_profile
from starkiln.engine.errors import InputRangeError
from starkiln.engine.pipeline.settings import Settings
from starkiln.engine.colour.temperature_axis import mired_to_temperature, temperature_to_mired
from starkiln.engine.colour.displays import save_display_profile
from starkiln.engine.plotdata.plots import (VISIBLE_BAND_NM, MiredScale, chromaticity_diagram,
                                            efficiency_overlays, magnitude_ladder, planck_curve,
                                            planckian_locus_xy,
                                            spectral_band_colours, spectrum_plot_wavelengths_nm)

SRGB_PRIMARIES = np.array([[0.64, 0.33], [0.30, 0.60], [0.15, 0.06]])  # IEC 61966-2-1 Table 1
D65_4DIGIT = np.array([0.3127, 0.3290])  # IEC 61966-2-1, ITU-R BT.709


# -- mired -----------------------------------------------------------------------------------
def test_mired_definition():
    # Wyszecki & Stiles (1982) section 3.11: mired = 1e6 / T; e.g. 6500 K = 153.8 mired.
    assert float(temperature_to_mired(6500.0)) == pytest.approx(153.846, abs=1e-3)
    assert float(mired_to_temperature(200.0)) == pytest.approx(5000.0)


def test_mired_scale_positions_are_equal_mired_steps():
    s = MiredScale(1000.0, 40000.0, 0.25)
    mired = 1e6 / s.temperature_at(np.arange(s.steps + 1))
    steps = np.diff(mired)
    # equal steps of 0.25 mired (Wyszecki & Stiles 1982, 3.11: the mired scale), ends exact
    np.testing.assert_allclose(steps, -0.25, atol=1e-9)
    assert float(s.temperature_at(0)) == pytest.approx(1000.0)
    assert float(s.temperature_at(s.steps)) == pytest.approx(40000.0)
    assert int(s.position_of(1e6 / 500.0)) == round((1000.0 - 500.0) / 0.25)
    with pytest.raises(InputRangeError):
        MiredScale(40000.0, 1000.0)


# -- Planckian locus -------------------------------------------------------------------------
@pytest.mark.parametrize("observer", ["cie1931", "cie1964"])
def test_planckian_locus_matches_colour_science(observer, blackbody_xy_ref):
    t = np.array([1500.0, 2856.0, 4000.0, 6504.0, 10000.0, 25000.0])
    ours = planckian_locus_xy(observer, t)
    # colour-science sd_blackbody + sd_to_XYZ, 360-830 nm at 1 nm (reference library)
    ref = blackbody_xy_ref(t, observer)
    np.testing.assert_allclose(ours, ref, atol=2e-5)


def test_planckian_locus_at_illuminant_a():
    # CIE 15:2004 Table T.3: illuminant A x = 0.44757, y = 0.40745. A is a Planckian radiator
    # at 2848 K with c2 = 1.435e-2 m K, i.e. 2848 * 1.438777 / 1.435 = 2855.5 K with the
    # CODATA 2018 c2. The CIE sum starts at 300 nm, ours at 360 nm: agreement to 1e-4.
    xy = planckian_locus_xy("cie1931", 2848.0 * 1.438776877 / 1.435)
    np.testing.assert_allclose(xy, [0.44757, 0.40745], atol=1e-4)


def test_planckian_locus_rejects_bad_temperatures():
    with pytest.raises(InputRangeError):
        planckian_locus_xy("cie1931", [3000.0, 200.0])


# -- spectral band colours -------------------------------------------------------------------
def _reference_band_linear(colour, wavelengths):
    """Monochromatic stimuli through the sRGB matrix of colour-science, max channel 1, clipped."""
    cmfs = colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"]
    XYZ = np.array([cmfs[w] for w in wavelengths])
    npm = colour.normalised_primary_matrix(SRGB_PRIMARIES, D65_4DIGIT)  # SMPTE RP 177
    rgb = XYZ @ np.linalg.inv(npm).T
    rgb = rgb / rgb.max(axis=-1, keepdims=True)
    return np.clip(rgb, 0.0, 1.0)


def test_band_colours_clip_match_colour_science(colour):
    wl = np.array([450.0, 480.0, 510.0, 550.0, 580.0, 610.0, 650.0])
    s = Settings(gamut="clip", adaptation="none")
    band = spectral_band_colours(s, wl)
    ref = _reference_band_linear(colour, wl)
    np.testing.assert_allclose(band.rgb_linear, ref, atol=1e-6)
    # encoding: IEC 61966-2-1 sRGB curve, as colour-science implements it
    np.testing.assert_allclose(band.rgb_encoded, colour.cctf_encoding(ref, "sRGB"), atol=1e-9)


def test_band_colours_are_outside_srgb_and_dominated_by_the_right_primary():
    band = spectral_band_colours(Settings(), [450.0, 530.0, 620.0])
    # The sRGB triangle lies inside the spectral locus (IEC 61966-2-1 primaries): no
    # monochromatic stimulus is displayable as such.
    assert not band.in_gamut.any()
    # Blue light is mostly B, green mostly G, orange-red mostly R (common practice).
    assert list(np.argmax(band.rgb_linear, axis=-1)) == [2, 1, 0]
    assert np.all((band.rgb_8bit >= 0) & (band.rgb_8bit <= 255))


def test_band_default_range_and_bad_wavelengths():
    band = spectral_band_colours(Settings())
    assert band.wavelength_nm[0] == VISIBLE_BAND_NM[0] and band.wavelength_nm[-1] == 780.0
    with pytest.raises(InputRangeError):
        spectral_band_colours(Settings(), [300.0])


def test_band_uses_full_brightness_under_luminance_normalisation():
    a = spectral_band_colours(Settings(normalisation="luminance", luminance_Y=0.2), [550.0])
    b = spectral_band_colours(Settings(), [550.0])
    np.testing.assert_allclose(a.rgb_linear, b.rgb_linear)


# -- chromaticity diagram --------------------------------------------------------------------
def test_diagram_srgb_and_d50():
    d = chromaticity_diagram(Settings(scene_white="D50"))
    np.testing.assert_allclose(d.gamut_xy[:3], SRGB_PRIMARIES)  # IEC 61966-2-1
    np.testing.assert_allclose(d.gamut_xy[3], d.gamut_xy[0])  # closed triangle
    np.testing.assert_allclose(d.display_white_xy, D65_4DIGIT)
    # CIE 15:2004 Table T.3: D50 x = 0.34567, y = 0.35850 (2 degree observer)
    np.testing.assert_allclose(d.scene_white_xy, [0.34567, 0.35850], atol=5e-5)
    np.testing.assert_allclose(d.spectral_locus_xy[0], d.spectral_locus_xy[-1])
    assert len(d.tick_temperature_K) == len(d.tick_xy)


def test_diagram_dci_p3_primaries():
    d = chromaticity_diagram(Settings(display="dci-p3"))
    # SMPTE RP 431-2:2011: R (0.680, 0.320), G (0.265, 0.690), B (0.150, 0.060),
    # white (0.314, 0.351)
    np.testing.assert_allclose(d.gamut_xy[:3], [[0.680, 0.320], [0.265, 0.690], [0.150, 0.060]])
    np.testing.assert_allclose(d.display_white_xy, [0.314, 0.351])


def test_diagram_spectral_ticks_match_colour_science(colour):
    d = chromaticity_diagram(Settings())
    cmfs = colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"]
    ref = np.array([colour.XYZ_to_xy(cmfs[w]) for w in d.spectral_tick_nm])
    np.testing.assert_allclose(d.spectral_tick_xy, ref, atol=1e-9)


# -- spectrum plot ---------------------------------------------------------------------------
def test_planck_curve_shape_and_peak(colour):
    wl = spectrum_plot_wavelengths_nm()
    c = planck_curve(5800.0, wl)
    assert c.relative_radiance.max() == pytest.approx(1.0)
    # ratios of radiance against colour-science's Planck's law (reference library), with the
    # CODATA 2018 second radiation constant c2 = 1.438776877e-2 m K (its default is 0.014388)
    ref = colour.colorimetry.planck_law(np.array([500.0, 1000.0]) * 1e-9, 5800.0,
                                        c2=1.438776877e-2)
    ours = np.interp([500.0, 1000.0], wl, c.relative_radiance)
    assert ours[1] / ours[0] == pytest.approx(ref[1] / ref[0], rel=1e-9)
    # Wien: lambda_max = b / T with b = 2.897771955e-3 m K (CODATA 2018)
    assert c.peak_nm == pytest.approx(2.897771955e-3 / 5800.0 * 1e9, rel=1e-9)
    assert wl[0] < 380.0 and wl[-1] > 780.0 and 380.0 in wl and 780.0 in wl


def test_planck_curve_bad_input():
    with pytest.raises(InputRangeError):
        planck_curve(5800.0, [-1.0, 500.0])
    with pytest.raises(InputRangeError):
        planck_curve(200000.0, [500.0])


def test_overlays_peaks():
    o = efficiency_overlays("cie1931")
    wl, v = o["V"]
    # CIE S 010:2004: V(lambda) peaks at 555 nm with value 1; V'(lambda) near 507 nm with 1
    assert wl[np.argmax(v)] == 555.0 and v.max() == pytest.approx(1.0)
    wl, vs = o["V'"]
    assert abs(wl[np.argmax(vs)] - 507.0) <= 1.0 and vs.max() == pytest.approx(1.0, abs=2e-3)
    # CMFs share one scale: z-bar has the largest value (1.783 at 445 nm, CIE 15:2004 T.4)
    assert o["z"][1].max() == pytest.approx(1.0)
    assert o["y"][1].max() == pytest.approx(1.0 / 1.78297, rel=2e-3)


# -- magnitudes --------------------------------------------------------------------------------
def test_magnitude_ladder_ends():
    s = Settings()
    m = magnitude_ladder(s)
    assert m[0] == s.magnitude_bright and m[-1] == s.magnitude_faint
    assert np.all(np.diff(m) > 0)


# -- display profiles ------------------------------------------------------------------------
def test_save_display_profile_round_trip(tmp_path):
    p = tmp_path / "dome.json"
    save_display_profile(PRESETS["dci-p3"], p)
    assert load_display_profile(p) == PRESETS["dci-p3"]
    assert json.loads(p.read_text())["starkiln_display"] == 1


def test_demo_dome_profile_is_valid_and_marked_invented():
    from starkiln.assets import asset_path

    path = asset_path("dome_projector.json")
    d = load_display_profile(str(path))
    assert d.transfer == "gamma" and d.gamma == 2.4 and d.peak_luminance_cd_m2 == 12.0
    assert "invented" in json.loads(path.read_text())["note"].lower()


# -- the light's path on the spectrum plot ---------------------------------------------------
def test_arriving_curve_none_without_a_path_and_the_airs_own_range():
    from starkiln.engine.plotdata.plots import arriving_curve

    wl = spectrum_plot_wavelengths_nm()
    assert arriving_curve(Settings(), 5772.0, wl) is None
    # Zenith, sea level, no aerosol, no ozone: at 550 nm only Rayleigh scattering remains,
    # tau_R = 0.0973 ([Bucholtz1995] Table 5 / text, at 550 nm), so the arriving curve
    # is the emitted one times exp(-0.0973) there (to the 4th digit of tau)
    s = Settings(altitude_deg=90.0, aerosol_tau550=0.0, ozone_du=0.0)
    a = arriving_curve(s, 5772.0, wl)
    emitted = planck_curve(5772.0, wl)
    i = int(np.flatnonzero(a.wavelength_nm == 550.0)[0])
    j = int(np.flatnonzero(wl == 550.0)[0])
    assert a.relative_radiance[i] / emitted.relative_radiance[j] == pytest.approx(
        np.exp(-0.0973), rel=2e-4)
    # drawn only where the air model is complete: 360 nm (its ozone table) to 2200 nm
    # (the end of Bucholtz's fit)
    assert a.wavelength_nm.min() >= 360.0 and a.wavelength_nm.max() <= 2200.0
