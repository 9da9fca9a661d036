"""starkiln.engine.colour.spectrum: Planck's law, Wien's displacement law, Stefan-Boltzmann.

References used here (all outside the project):

- CODATA 2018 (Tiesinga et al. 2021, Rev. Mod. Phys. 93, 025010), and the exact SI
  defining constants of the SI Brochure, 9th edition (2019):
  h = 6.62607015e-34 J s, c = 299792458 m/s, k = 1.380649e-23 J/K,
  c2 = 1.438776877e-2 m K, Wien b = 2.897771955e-3 m K,
  sigma = 5.670374419e-8 W m^-2 K^-4.
- colour-science ``colour.colorimetry.planck_law`` (reference library).
"""

import math

import numpy as np
import pytest

from starkiln.engine.colour.spectrum import (
    band_integral,
    peak_wavelength_nm,
    planck_radiance,
    planck_weighted_sums,
    radiant_exitance_W_m2,
)
from starkiln.engine.colour.cie_data import tables

# SI Brochure 9th ed. (2019): exact defining constants.
H_SI = 6.62607015e-34
C_SI = 299792458.0
K_SI = 1.380649e-23
# CODATA 2018 recommended values.
C2_CODATA_2018 = 1.438776877e-2  # second radiation constant, m K
WIEN_B_CODATA_2018 = 2.897771955e-3  # Wien wavelength displacement law constant, m K
SIGMA_CODATA_2018 = 5.670374419e-8  # Stefan-Boltzmann constant, W m^-2 K^-4
# First radiation constant c1 = 2 pi h c^2 (CODATA 2018: 3.741771852e-16 W m^2; colour's
# planck_law divides its c1 by pi to give radiance). For comparisons at 1e-12 we form
# c1 and c2 from the exact SI constants rather than from their 10-digit roundings.
C1_CODATA_2018 = 3.741771852e-16
C1_SI = 2.0 * math.pi * H_SI * C_SI**2
C2_SI = H_SI * C_SI / K_SI


def test_planck_radiance_matches_colour_planck_law_with_codata_constants(colour):
    # colour-science planck_law with c1, c2 formed from the exact SI 2019 constants
    # (they round to CODATA 2018 c1 = 3.741771852e-16, c2 = 1.438776877e-2, checked below).
    assert C1_SI == pytest.approx(C1_CODATA_2018, rel=1e-9)
    assert C2_SI == pytest.approx(C2_CODATA_2018, rel=1e-9)
    wl_nm = np.linspace(200.0, 5000.0, 97)
    temps = np.array([500.0, 1000.0, 2856.0, 5772.0, 10000.0, 40000.0, 100000.0])
    ours = planck_radiance(temps, wl_nm)  # (T, wl)
    ref = colour.colorimetry.planck_law(wl_nm * 1e-9, temps, c1=C1_SI, c2=C2_SI).T
    assert ours.shape == (temps.size, wl_nm.size)
    np.testing.assert_allclose(ours, ref, rtol=1e-12)


def test_planck_radiance_matches_colour_planck_law_defaults(colour):
    # colour-science planck_law with its defaults: c1 = 3.741771e-16 and c2 rounded to
    # 1.4388e-2 (vs CODATA 2018 1.438776877e-2, relative +1.6e-5). The rounding of c2
    # changes the exponent x = c2 / (lambda T) by x * 1.6e-5, so a 1e-4 relative agreement
    # holds where x <= 6, i.e. lambda T >= 2.4e-3 m K (the visible at solar temperatures
    # and hotter, and the red/infrared of cool stars).
    wl_nm = np.linspace(360.0, 2000.0, 83)
    temps = np.geomspace(1000.0, 100000.0, 25)
    ours = planck_radiance(temps, wl_nm)
    ref = colour.colorimetry.planck_law(wl_nm * 1e-9, temps).T
    x = 1.4388e-2 / (wl_nm[None, :] * 1e-9 * temps[:, None])
    keep = x <= 6.0
    assert keep.sum() > 1000
    rel = np.abs(ours / ref - 1.0)
    assert rel[keep].max() <= 1e-4


def test_planck_radiance_default_grid_and_scalar(colour):
    # Default grid is 360-830 nm at 1 nm (CIE 15:2004 section 7.1); compare to colour.
    ours = planck_radiance(5772.0)
    assert ours.shape == (471,)
    ref = colour.colorimetry.planck_law(np.arange(360, 831) * 1e-9, 5772.0,
                                        c1=C1_SI, c2=C2_SI)
    np.testing.assert_allclose(ours, ref, rtol=1e-12)
    # scalar x scalar gives a scalar
    one = planck_radiance(5772.0, 500.0)
    assert np.ndim(one) == 0
    np.testing.assert_allclose(one, colour.colorimetry.planck_law(
        500e-9, 5772.0, c1=C1_SI, c2=C2_SI), rtol=1e-12)


def test_planck_rayleigh_jeans_limit():
    # Rayleigh-Jeans law L = 2 c k T / lambda^4 (textbook limit of Planck's law for
    # h c / (lambda k T) << 1), SI 2019 constants; here x ~ 1.4e-4.
    wl_m = 1e-2  # 1 cm
    t = 10000.0
    rj = 2.0 * C_SI * K_SI * t / wl_m**4
    x = H_SI * C_SI / (wl_m * K_SI * t)
    ours = planck_radiance(t, wl_m * 1e9)
    # Planck / RJ = x / (e^x - 1) ~ 1 - x/2
    np.testing.assert_allclose(ours / rj, x / math.expm1(x), rtol=1e-12)


@pytest.mark.parametrize("temperature_K", [800.0, 2856.0, 5772.0, 10000.0, 30000.0])
def test_wien_constant_from_numerical_peak(temperature_K):
    # CODATA 2018 b = 2.897771955e-3 m K: locate the maximum of L(lambda) on a fine,
    # broad grid (independent of any constant of ours) and refine by a parabola through
    # the three samples around the maximum.
    step_nm = 0.02
    lo, hi = 0.5 * 2.9e6 / temperature_K, 2.0 * 2.9e6 / temperature_K  # +-factor 2 window
    wl = np.arange(lo, hi, step_nm)
    radiance = planck_radiance(temperature_K, wl)
    i = int(np.argmax(radiance))
    assert 0 < i < wl.size - 1
    y0, y1, y2 = radiance[i - 1], radiance[i], radiance[i + 1]
    offset = 0.5 * (y0 - y2) / (y0 - 2.0 * y1 + y2)
    peak_nm = wl[i] + offset * step_nm
    b = peak_nm * 1e-9 * temperature_K
    assert b == pytest.approx(WIEN_B_CODATA_2018, rel=1e-6)
    # peak_wavelength_nm gives the same peak (CODATA 2018 b / T).
    assert float(peak_wavelength_nm(temperature_K)) == pytest.approx(peak_nm, rel=1e-6)
    assert float(peak_wavelength_nm(temperature_K)) == pytest.approx(
        WIEN_B_CODATA_2018 / temperature_K * 1e9, rel=1e-9)


def test_peak_wavelength_vectorised():
    # CODATA 2018 b; shape preserved.
    t = np.array([[3000.0, 6000.0], [12000.0, 24000.0]])
    out = peak_wavelength_nm(t)
    assert out.shape == t.shape
    np.testing.assert_allclose(out, WIEN_B_CODATA_2018 / t * 1e9, rtol=1e-9)


@pytest.mark.parametrize("temperature_K", [300.0, 1000.0, 5772.0, 40000.0, 100000.0])
def test_stefan_boltzmann_constant(temperature_K):
    # CODATA 2018 sigma = 5.670374419e-8 W m^-2 K^-4: M / T^4.
    sigma = float(radiant_exitance_W_m2(temperature_K)) / temperature_K**4
    assert sigma == pytest.approx(SIGMA_CODATA_2018, rel=1e-6)


def test_stefan_boltzmann_closed_form_from_si_constants():
    # sigma = 2 pi^5 k^4 / (15 h^3 c^2) from the exact SI 2019 constants (textbook closed
    # form), vectorised input keeps its shape.
    sigma_si = 2.0 * math.pi**5 * K_SI**4 / (15.0 * H_SI**3 * C_SI**2)
    t = np.array([[1500.0], [7500.0]])
    m = radiant_exitance_W_m2(t)
    assert m.shape == t.shape
    np.testing.assert_allclose(m / t**4, sigma_si, rtol=1e-6)


def test_planck_weighted_sums_match_colour_summation(colour):
    # Sum over 360-830 nm at 1 nm of colour's planck_law (CODATA constants) times the CIE
    # 1931 CMFs from colour.MSDS_CMFS, step 1 nm = 1e-9 m (CIE 15:2004 section 7.1).
    # 5000 temperatures so that the chunked, two-thread path is used too.
    cm = colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"]
    temps = np.geomspace(500.0, 100000.0, 5000)
    wl_m = cm.wavelengths * 1e-9
    spectra = colour.colorimetry.planck_law(wl_m, temps, c1=C1_SI, c2=C2_SI).T  # (T, wl)
    ref = spectra @ cm.values * 1e-9
    ours = planck_weighted_sums(temps, cm.values)
    assert ours.shape == (5000, 3)
    np.testing.assert_allclose(ours, ref, rtol=1e-12)
    # a 2-D temperature array keeps its shape; 1-D weights give no trailing axis
    two_d = planck_weighted_sums(temps[:6].reshape(2, 3), cm.values)
    assert two_d.shape == (2, 3, 3)
    np.testing.assert_allclose(two_d.reshape(6, 3), ref[:6], rtol=1e-12)
    one = planck_weighted_sums(temps[:4], cm.values[:, 1])
    assert one.shape == (4,)
    np.testing.assert_allclose(one, ref[:4, 1], rtol=1e-12)


def test_band_integral_matches_colour_summation(colour):
    # colour.sd_to_XYZ(method="Integration") with k = 1 is sum(S * cmf * d_lambda), with
    # colour's sd_blackbody in W sr^-1 m^-2 per nm and d_lambda = 1 nm; band_integral takes
    # radiance per metre of wavelength and multiplies by the step in metres: same number.
    cm = colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"]
    sd = colour.sd_blackbody(4000.0, colour.SpectralShape(360, 830, 1),
                             c1=C1_SI, c2=C2_SI)
    ref = colour.sd_to_XYZ(sd, cm, method="Integration", k=1)
    ours = band_integral(planck_radiance(4000.0), tables()["cmf_cie1931"])
    np.testing.assert_allclose(ours, ref, rtol=1e-12)


def test_luminous_exitance_against_colour_science():
    # colour.luminous_flux (K_m = 683 lm/W, CIE 1924 V) of colour's own 1 nm blackbody,
    # (trapezoid rule over W sr^-1 m^-2 nm^-1) times pi for exitance; the tolerance allows for
    # colour's rounded c2 = 1.4388e-2 and its trapezoid ends.
    import warnings

    from starkiln.engine.colour.spectrum import luminous_exitance_lm_m2

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        import colour

        lefs = colour.colorimetry.SDS_LEFS
        for t in (2856.0, 5800.0, 10000.0):
            sd = colour.sd_blackbody(t, colour.SpectralShape(360, 830, 1))
            ref_p = np.pi * colour.luminous_flux(sd, lefs["CIE 1924 Photopic Standard Observer"],
                                                 K_m=683.0)
            ref_s = np.pi * colour.luminous_flux(sd, lefs["CIE 1951 Scotopic Standard Observer"],
                                                 K_m=1700.0)
            # colour rounds c2: dL/L = x dc2/c2 ~ 9 x 1.6e-5 = 1.4e-4 at 2856 K and 555 nm
            assert float(luminous_exitance_lm_m2(t)) == pytest.approx(ref_p, rel=3e-4)
            assert float(luminous_exitance_lm_m2(t, scotopic=True)) == pytest.approx(ref_s,
                                                                                    rel=2e-3)


def test_blackbody_luminous_efficacy_peak():
    # From memory (handbook value): the luminous efficacy of blackbody radiation peaks at
    # about 95 lm/W near 6600 K; a 2856 K radiator (CIE A) gives about 15 lm/W.
    from starkiln.engine.colour.spectrum import luminous_efficacy_lm_W

    t = np.linspace(4000.0, 10000.0, 121)
    k = luminous_efficacy_lm_W(t)
    assert 93.0 < k.max() < 97.0
    assert 6200.0 < t[np.argmax(k)] < 7000.0
    assert 13.0 < float(luminous_efficacy_lm_W(2856.0)) < 17.0
