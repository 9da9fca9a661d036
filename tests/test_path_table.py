"""The tabulated light path (engine/pipeline/path_table.py, ``render(..., path_sums="table")``):
what it gives against spectra built outside Starkiln and against the exact pass.

Outside references, named beside each check: astropy's blackbody ([Astropy2022]), dust-extinction's
G23 law ([DustExtinction], Gordon et al. 2023), colour-science's CIE 1931 colour-matching
functions and summation ([ColourScience], [CIE15] section 7.1), speclite's Bessell V filter
([Speclite], [Bessell1990]), colour-science's CIEDE2000 ([CIE15] section 8.3).
"""

from __future__ import annotations

import numpy as np
import pytest

from starkiln.engine.catalogue.colouring import colour_values
from starkiln.engine.catalogue.plan import CataloguePlan
from starkiln.engine.errors import InputRangeError
from starkiln.engine.pipeline import path_table as pt
from starkiln.engine.pipeline.render import path_extinction_mag, render
from starkiln.engine.pipeline.settings import Settings

RNG = np.random.default_rng(20261203)
#: Random stars over the whole range: even in mired (500-100 000 K), E(B-V) 0-10 mag.
TEMPS = 1e6 / RNG.uniform(10.0, 2000.0, 3000)
EBV = RNG.uniform(0.0, 10.0, 3000)
MAGS = RNG.uniform(-2.0, 7.0, 3000)
ALTS = RNG.uniform(0.0, 90.0, 3000)


def _outside_arriving(temperature_K, ebv, wl_nm):
    """Blackbody (astropy, per unit wavelength) times dust-extinction's G23 at R_V 3.1."""
    import astropy.units as u
    from astropy.modeling.physical_models import BlackBody

    from starkiln.engine.catalogue.formats import astropy_guard

    with astropy_guard():
        from dust_extinction.parameter_averages import G23

        law = G23(Rv=3.1)
        bb = BlackBody(temperature_K * u.K,
                       scale=1.0 * u.erg / (u.s * u.cm ** 2 * u.AA * u.sr))
        flux = bb(wl_nm * u.nm).value
        return flux * law.extinguish(wl_nm * u.nm, Ebv=ebv), flux


def test_tabulated_chromaticity_is_colour_sciences_of_the_reddened_blackbody():
    # Reference: the arriving spectrum built from astropy's blackbody and dust-extinction's
    # G23, integrated with colour-science's CIE 1931 2-degree functions at 1 nm (summation,
    # [CIE15] 7.1). The tabulated render's xy within 1e-4 (the exact pass agrees to 1e-6;
    # the lattice adds at most 2e-5).
    import colour

    cmfs = colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"]
    wl = np.arange(360.0, 831.0)
    bar = cmfs.copy().align(colour.SpectralShape(360, 830, 1)).values
    pick = np.arange(0, 3000, 60)
    got = render(Settings(), TEMPS[pick], dust_ebv=EBV[pick] / 4, path_sums="table").xy
    for n, i in enumerate(pick):
        arriving, _ = _outside_arriving(TEMPS[i], EBV[i] / 4, wl)
        XYZ = arriving @ bar
        assert np.allclose(got[n], XYZ[:2] / XYZ.sum(), atol=1e-4), (TEMPS[i], EBV[i] / 4)


def test_tabulated_extinction_is_the_synthetic_v_of_speclites_curve():
    # Reference: A_V = -2.5 log10 of the ratio of the V-band integrals of the reddened and the
    # bare blackbody (astropy x dust-extinction G23), with speclite's Bessell (1990) V
    # response evaluated by speclite, used as an energy response (sum F S dlambda, as
    # [BessellMurphy2012] section 2 say those curves are meant). Within 1e-3 mag + 1e-4 A_V
    # over E(B-V) 0-10 (the lattice itself adds below 3e-5 mag).
    import astropy.units as u
    import speclite.filters

    v = speclite.filters.load_filter("bessell-V")
    wl = np.arange(470.0, 700.0, 0.25)
    response = v(wl * u.nm)
    pick = np.arange(0, 3000, 150)
    got = path_extinction_mag(Settings(), TEMPS[pick], dust_ebv=EBV[pick])
    for n, i in enumerate(pick):
        arriving, bare = _outside_arriving(TEMPS[i], EBV[i], wl)
        expected = -2.5 * np.log10(np.trapezoid(arriving * response, wl)
                                   / np.trapezoid(bare * response, wl))
        assert got[n] == pytest.approx(expected, abs=1e-3 + 1e-4 * expected), \
            (TEMPS[i], EBV[i])


@pytest.mark.parametrize("case", ["dust", "dust+mag", "air", "air+mag", "fixed dust, air+mag",
                                  "small dust, air+mag"])
def test_tabulated_render_is_the_exact_pass_within_its_stated_bounds(case):
    # Reference: the exact spectral pass (render's default, itself checked against
    # dust-extinction, Bucholtz 1995 and Kasten & Young 1989 in tests/test_path.py), over
    # random stars in the whole range. Bounds (module docstring): CIEDE2000 (colour-science)
    # below 0.02 on the display, intensity within 5e-4, extinction within 5e-5 mag.
    import colour

    settings = Settings(dust_ebv=0.3) if case.startswith("fixed") else Settings()
    kw = {}
    if "dust" in case and not case.startswith("fixed"):
        # the three-axis lattice (dust and air per star) holds E(B-V) up to about 1 mag
        kw["dust_ebv"] = EBV / 10 if case.startswith("small") else EBV
    if "air" in case:
        kw["altitude_deg"] = ALTS
    mags = MAGS if "mag" in case else None
    exact = render(settings, TEMPS, mags, **kw)
    table = render(settings, TEMPS, mags, path_sums="table", **kw)

    def lab(r):
        return colour.XYZ_to_Lab(colour.sRGB_to_XYZ(r.rgb_encoded))

    assert colour.delta_E(lab(exact), lab(table), method="CIE 2000").max() < 0.02
    assert np.abs(table.intensity - exact.intensity).max() < 5e-4
    assert np.abs(table.extinction_mag - exact.extinction_mag).max() < 5e-5


def test_path_sums_change_nothing_without_per_star_values():
    # Reference: the exact render; without per-star arrays there is no lattice to take.
    for s in (Settings(), Settings(dust_ebv=0.4, altitude_deg=30.0)):
        a = render(s, TEMPS[:50], MAGS[:50])
        b = render(s, TEMPS[:50], MAGS[:50], path_sums="table")
        assert np.array_equal(a.rgb_encoded, b.rgb_encoded)
        assert np.array_equal(a.intensity, b.intensity)


def test_a_rows_colour_does_not_depend_on_its_neighbours():
    # The same star alone and among others (a larger E(B-V) range grows the lattice): equal
    # to the last bit but for the order of float sums (1e-12).
    alone = render(Settings(), TEMPS[:1], dust_ebv=[0.2], path_sums="table")
    many = render(Settings(), TEMPS[:100], dust_ebv=np.r_[0.2, EBV[1:100]], path_sums="table")
    assert np.allclose(alone.rgb_encoded[0], many.rgb_encoded[0], atol=1e-12, rtol=0)


def test_airmass_nodes_and_their_altitudes_follow_kasten_young():
    # Reference: Kasten & Young (1989) eq. 3 - airmass 1 at the zenith (their formula gives
    # 0.9997), 37.92 at the horizon (their Table 2: 37.9); the inverse altitude reproduces
    # the airmass within 1e-6.
    from starkiln.engine.path.atmosphere import airmass_kasten_young

    x = pt.airmass_nodes()
    assert x[0] == pytest.approx(1.0, abs=5e-4) and x[-1] == pytest.approx(37.92, abs=0.01)
    assert np.diff(x).max() <= pt.AIRMASS_STEP + 1e-12
    h = pt.altitude_at_airmass_deg(x)
    # (near the zenith the airmass hardly changes with altitude: 0.05 degree there is 1e-7)
    assert h[0] == pytest.approx(90.0, abs=0.05) and h[-1] == pytest.approx(0.0, abs=1e-9)
    assert np.allclose(airmass_kasten_young(h), x, rtol=1e-6)


def test_a_bad_path_sums_name_is_one_line():
    with pytest.raises(InputRangeError, match="path_sums 'fast' is not accepted; exact or table"):
        render(Settings(), 5000.0, dust_ebv=0.1, path_sums="fast")


def test_catalogue_dust_column_with_magnitudes_takes_the_lattice():
    # A run big enough not to be exact (the plan's choice): its colours are the exact render
    # path's within the bounds above (CIEDE2000 from colour-science, intensity 5e-4).
    import colour

    plan = CataloguePlan(settings=Settings(), source="temperature", source_column="teff",
                         magnitude_column="v", dust_column="ebv")
    assert not plan.exact
    n = 2000
    cols = {"teff": (TEMPS[:n], None), "v": (MAGS[:n], None), "ebv": (EBV[:n] / 5, None)}
    got = colour_values(plan, cols, extinction=True)
    ref = render(Settings(), TEMPS[:n], MAGS[:n], dust_ebv=EBV[:n] / 5)
    rgb = np.column_stack([got.r, got.g, got.b]).astype(float)

    def lab(rgb_encoded):
        return colour.XYZ_to_Lab(colour.sRGB_to_XYZ(rgb_encoded))

    assert colour.delta_E(lab(rgb), lab(ref.rgb_encoded), method="CIE 2000").max() < 0.02
    assert np.abs(got.intensity - ref.intensity).max() < 5e-4
    assert np.abs(got.extinction_mag - ref.extinction_mag).max() < 1e-4


def test_a_grid_run_with_a_fixed_path_reports_its_extinction():
    # A big run's colours come from the colour grid, which holds no extinction: the lattice
    # gives it (for the plates' flux). Reference: A_V of the blackbody behind G23 dust through
    # speclite's V response (tests/test_path_outputs.py's _outside_av: astropy,
    # dust-extinction, speclite), within 2e-3 mag.
    from test_path_outputs import _outside_av

    plan = CataloguePlan(settings=Settings(dust_ebv=0.77), source="temperature",
                         source_column="teff", magnitude_column="v")
    assert not plan.exact
    t = np.array([3200.0, 7400.0, 26000.0])
    got = colour_values(plan, {"teff": (t, None), "v": (np.array([1.0, 2.0, 3.0]), None)},
                        extinction=True)
    assert got.extinction_mag is not None
    for a, temperature in zip(got.extinction_mag, t):
        assert a == pytest.approx(_outside_av(temperature, 0.77), abs=2e-3)
    none = colour_values(plan, {"teff": (t, None), "v": (np.zeros(3), None)})
    assert none.extinction_mag is None  # not asked for: not computed
