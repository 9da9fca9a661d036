"""Dereddening observed colour indices (engine/path/deredden.py, ``colour --deredden``).

Outside references, evaluated here:

- the passbands and their integrals: speclite's own filters ([Speclite]
  ``load_filters('bessell-B', 'bessell-V')`` and ``gaiadr3-BP``/``gaiadr3-RP``,
  ``convolve_with_array``), the Bessell curves as energy responses (unit weights,
  [BessellMurphy2012]) and the Gaia curves as photon responses ([Riello2021]);
- the spectra: astropy's ``BlackBody`` ([Astropy2022], Planck's law [Planck1901]) times
  dust-extinction's own ``G23(Rv=3.1).extinguish(..., Ebv=...)`` ([DustExtinction],
  [Gordon2023]);
- the Vega zero point: the CALSPEC Vega ([Bohlin2020]) in pyphot's wheel ([Pyphot]), read
  with astropy, with Vega's B-V = BP-RP = 0 (common practice, as [BessellMurphy2012] adopt);
- the definition of E(B-V) (hot stars' B-V excess is E(B-V): common practice) and the Gaia
  excess ratio E(BP-RP) / E(B-V) near 1.3-1.4 for solar-type stars (from memory).
"""

from __future__ import annotations

import json

import numpy as np
import pytest

from starkiln.cli.main import main
from starkiln.engine.errors import InputRangeError
from starkiln.engine.path import deredden as dr

pytest.importorskip("speclite")
pytest.importorskip("dust_extinction")

#: The test's own wavelength grid, Angstrom (speclite's unit): 3000-11000 A at 2 A.
WAVE_A = np.arange(3000.0, 11000.0 + 1.0, 2.0)
#: Blue band, red band, speclite names and weighting of each index.
FILTERS = {"B-V": ("bessell-B", "bessell-V", False), "BP-RP": ("gaiadr3-BP", "gaiadr3-RP", True)}


def _filters(index):
    import speclite.filters

    blue, red, photon = FILTERS[index]
    return speclite.filters.load_filters(blue, red), photon


def speclite_raw_index(index, wave_a, flux):
    """-2.5 log10(blue / red) through speclite's own filters (no zero point)."""
    f, photon = _filters(index)
    b = f[0].convolve_with_array(wave_a, flux, photon_weighted=photon, interpolate=True)
    r = f[1].convolve_with_array(wave_a, flux, photon_weighted=photon, interpolate=True)
    return -2.5 * np.log10(np.asarray(b) / np.asarray(r))


@pytest.fixture(scope="module")
def vega_zero():
    """Zero points making Vega's indices 0 ([Bohlin2020] CALSPEC Vega in pyphot's wheel)."""
    from starkiln.engine.colour import photometry_build

    try:
        wl_nm, flux = photometry_build.read_calspec(photometry_build.VEGA_FILE)
    except ModuleNotFoundError:
        pytest.skip("pyphot (test extra) is not installed")
    keep = (wl_nm > 290.0) & (wl_nm < 1110.0)
    return {i: -float(speclite_raw_index(i, wl_nm[keep] * 10.0, flux[keep])) for i in FILTERS}


def blackbody_flux(temperature_K, wave_a=WAVE_A):
    """F_lambda of a blackbody (astropy's BlackBody, [Planck1901]), any scale."""
    import astropy.units as u
    from astropy.modeling.physical_models import BlackBody

    bb = BlackBody(temperature=temperature_K * u.K,
                   scale=1.0 * u.erg / (u.cm ** 2 * u.s * u.AA * u.sr))
    return np.asarray(bb(wave_a * u.AA).value, dtype=np.float64)


def g23_extinguish(ebv, wave_a=WAVE_A, rv=3.1):
    """dust-extinction's own G23 transmission for E(B-V) ([DustExtinction], [Gordon2023])."""
    import astropy.units as u
    from dust_extinction.parameter_averages import G23

    return np.asarray(G23(Rv=rv).extinguish(wave_a * u.AA, Ebv=ebv), dtype=np.float64)


@pytest.mark.parametrize("index", ["B-V", "BP-RP"])
@pytest.mark.parametrize("temperature_K", [3500.0, 5000.0, 6500.0, 10000.0, 20000.0, 40000.0])
@pytest.mark.parametrize("ebv", [0.5, 2.0])
def test_colour_excess_is_speclites_through_dust_extinction(index, temperature_K, ebv):
    # The excess of a blackbody behind G23 dust, measured with speclite's filters on the
    # test's own spectra (the zero point cancels in the difference): within 0.005 mag.
    flux = blackbody_flux(temperature_K)
    expected = (speclite_raw_index(index, WAVE_A, flux * g23_extinguish(ebv))
                - speclite_raw_index(index, WAVE_A, flux))
    got = float(dr.colour_excess(index, temperature_K, ebv, "G23", 3.1))
    assert abs(got - expected) < 0.005, (got, expected)


@pytest.mark.parametrize("index", ["B-V", "BP-RP"])
@pytest.mark.parametrize("temperature_K, ebv", [(3200.0, 0.3), (4500.0, 1.0), (5800.0, 0.5),
                                                (8000.0, 0.05), (15000.0, 2.5),
                                                (30000.0, 0.8)])
def test_round_trip_through_speclite_and_dust_extinction(vega_zero, index, temperature_K, ebv):
    # Redden a blackbody with dust-extinction, measure its index with speclite (Vega zero
    # point), deredden with Starkiln: the blackbody's own speclite index back within 0.01.
    flux = blackbody_flux(temperature_K)
    observed = float(speclite_raw_index(index, WAVE_A, flux * g23_extinguish(ebv))
                     + vega_zero[index])
    own = float(speclite_raw_index(index, WAVE_A, flux) + vega_zero[index])
    got = float(dr.intrinsic_index(index, observed, ebv, law="G23", rv=3.1))
    assert abs(got - own) < 0.01, (got, own, observed)


def test_arrays_are_dereddened_together(vega_zero):
    # The same round trip for many stars in one call (vectorised): every one within 0.01.
    temps = np.array([3000.0, 4000.0, 5500.0, 7000.0, 9000.0, 12000.0, 25000.0])
    ebvs = np.array([0.1, 0.4, 0.7, 1.5, 0.2, 3.0, 0.6])
    obs = np.array([speclite_raw_index("B-V", WAVE_A, blackbody_flux(t) * g23_extinguish(e))
                    for t, e in zip(temps, ebvs)]) + vega_zero["B-V"]
    own = np.array([speclite_raw_index("B-V", WAVE_A, blackbody_flux(t))
                    for t in temps]) + vega_zero["B-V"]
    out = dr.deredden("B-V", obs.reshape(7, 1), ebvs.reshape(7, 1))
    assert out.intrinsic_mag.shape == (7, 1)
    assert np.all(out.status == dr.OK)
    np.testing.assert_allclose(out.intrinsic_mag[:, 0], own, atol=0.01)
    np.testing.assert_allclose(out.excess_mag[:, 0], obs - own, atol=0.01)


@pytest.mark.parametrize("temperature_K", [15000.0, 25000.0, 40000.0])
def test_hot_stars_excess_is_the_nominal_e_bv(temperature_K):
    # E(B-V) is defined by the reddening of hot stars' B-V: their B-V excess at E(B-V) = 0.5
    # is 0.5 within 0.03 (common practice; broad bands give a few per cent less).
    assert abs(float(dr.colour_excess("B-V", temperature_K, 0.5)) - 0.5) < 0.03


@pytest.mark.parametrize("temperature_K", [5000.0, 5800.0, 6500.0])
def test_gaia_excess_ratio_for_solar_type_stars(temperature_K):
    # E(BP-RP) / E(B-V) is about 1.3-1.4 for G23, R_V = 3.1 and solar-type stars (from
    # memory: checked loosely, 1.2-1.5).
    ratio = float(dr.colour_excess("BP-RP", temperature_K, 0.2)) / 0.2
    assert 1.2 < ratio < 1.5, ratio


@pytest.mark.parametrize("ebv", [0.0, 0.5])
def test_bluer_than_any_reddened_blackbody(vega_zero, ebv):
    # No blackbody is bluer than the Rayleigh-Jeans limit F_lambda ~ lambda^-4 ([Planck1901])
    # and dust only reddens: its reddened index (speclite, dust-extinction) is the bluest.
    rj = (WAVE_A / 5500.0) ** -4.0
    limit = float(speclite_raw_index("B-V", WAVE_A, rj * g23_extinguish(ebv)) + vega_zero["B-V"])
    out = dr.deredden("B-V", [limit - 0.01, limit + 0.01, np.nan], ebv)
    assert out.status.tolist() == [dr.TOO_BLUE, dr.OK, dr.NOT_A_NUMBER]
    assert np.isnan(out.intrinsic_mag[0]) and np.isnan(out.intrinsic_mag[2])
    assert np.isfinite(out.intrinsic_mag[1])
    with pytest.raises(InputRangeError) as exc:
        dr.intrinsic_index("B-V", limit - 0.01, ebv)
    text = str(exc.value)
    assert "\n" not in text and "bluer than any blackbody" in text and f"{ebv:g}" in text


def test_bad_dust_is_named():
    with pytest.raises(InputRangeError, match="E\\(B-V\\) -0.1 is outside"):
        dr.intrinsic_index("B-V", 0.5, -0.1)
    with pytest.raises(Exception, match="R_V"):
        dr.intrinsic_index("B-V", 0.5, 0.2, rv=7.0)
    with pytest.raises(InputRangeError, match="unknown colour index"):
        dr.intrinsic_index("U-B", 0.5, 0.2)


# --- the command line -----------------------------------------------------------------------

@pytest.mark.parametrize("args, words", [
    (["--bv", "0.9", "--deredden"], "--ebv"),
    (["--temperature", "5000", "--ebv", "0.3", "--deredden"], "--bv"),
    (["--spectral-class", "G2V", "--ebv", "0.3", "--deredden"], "--bv"),
    (["--bv", "-0.5", "--ebv", "0.3", "--deredden"], "bluer than any blackbody"),
])
def test_cli_errors_exit_2_with_one_line(capsys, args, words):
    # The contract of the command line: exit status 2, one line on stderr, nothing on stdout.
    assert main(["colour", *args]) == 2
    out, err = capsys.readouterr()
    assert out == ""
    assert len(err.strip().splitlines()) == 1 and words in err


def test_cli_json_reports_observed_intrinsic_and_excess(capsys, vega_zero):
    # A blackbody of 6000 K reddened by E(B-V) 0.4 (dust-extinction) and measured with
    # speclite: the command's intrinsic B-V is that blackbody's speclite B-V within 0.01.
    flux = blackbody_flux(6000.0)
    observed = round(float(speclite_raw_index("B-V", WAVE_A, flux * g23_extinguish(0.4))
                           + vega_zero["B-V"]), 4)
    own = float(speclite_raw_index("B-V", WAVE_A, flux) + vega_zero["B-V"])
    assert main(["colour", "--bv", str(observed), "--ebv", "0.4", "--deredden", "--json"]) == 0
    out, err = capsys.readouterr()
    rec = json.loads(out)
    d = rec["source"]["dereddening"]
    assert d["observed"] == observed and d["dust_ebv"] == 0.4 and d["dust_law"] == "G23"
    assert abs(d["intrinsic"] - own) < 0.01
    assert abs(d["excess_mag"] - (observed - d["intrinsic"])) < 2e-6
    assert rec["source"]["value"] == d["intrinsic"]
    # The dust is not applied again: the render's settings hold none, and nothing is lost.
    assert rec["settings"]["dust_ebv"] == 0.0 and rec["extinction_mag"] is None
    # ...so the colour is the one of the intrinsic index given without dust.
    assert main(["colour", "--bv", repr(d["intrinsic"]), "--json"]) == 0
    plain = json.loads(capsys.readouterr()[0])
    assert plain["hex"] == rec["hex"]
    assert abs(plain["temperature_K"] / 6000.0 - 1.0) < 0.02  # Planck1901: the blackbody back


# --- catalogues -----------------------------------------------------------------------------

def _read_csv(path):
    import csv

    with open(path, newline="") as f:
        return list(csv.DictReader(f))


@pytest.mark.parametrize("exact", [False, True])
def test_catalogue_deredden_colours_the_intrinsic_indices(tmp_path, capsys, vega_zero, exact):
    # Blackbodies reddened in the test (dust-extinction G23, E(B-V) 0.35) and measured with
    # speclite: dereddened by the catalogue, each row has the colour of its blackbody's own
    # speclite B-V given without dust (within one 8-bit step, 1/255: the catalogue's
    # acceptance check). One row too blue for the dust, one empty.
    pytest.importorskip("pyarrow")
    temps = [3300.0, 4800.0, 6200.0, 9000.0, 18000.0]
    ebv = 0.35
    obs = [float(speclite_raw_index("B-V", WAVE_A, blackbody_flux(t) * g23_extinguish(ebv))
                 + vega_zero["B-V"]) for t in temps]
    own = [float(speclite_raw_index("B-V", WAVE_A, blackbody_flux(t)) + vega_zero["B-V"])
           for t in temps]
    rows = [f"{o:.6f}" for o in obs] + ["-0.30", ""]
    observed = tmp_path / "observed.csv"
    observed.write_text("id,bv\n" + "\n".join(f"s{k},{v}" for k, v in enumerate(rows)) + "\n")
    intrinsic = tmp_path / "intrinsic.csv"
    intrinsic.write_text("bv\n" + "\n".join(f"{v:.6f}" for v in own) + "\n")
    extra = ["--exact"] if exact else []
    assert main(["catalogue", str(observed), str(tmp_path / "a.csv"), "--bv-column", "bv",
                 "--ebv", str(ebv), "--deredden", "--no-progress", *extra]) == 0
    summary = capsys.readouterr()[0]
    assert "too-blue-for-dust" in summary and "dereddened: E(B-V) 0.35" in summary
    assert main(["catalogue", str(intrinsic), str(tmp_path / "b.csv"), "--bv-column", "bv",
                 "--no-progress", *extra]) == 0
    capsys.readouterr()
    a, b = _read_csv(tmp_path / "a.csv"), _read_csv(tmp_path / "b.csv")
    assert [r["status"] for r in a] == ["ok"] * 5 + ["too-blue-for-dust", "missing-temperature"]
    for ra, rb in zip(a[:5], b):
        for c in "rgb":
            assert abs(float(ra[c]) - float(rb[c])) <= 1.0 / 255.0, (ra, rb)
    assert all(a[k][c] == "" for k in (5, 6) for c in "rgb")


def test_catalogue_deredden_errors_exit_2(tmp_path, capsys):
    src = tmp_path / "s.csv"
    src.write_text("bv,teff\n0.5,5000\n")
    for args, words in ((["--bv-column", "bv", "--deredden"], "--ebv"),
                        (["--temperature-column", "teff", "--ebv", "0.2", "--deredden"],
                         "--bv-column")):
        assert main(["catalogue", str(src), str(tmp_path / "o.csv"), *args]) == 2
        out, err = capsys.readouterr()
        assert len(err.strip().splitlines()) == 1 and words in err
        assert not (tmp_path / "o.csv").exists()  # nothing written


def test_plan_refuses_dust_applied_twice():
    # The plan's contract: dereddened colours are shown without the dust.
    from starkiln.engine.catalogue.plan import CataloguePlan
    from starkiln.engine.errors import StarkilnError
    from starkiln.engine.pipeline.settings import Settings

    with pytest.raises(StarkilnError, match="dust_ebv 0"):
        CataloguePlan(Settings(dust_ebv=0.3), "bv", "bv", deredden_ebv=0.3)
    with pytest.raises(StarkilnError, match="not to temperatures"):
        CataloguePlan(Settings(), "temperature", "t", deredden_ebv=0.3)
