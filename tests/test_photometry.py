"""Synthetic photometry (engine/colour/photometry.py) against outside references.

- The cache (assets/photometry.npz) against the packages it came from: speclite's filter
  curves ([Speclite], evaluated by speclite itself) and the CALSPEC Vega file ([Bohlin2020])
  in pyphot's wheel ([Pyphot]), read with astropy.
- Magnitudes against pyphot's own synthetic photometry ([Pyphot] ``Filter.get_flux`` and
  ``Vega_zero_mag``, the same CALSPEC Vega), with the Bessell curves given to pyphot as
  energy responses ([BessellMurphy2012]) and the Gaia curves as photon responses ([Riello2021]).
- The Sun's colours from its CALSPEC spectrum ([Bohlin2020], [Colina1996]) against the
  published solar colours: B-V = 0.653 +- 0.003 ([Ramirez2012]), BP-RP = 0.82
  ([CasagrandeVandenBerg2018], from memory).
- Blackbodies: the hot-end limit against the Rayleigh-Jeans spectrum ([Planck1901]),
  monotonic tables and the inverse.

The packages are in the test extra; without them the comparisons skip (the rest still runs).
"""

from __future__ import annotations

import numpy as np
import pytest

from starkiln.engine.colour import photometry as ph
from starkiln.engine.errors import InputRangeError

GRID = ph.PHOTOMETRY_GRID_NM


@pytest.fixture(scope="module")
def build():
    pytest.importorskip("speclite")
    pytest.importorskip("astropy")
    from starkiln.engine.colour import photometry_build

    try:
        photometry_build.pyphot_libs()
    except ModuleNotFoundError:
        pytest.skip("pyphot (test extra) is not installed")
    return photometry_build


@pytest.fixture(scope="module")
def sun(build):
    wl, flux = build.read_calspec(build.SUN_FILE)
    return build.bin_average(wl, flux)


def test_grid_is_300_to_1100_nm_at_1_nm():
    # The contract of the module: 1 nm steps, wide enough for BP/RP (to ~1050 nm, [Riello2021]).
    assert GRID[0] == 300.0 and GRID[-1] == 1100.0 and np.all(np.diff(GRID) == 1.0)


@pytest.mark.parametrize("band, name", [("B", "bessell-B"), ("V", "bessell-V"),
                                         ("BP", "gaiadr3-BP"), ("RP", "gaiadr3-RP"),
                                         ("G", "gaiadr3-G")])
def test_cached_curves_are_speclites(build, band, name):
    # [Speclite]: the filter's own interpolation at the grid's wavelengths.
    import astropy.units as u
    import speclite.filters

    f = speclite.filters.load_filter(name)
    lo, hi = float(f.wavelength[0]) / 10.0, float(f.wavelength[-1]) / 10.0
    inside = (GRID >= lo) & (GRID <= hi)
    want = np.asarray(f(GRID[inside] * u.nm), dtype=np.float64)
    cached = ph.cached_arrays()[f"response_{band}"]
    np.testing.assert_allclose(cached[inside], want, rtol=0, atol=1e-12)
    assert np.all(cached[~inside] == 0.0)


def test_photonic_bessell_curves_are_the_energy_curves_over_lambda():
    # [BessellMurphy2012]: photonic S(lambda) = energy S(lambda) / lambda, renormalised to peak 1.
    for b in ("B", "V"):
        raw = ph.cached_arrays()[f"response_{b}"]
        wl, s = ph.band(b)
        want = raw / wl
        np.testing.assert_allclose(s, want / want.max(), rtol=1e-12, atol=0)
    # The Gaia curves are photon responses already ([Riello2021]): used as published.
    np.testing.assert_array_equal(ph.band("BP")[1], ph.cached_arrays()["response_BP"])


def test_cached_vega_keeps_the_calspec_flux(build):
    # The CALSPEC file ([Bohlin2020]) read directly with astropy, integrated by the trapezoid
    # rule on its own sampling over 400-900 nm: the cached 1 nm bin means hold the same flux.
    import warnings

    from astropy.io import fits

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        with fits.open(build.pyphot_libs() / "alpha_lyr_stis_011.fits") as hdul:
            wl = np.array(hdul[1].data["WAVELENGTH"], dtype=float) / 10.0
            flux = np.array(hdul[1].data["FLUX"], dtype=float)
    keep = (wl >= 399.5) & (wl <= 900.5)
    raw = np.trapezoid(flux[keep], wl[keep])
    cached = ph.cached_arrays()["vega_flux_lambda"][(GRID >= 400) & (GRID <= 900)].sum()
    assert cached == pytest.approx(raw, rel=2e-3)
    # Vega near 550 nm: about 3.6e-9 erg s^-1 cm^-2 A^-1 (CALSPEC; common practice).
    assert 3.3e-9 < ph.cached_arrays()["vega_flux_lambda"][550 - 300] < 3.9e-9


def test_cache_equals_a_fresh_build(build):
    fresh = build.build_arrays()
    for key, a in fresh.items():
        np.testing.assert_array_equal(ph.cached_arrays()[key], a, err_msg=key)


def test_sources_file_names_every_array():
    import json

    from starkiln.assets import asset_path

    meta = json.loads(asset_path("photometry_sources.json").read_text(encoding="utf-8"))
    arrays = {v["array"] for v in meta["filters"].values()} | {meta["vega"]["array"]}
    assert arrays == {k for k in ph.cached_arrays() if k != "wavelength_nm"}
    assert meta["vega"]["file"] == "alpha_lyr_stis_011.fits"


@pytest.mark.parametrize("band, name, kind", [("B", "bessell-B", "energy"),
                                               ("V", "bessell-V", "energy"),
                                               ("BP", "gaiadr3-BP", "photon"),
                                               ("RP", "gaiadr3-RP", "photon"),
                                               ("G", "gaiadr3-G", "photon")])
def test_magnitudes_of_the_sun_agree_with_pyphot(build, sun, band, name, kind):
    # [Pyphot]'s own synthetic photometry on the raw CALSPEC solar spectrum, Vega zero point
    # from the same CALSPEC Vega file ("stis_011"): within 1e-3 mag (our 1 nm binning).
    pyphot = pytest.importorskip("pyphot")
    import speclite.filters

    f = speclite.filters.load_filter(name)
    filt = pyphot.Filter(np.asarray(f.wavelength), np.asarray(f.response), name=band,
                         dtype=kind, unit="AA", vega="stis_011")
    wl, flux = build.read_calspec(build.SUN_FILE)
    got = filt.get_flux(wl * 10.0, flux)
    got = float(getattr(got, "value", getattr(got, "magnitude", got)))
    want = -2.5 * np.log10(got) - float(filt.Vega_zero_mag) + ph.VEGA_MAGNITUDES[band]
    assert float(ph.synthetic_magnitude(GRID, sun, band)) == pytest.approx(want, abs=1e-3)


def test_solar_colours_match_the_published_ones(sun):
    # [Ramirez2012]: (B-V)_sun = 0.653 +- 0.003; the tolerance 0.02.
    assert float(ph.colour_index(GRID, sun, "B-V")) == pytest.approx(0.653, abs=0.02)
    # [CasagrandeVandenBerg2018] (from memory): (BP-RP)_sun = 0.82; tolerance 0.03.
    assert float(ph.colour_index(GRID, sun, "BP-RP")) == pytest.approx(0.82, abs=0.03)


def test_vega_has_the_adopted_magnitudes():
    vega = ph.cached_arrays()["vega_flux_lambda"]
    # V = 0.03 and B - V = 0 (common practice; [BessellMurphy2012]); Gaia 0.023 ([Riello2021]).
    assert float(ph.synthetic_magnitude(GRID, vega, "V")) == pytest.approx(0.03, abs=1e-12)
    assert float(ph.colour_index(GRID, vega, "B-V")) == pytest.approx(0.0, abs=1e-12)
    assert float(ph.colour_index(GRID, vega, "BP-RP")) == pytest.approx(0.0, abs=1e-12)
    assert float(ph.synthetic_magnitude(GRID, vega, "G")) == pytest.approx(0.023, abs=1e-12)


def test_magnitudes_follow_pogson_and_another_grid_agrees():
    # [Pogson1856]: 100 times the flux is 5 magnitudes brighter.
    vega = ph.cached_arrays()["vega_flux_lambda"]
    m = ph.synthetic_magnitude(GRID, np.stack([vega, 100.0 * vega]), "V")
    assert float(m[0] - m[1]) == pytest.approx(5.0, abs=1e-12)
    k = ph.flux_scale_for_magnitude(GRID, vega, "V", 5.03)
    assert float(k) == pytest.approx(0.01, rel=1e-12)
    # The same smooth spectrum on a 0.5 nm grid gives the same magnitude (trapezoid rule).
    fine = np.arange(300.0, 1100.0001, 0.5)
    bb = lambda w: 1.0 / (w**5 * np.expm1(1.4388e7 / (w * 5000.0)))  # Planck shape, nm
    a = float(ph.synthetic_magnitude(GRID, bb(GRID), "V"))
    b = float(ph.synthetic_magnitude(fine, bb(fine), "V"))
    assert a == pytest.approx(b, abs=2e-3)


def test_hot_end_limit_is_the_rayleigh_jeans_spectrum():
    # [Planck1901]: as T -> infinity, B_lambda -> 2 c k T / lambda^4; its indices are the
    # bluest of any blackbody. Very hot blackbodies approach it from the red side.
    for ix in ("B-V", "BP-RP"):
        limit = ph.blackbody_limit_index(ix)
        rj = float(ph.colour_index(GRID, GRID ** -4.0, ix))
        assert limit == pytest.approx(rj, abs=1e-12)
        hot = ph.planck_colour_index(np.array([1e5, 1e6, 1e8, np.inf]), ix)
        assert np.all(np.diff(hot) < 0) and hot[-1] == pytest.approx(limit, abs=1e-9)
        assert hot[2] == pytest.approx(limit, abs=1e-3)
    # B-V of the bluest blackbody is about -0.38 here (the issue recalled about -0.33).
    assert -0.40 < ph.blackbody_limit_index("B-V") < -0.33


@pytest.mark.parametrize("ix", ["B-V", "BP-RP"])
def test_blackbody_tables_are_monotonic_and_invert(ix):
    values, mired = ph.colour_index_table(ix)
    assert np.all(np.diff(values) > 0) and np.all(np.diff(mired) > 0)
    t = np.geomspace(500.0, 100000.0, 3001)
    v = ph.planck_colour_index(t, ix)
    back = ph.temperature_from_colour_index(v, ix)
    np.testing.assert_allclose(back, t, rtol=2e-5)
    assert np.abs(ph.planck_colour_index(back, ix) - v).max() < 1e-4
    lo, hi = ph.colour_index_range(ix)
    assert float(ph.temperature_from_colour_index(lo, ix)) == pytest.approx(100000.0)
    assert float(ph.temperature_from_colour_index(hi, ix)) == pytest.approx(500.0)


def test_out_of_range_colours_are_refused_or_clamped():
    lo, hi = ph.colour_index_range("B-V")
    for bad in (hi + 0.01, np.nan, np.inf, lo - 0.01):
        with pytest.raises(InputRangeError, match="B-V"):
            ph.temperature_from_colour_index(bad, "B-V")
    assert float(ph.temperature_from_colour_index(lo - 0.01, "B-V", clamp_blue=True)) == 100000.0
    with pytest.raises(InputRangeError, match="unknown colour index"):
        ph.planck_colour_index(5000.0, "U-B")
    with pytest.raises(InputRangeError, match="unknown band"):
        ph.band("R")


def test_transmission_multiplies_the_spectrum():
    # A grey transmission leaves the colour alone; a transmission falling towards the blue
    # (like dust, common practice) reddens it.
    t = np.array([4000.0, 20000.0])
    base = ph.planck_colour_index(t, "B-V")
    np.testing.assert_allclose(ph.planck_colour_index(t, "B-V", np.full(GRID.size, 0.3)), base,
                               atol=1e-12)
    red = ph.planck_colour_index(t, "B-V", (GRID / 1100.0) ** 2)
    assert np.all(red > base)
