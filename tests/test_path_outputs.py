"""Per-star dust in catalogues and plates, per-star altitude in plates (issue 14).

What each check is compared against is named beside it: the render path with per-star arrays
(the one path every output must agree with), colour-science (the colour of a reference
spectrum, CIEDE2000), dust-extinction's G23 law and astropy's blackbody (the reference
reddened spectrum), speclite's Bessell filters (the B-V excess), astropy's AltAz frame (each
star's altitude), Pillow and the OpenEXR package (the metadata read back).
"""

from __future__ import annotations

import warnings

import numpy as np
import pytest

from starkiln.cli.main import main
from starkiln.engine.catalogue.colouring import colour_values
from starkiln.engine.catalogue.plan import CataloguePlan
from starkiln.engine.pipeline.render import render
from starkiln.engine.pipeline.settings import Settings

#: An invented cluster: temperatures, magnitudes, E(B-V) (and A_V = 3.1 E(B-V)).
TEFF = [3200.0, 4500.0, 5800.0, 7400.0, 9800.0, 15000.0, 26000.0, 41000.0]
VMAG = [6.1, 4.2, 2.0, 0.5, 3.3, 5.0, -0.8, 1.4]
EBV = [0.0, 0.05, 0.31, 0.77, 1.2, 2.5, 0.12, 4.0]


def _write_csv(path, rows, header="id,ra,dec,teff,vmag,ebv,av"):
    path.write_text(header + "\n" + "\n".join(",".join(str(c) for c in r) for r in rows) + "\n")
    return path


def _cluster_csv(tmp_path, ebv=EBV):
    rows = [(i, 10.0 + 20 * i, -30.0 + 8 * i, t, m, e, round(3.1 * e, 6))
            for i, (t, m, e) in enumerate(zip(TEFF, VMAG, ebv))]
    return _write_csv(tmp_path / "cluster.csv", rows)


def _read_csv(path):
    import pyarrow.csv as pcsv

    return pcsv.read_csv(path, convert_options=pcsv.ConvertOptions(
        column_types={"status": "string"})).to_pydict()


def _rgb(table):
    return np.column_stack([np.array(table[c], dtype=float) for c in "rgb"])


def _one_line_error(capsys, word):
    err = capsys.readouterr().err.strip().splitlines()
    return len(err) == 1 and err[0].startswith("starkiln: error:") and word in err[0]


# -- catalogue: the column gives render(dust_ebv=array)'s colours ------------------------------

@pytest.mark.parametrize("magnitudes", [False, True])
def test_ebv_column_gives_the_render_paths_colours(tmp_path, capsys, magnitudes):
    # Reference: render(settings, T, m, dust_ebv=array), the one render path, within 1e-6
    # (the CSV holds float32 values: 1e-6 is above their rounding).
    src = _cluster_csv(tmp_path)
    out = tmp_path / "out.csv"
    extra = ["--magnitude-column", "vmag"] if magnitudes else []
    assert main(["catalogue", str(src), str(out), "--temperature-column", "teff",
                 "--ebv-column", "ebv", "--no-progress", *extra]) == 0
    assert "dust: E(B-V) from column 'ebv'" in capsys.readouterr().out
    table = _read_csv(out)
    ref = render(Settings(), np.array(TEFF), np.array(VMAG) if magnitudes else None,
                 dust_ebv=np.array(EBV))
    assert table["status"] == ["ok"] * len(TEFF)
    assert np.allclose(_rgb(table), ref.rgb_encoded, atol=1e-6, rtol=0)
    assert np.allclose(table["intensity"], np.broadcast_to(ref.intensity, (len(TEFF),)),
                       atol=1e-6)


def test_av_column_is_ebv_times_rv(tmp_path):
    # E(B-V) = A_V / R_V ([Cardelli1989] eq. 1): an A_V column with --rv 4.0 gives the colours
    # of render(dust_ebv=A_V / 4.0) with R_V 4.0.
    src = _cluster_csv(tmp_path)
    out = tmp_path / "out.csv"
    assert main(["catalogue", str(src), str(out), "--temperature-column", "teff",
                 "--av-column", "av", "--rv", "4.0", "--no-progress"]) == 0
    av = 3.1 * np.array(EBV)
    ref = render(Settings(dust_rv=4.0), np.array(TEFF), dust_ebv=av / 4.0)
    assert np.allclose(_rgb(_read_csv(out)), ref.rgb_encoded, atol=1e-6, rtol=0)


def test_a_constant_column_is_the_same_run_as_a_fixed_ebv(tmp_path):
    # Reference: the same catalogue with one --ebv for every star (the settings' fixed path).
    src = _cluster_csv(tmp_path, ebv=[0.42] * len(TEFF))
    by_column, fixed = tmp_path / "column.csv", tmp_path / "fixed.csv"
    base = ["--temperature-column", "teff", "--magnitude-column", "vmag", "--no-progress"]
    assert main(["catalogue", str(src), str(by_column), "--ebv-column", "ebv", *base]) == 0
    assert main(["catalogue", str(src), str(fixed), "--ebv", "0.42", *base]) == 0
    a, b = _read_csv(by_column), _read_csv(fixed)
    assert np.allclose(_rgb(a), _rgb(b), atol=1e-6, rtol=0)
    assert np.allclose(a["intensity"], b["intensity"], atol=1e-6)


def test_dust_grid_is_within_its_documented_delta_e_of_render(colour):
    # The temperature x E(B-V) grid (large runs without magnitudes) against render(dust_ebv=)
    # on random stars, CIEDE2000 by colour-science ([CIE15] section 8.3) on the decoded sRGB
    # colours: at most 0.1 (docs/performance.md; measured 0.046), within the 0.2 every grid keeps.
    rng = np.random.default_rng(14)
    n = 80_000
    t = np.exp(rng.uniform(np.log(500.0), np.log(100_000.0), n))
    ebv = np.where(rng.random(n) < 0.5, rng.uniform(0.0, 1.0, n), rng.uniform(0.0, 10.0, n))
    plan = CataloguePlan(Settings(), "temperature", "t", dust_column="e")
    assert not plan.exact
    res = colour_values(plan, {"t": (t, None), "e": (ebv, None)})
    exact = render(Settings(), t, dust_ebv=ebv)
    d = Settings().display
    white = colour.XYZ_to_xy(d.white_XYZ)

    def lab(enc):
        return colour.XYZ_to_Lab(d.decode(enc) @ d.rgb_to_XYZ.T, white)

    grid_rgb = np.column_stack([res.r, res.g, res.b]).astype(np.float64)
    de = colour.delta_E(lab(grid_rgb), lab(exact.rgb_encoded), method="CIE 2000")
    assert float(de.max()) <= 0.1, float(de.max())


def test_reddened_star_matches_g23_through_bessell_filters_and_colour_science(colour):
    # Outside references: astropy's BlackBody (B_lambda) times dust-extinction's G23 (R_V 3.1)
    # ``extinguish`` is the reddened spectrum ([Planck1901], [Gordon2023], [DustExtinction]).
    # (1) its B-V excess through speclite's Bessell B and V ([Speclite], [Bessell1990]) equals
    # that of the spectrum the engine lets arrive for the catalogue row, and is E(B-V) within
    # 8 % for a hot star (the definition of E(B-V); broad bands give a little less than the
    # nominal excess as the reddened light's effective wavelengths shift, common practice;
    # 0.567 here); (2) the row's
    # chromaticity (render with the row's E(B-V)) is colour-science's for that spectrum
    # (``sd_to_XYZ``, summation at 1 nm, [CIE15] section 7.1).
    import astropy.units as u
    import speclite.filters
    from astropy.modeling.physical_models import BlackBody

    from starkiln.engine.catalogue.formats import astropy_guard
    from starkiln.engine.path.chain import arriving_spectrum

    with astropy_guard():
        from dust_extinction.parameter_averages import G23

    temperature, ebv = 26000.0, 0.6
    plan = CataloguePlan(Settings(), "temperature", "t", dust_column="e", exact=True)
    res = colour_values(plan, {"t": (np.array([temperature]), None),
                               "e": (np.array([ebv]), None)})
    engine = render(Settings(), temperature, dust_ebv=ebv)
    assert np.allclose([res.r[0], res.g[0], res.b[0]], engine.rgb_encoded, atol=1e-6)

    wl = np.arange(330.0, 1000.0, 1.0)
    with warnings.catch_warnings(), astropy_guard():
        warnings.simplefilter("ignore")
        # B_lambda (a scale in per-wavelength units; the default is B_nu)
        per_wl = u.erg / (u.s * u.cm**2 * u.Angstrom * u.sr)
        bb = BlackBody(temperature=temperature * u.K, scale=1.0 * per_wl)(wl * u.nm).value
        law = G23(Rv=3.1)
        reddened = bb * law.extinguish(wl * u.nm, Ebv=ebv)
    flam = u.erg / (u.s * u.cm**2 * u.Angstrom)
    filters = speclite.filters.load_filters("bessell-B", "bessell-V")

    def b_minus_v(spectrum):
        b, v = filters.get_ab_magnitudes(spectrum * flam, wl * u.nm)[0]
        return b - v

    ref_excess = b_minus_v(reddened) - b_minus_v(bb)
    arrived = arriving_spectrum(Settings(), temperature, wl, dust_ebv=ebv)
    plain = arriving_spectrum(Settings(), temperature, wl)
    engine_excess = b_minus_v(arrived) - b_minus_v(plain)
    assert engine_excess == pytest.approx(ref_excess, abs=1e-4)
    assert ref_excess == pytest.approx(ebv, rel=0.08)

    cmfs = colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"]
    visible = (wl >= 360.0) & (wl <= 830.0)
    sd = colour.SpectralDistribution(dict(zip(wl[visible], reddened[visible])))
    xy = colour.XYZ_to_xy(colour.sd_to_XYZ(sd, cmfs, method="Integration"))
    assert np.allclose(engine.xy, xy, atol=2e-5)


# -- bad rows: statuses, counted, none dropped --------------------------------------------------

BAD_ROWS = [  # (ebv cell, expected status); the reasons of plan.STATUSES
    ("0.3", "ok"), ("", "missing-dust"), ("dusty", "not-a-number"), ("nan", "not-a-number"),
    ("inf", "not-a-number"), ("-0.1", "dust-out-of-range"), ("10.5", "dust-out-of-range"),
    ("0", "ok"),
]


def _bad_csv(tmp_path):
    rows = [(i, 15.0 * i, 5.0 * i - 20.0, 5800, 3.0, cell, "")
            for i, (cell, _) in enumerate(BAD_ROWS)]
    return _write_csv(tmp_path / "bad.csv", rows)


@pytest.mark.parametrize("magnitudes", [False, True])
def test_bad_dust_cells_get_a_status_and_no_row_is_dropped(tmp_path, capsys, magnitudes):
    # Expected statuses: the rules of docs/formats.md (blank, text, NaN/inf, E(B-V) outside
    # 0-10 mag: [Cardelli1989] section I, E(B-V) >= 0 by definition).
    out = tmp_path / "out.csv"
    extra = ["--magnitude-column", "vmag"] if magnitudes else []
    assert main(["catalogue", str(_bad_csv(tmp_path)), str(out), "--temperature-column",
                 "teff", "--ebv-column", "ebv", "--no-progress", *extra]) == 0
    summary = capsys.readouterr().out
    table = _read_csv(out)
    assert table["status"] == [s for _, s in BAD_ROWS]
    assert table["id"] == list(range(len(BAD_ROWS)))
    blank = np.array([s != "ok" for _, s in BAD_ROWS])
    assert np.all(np.isnan(_rgb(table)[blank])) and np.all(np.isfinite(_rgb(table)[~blank]))
    for status, count in (("ok", 2), ("missing-dust", 1), ("not-a-number", 3),
                          ("dust-out-of-range", 2)):
        assert any(line.split() == [status, str(count)] for line in summary.splitlines())


def test_plates_skip_and_count_bad_dust_rows(tmp_path):
    from starkiln.engine.exports.image_files import read_embedded_json

    out = tmp_path / "plate.png"
    assert main(["plate", str(_bad_csv(tmp_path)), str(out), "--temperature-column", "teff",
                 "--magnitude-column", "vmag", "--ebv-column", "ebv", "--size", "64"]) == 0
    counts = read_embedded_json(out)["counts"]
    assert counts["drawn"] == 2 and counts["render-flagged"] == len(BAD_ROWS) - 2


def test_the_dask_engine_carries_the_column(tmp_path):
    # Reference: the local engine's output for the same Parquet file.
    pytest.importorskip("distributed")
    import pyarrow.csv as pcsv
    import pyarrow.parquet as pq

    src = tmp_path / "bad.parquet"
    pq.write_table(pcsv.read_csv(_bad_csv(tmp_path), convert_options=pcsv.ConvertOptions(
        column_types={"ebv": "string", "av": "string"})), src)
    local, far = tmp_path / "local.parquet", tmp_path / "dask_out"
    base = ["--temperature-column", "teff", "--ebv-column", "ebv", "--no-progress"]
    assert main(["catalogue", str(src), str(local), *base]) == 0
    assert main(["catalogue", str(src), str(far), *base, "--engine", "dask",
                 "--workers", "1"]) == 0
    a = pq.read_table(local).to_pydict()
    b = pq.read_table(far).to_pydict()
    assert a["status"] == b["status"] == [s for _, s in BAD_ROWS]
    assert np.allclose(np.array(a["r"], dtype=float), np.array(b["r"], dtype=float),
                       equal_nan=True)
    assert b"starkiln_dust" in pq.read_schema(local).metadata


# -- command-line errors: exit 2, one line, nothing written --------------------------------------

@pytest.mark.parametrize("command, extra, word", [
    ("catalogue", ["--ebv-column", "ebv", "--ebv", "0.2"], "--ebv"),
    ("catalogue", ["--av-column", "av", "--av", "1"], "--av"),
    ("catalogue", ["--ebv-column", "ebv", "--av-column", "av"], "--av-column"),
    ("catalogue", ["--ebv-column", "absent"], "absent"),
    ("plate", ["--ebv-column", "ebv", "--ebv", "0.2"], "--ebv"),
    ("plate", ["--through-air"], "--site"),
    ("plate", ["--through-air", "--site", "52,5", "--time", "2026-03-20T22:00:00",
               "--altitude", "30"], "altitude"),
    ("plate", ["--through-air", "--site", "52,5,800", "--time", "2026-03-20T22:00:00",
               "--site-height", "100"], "--site-height"),
])
def test_cli_errors_exit_2_with_one_line(tmp_path, capsys, command, extra, word):
    src = _cluster_csv(tmp_path)
    out = tmp_path / ("out.csv" if command == "catalogue" else "plate.png")
    assert main([command, str(src), str(out), "--temperature-column", "teff",
                 "--magnitude-column", "vmag", *extra]) == 2
    assert _one_line_error(capsys, word)
    assert not out.exists()


# -- plates through the air --------------------------------------------------------------------

SITE = (52.0, 5.0, 800.0)
MOMENT = "2026-03-20T22:00:00"


def _radec_at(alt_az):
    """ICRS positions of (alt, az) directions over SITE at MOMENT (astropy, no refraction)."""
    import astropy.units as u
    from astropy.coordinates import AltAz, EarthLocation, SkyCoord
    from astropy.time import Time

    loc = EarthLocation.from_geodetic(lon=SITE[1] * u.deg, lat=SITE[0] * u.deg,
                                      height=SITE[2] * u.m)
    frame = AltAz(obstime=Time(MOMENT), location=loc, pressure=0 * u.hPa)
    alt, az = np.array(alt_az).T
    c = SkyCoord(alt=alt * u.deg, az=az * u.deg, frame=frame).transform_to("icrs")
    return c.ra.deg, c.dec.deg, frame


def test_lower_stars_are_fainter_by_the_atmospheres_extinction(tmp_path):
    # Each star's altitude from astropy's AltAz frame (computed here); its extinction from the
    # engine's atmosphere for that altitude at the site's height (render's extinction_mag,
    # [KastenYoung1989] airmass, [Bucholtz1995] Rayleigh); the plate's flux values must differ
    # by that much: flux = linear colour (largest channel 1) x 10^(-0.4 (V + extinction))
    # (Pogson's ratio, common practice), each star's Gaussian summing to its value.
    import OpenEXR

    ra, dec, frame = _radec_at([(75.0, 90.0), (12.0, 270.0)])
    rows = [(i, r, d, 6500, 2.0, 0.0, 0.0) for i, (r, d) in enumerate(zip(ra, dec))]
    src = _write_csv(tmp_path / "two.csv", rows)
    out = tmp_path / "air.exr"
    assert main(["plate", str(src), str(out), "--temperature-column", "teff",
                 "--magnitude-column", "vmag", "--values", "flux", "--size", "720",
                 "--site", ",".join(map(str, SITE)), "--time", MOMENT, "--through-air"]) == 0
    with OpenEXR.File(str(out)) as f:
        image = np.asarray(f.channels()["RGB"].pixels, dtype=np.float64)
    import astropy.units as u
    from astropy.coordinates import SkyCoord

    alt = SkyCoord(ra=ra * u.deg, dec=dec * u.deg).transform_to(frame).alt.deg
    ext = render(Settings(site_height_m=SITE[2]), 6500.0, 2.0, altitude_deg=alt).extinction_mag
    # The two stars lie in opposite halves of the plate (azimuth 90 and 270 degrees).
    w = image.shape[1]
    halves = [image[:, : w // 2].max(axis=2), image[:, w // 2:].max(axis=2)]
    sums = sorted((h.sum() for h in halves), reverse=True)
    expected = 10.0 ** (-0.4 * (2.0 + ext))
    assert ext[1] > ext[0] + 0.3  # near the horizon the air takes much more (common practice)
    assert sums[0] == pytest.approx(expected[0], rel=1e-4)
    assert sums[1] == pytest.approx(expected[1], rel=1e-4)
    assert sums[1] / sums[0] == pytest.approx(10.0 ** (-0.4 * (ext[1] - ext[0])), rel=1e-4)


def _outside_av(temperature_K, ebv):
    """A_V of a blackbody behind G23 dust: astropy's blackbody x dust-extinction's G23
    (R_V 3.1), through speclite's Bessell (1990) V response used as an energy response
    ([BessellMurphy2012] section 2)."""
    import astropy.units as u
    import speclite.filters
    from astropy.modeling.physical_models import BlackBody

    from starkiln.engine.catalogue.formats import astropy_guard

    wl = np.arange(470.0, 700.0, 0.25)
    response = speclite.filters.load_filter("bessell-V")(wl * u.nm)
    with astropy_guard():
        from dust_extinction.parameter_averages import G23

        bare = BlackBody(temperature_K * u.K, scale=1.0 * u.erg / (u.s * u.cm ** 2 * u.AA
                                                                   * u.sr))(wl * u.nm).value
        dimmed = bare * G23(Rv=3.1).extinguish(wl * u.nm, Ebv=ebv)
    return -2.5 * np.log10(np.trapezoid(dimmed * response, wl)
                           / np.trapezoid(bare * response, wl))


@pytest.mark.parametrize("how", ["fixed", "column"])
def test_flux_plates_are_dimmed_by_the_dust(tmp_path, how):
    # flux = linear colour (largest channel 1) x 10^(-0.4 (V + A_V)) (Pogson's ratio, common
    # practice), the star's Gaussian summing to its value; A_V from outside Starkiln
    # (_outside_av: astropy, dust-extinction, speclite) within 2e-3 mag. (One star: the run
    # is rendered exactly; the grid and lattice routes of big runs are checked in
    # tests/test_path_table.py.)
    import OpenEXR

    temperature, vmag, ebv = 7400.0, 3.3, 0.77
    src = _write_csv(tmp_path / "one.csv", [(0, 40.0, 10.0, temperature, vmag, ebv, 0.0)])
    out = tmp_path / "dust.exr"
    extra = {"fixed": ["--ebv", str(ebv)], "column": ["--ebv-column", "ebv"]}[how]
    assert main(["plate", str(src), str(out), "--temperature-column", "teff",
                 "--magnitude-column", "vmag", "--values", "flux", "--size", "360",
                 *extra]) == 0
    with OpenEXR.File(str(out)) as f:
        image = np.asarray(f.channels()["RGB"].pixels, dtype=np.float64)
    a_v = _outside_av(temperature, ebv)
    assert a_v == pytest.approx(3.1 * ebv, abs=0.15)  # A_V near R_V E(B-V) ([Cardelli1989])
    drawn = image.max(axis=2).sum()
    assert -2.5 * np.log10(drawn) == pytest.approx(vmag + a_v, abs=2e-3)


def test_below_horizon_stars_kept_are_drawn_without_air(tmp_path, capsys):
    # A star below the horizon (altitude -10 by astropy) kept with --below-horizon keep gets
    # render's colour without air (reference: render(T, V) with no path), not the horizon's
    # (render(..., altitude_deg=0)); it is counted apart. Display values: each channel of the
    # star's pixels sums to its encoded colour times its intensity (the Gaussian sums to 1).
    import OpenEXR

    from starkiln.engine.exports.image_files import read_embedded_json

    ra, dec, _ = _radec_at([(-10.0, 180.0)])
    src = _write_csv(tmp_path / "low.csv", [(0, ra[0], dec[0], 6500, 2.0, 0.0, 0.0)])
    out = tmp_path / "air.exr"
    assert main(["plate", str(src), str(out), "--temperature-column", "teff",
                 "--magnitude-column", "vmag", "--size", "360", "--site",
                 ",".join(map(str, SITE)), "--time", MOMENT, "--below-horizon", "keep",
                 "--through-air"]) == 0
    assert "drawn without air (below the horizon): 1" in capsys.readouterr().out
    with OpenEXR.File(str(out)) as f:
        drawn = np.asarray(f.channels()["RGB"].pixels, dtype=np.float64).sum(axis=(0, 1))
    plain = render(Settings(), 6500.0, 2.0)
    horizon = render(Settings(site_height_m=SITE[2]), 6500.0, 2.0, altitude_deg=0.0)
    assert np.allclose(drawn, plain.rgb_encoded * plain.intensity, rtol=1e-5, atol=1e-7)
    assert not np.allclose(drawn, horizon.rgb_encoded * horizon.intensity, rtol=1e-2)
    assert read_embedded_json(out)["counts"]["drawn without air (below the horizon)"] == 1


def test_plate_metadata_carries_the_dust_and_air_fields(tmp_path):
    # Read back by Pillow (PNG tEXt, [PNG] section 11.3.4.3) and by the OpenEXR package (the
    # header attribute), not by Starkiln's own reader.
    import json

    import OpenEXR
    from PIL import Image

    src = _cluster_csv(tmp_path)
    base = ["--temperature-column", "teff", "--magnitude-column", "vmag", "--ebv-column",
            "ebv", "--site", ",".join(map(str, SITE)), "--time", MOMENT, "--through-air",
            "--size", "64", "--aerosol-tau", "0.1"]
    png, exr = tmp_path / "p.png", tmp_path / "p.exr"
    assert main(["plate", str(src), str(png), *base]) == 0
    assert main(["plate", str(src), str(exr), *base]) == 0
    with Image.open(png) as im:
        from_png = json.loads(im.text["starkiln"])
    with OpenEXR.File(str(exr)) as f:
        header = f.header()["starkiln"]
    from_exr = json.loads(header.decode() if isinstance(header, bytes) else header)
    for meta in (from_png, from_exr):
        assert meta["columns"]["dust"] == "ebv" and meta["columns"]["dust_quantity"] == "ebv"
        assert meta["frame"]["through_air"] is True
        assert meta["frame"]["site"] == "52.0,5.0,800.0"
        assert meta["settings"]["site_height_m"] == 800.0
        assert meta["settings"]["aerosol_tau550"] == 0.1
    # --settings-from rebuilds the same plate from the metadata alone.
    again = tmp_path / "again.png"
    assert main(["plate", str(src), str(again), "--settings-from", str(png)]) == 0
    assert again.read_bytes() == png.read_bytes()


# -- plates of observed colours: --deredden --------------------------------------------------

def test_plate_deredden_draws_the_catalogues_colours_and_rebuilds(tmp_path, capsys):
    # One render path: the star's footprint in a display plate sums to the colour times the
    # intensity that `starkiln catalogue --deredden` writes for the same row (within 2e-6, the
    # float32 columns); that the dereddening itself is right is checked against speclite's
    # filters in tests/test_deredden.py. --settings-from OLD rebuilds the plate byte for byte
    # (OLD's settings hold no dust: the amount comes back from its columns' record).
    import OpenEXR
    from PIL import Image
    import json

    src = _write_csv(tmp_path / "obs.csv", [(0, 40.0, 10.0, 0.71, 3.3, 0.0, 0.0)],
                     header="id,ra,dec,bv,vmag,ebv,av")
    common = ["--bv-column", "bv", "--magnitude-column", "vmag", "--deredden", "--ebv", "0.5"]
    table_out = tmp_path / "obs_out.csv"
    assert main(["catalogue", str(src), str(table_out), "--no-progress", "--exact",
                 *common]) == 0
    row = _read_csv(table_out)
    expected = _rgb(row)[0] * row["intensity"][0]
    exr = tmp_path / "obs.exr"
    capsys.readouterr()
    assert main(["plate", str(src), str(exr), "--size", "360", *common]) == 0
    assert "dereddened: E(B-V) 0.5 (G23, R_V 3.1) removed" in capsys.readouterr().out
    with OpenEXR.File(str(exr)) as f:
        drawn = np.asarray(f.channels()["RGB"].pixels, dtype=np.float64).sum(axis=(0, 1))
    assert np.allclose(drawn, expected, atol=2e-6, rtol=0)
    png, again = tmp_path / "obs.png", tmp_path / "again.png"
    assert main(["plate", str(src), str(png), "--size", "360", *common]) == 0
    with Image.open(png) as im:
        meta = json.loads(im.text["starkiln"])
    assert meta["columns"]["deredden_ebv"] == 0.5 and meta["settings"]["dust_ebv"] == 0.0
    assert main(["plate", str(src), str(again), "--settings-from", str(png)]) == 0
    assert again.read_bytes() == png.read_bytes()


def test_plate_deredden_without_dust_exits_2(tmp_path, capsys):
    src = _write_csv(tmp_path / "obs.csv", [(0, 40.0, 10.0, 0.71, 3.3, 0.0, 0.0)],
                     header="id,ra,dec,bv,vmag,ebv,av")
    out = tmp_path / "obs.png"
    assert main(["plate", str(src), str(out), "--bv-column", "bv", "--deredden"]) == 2
    assert _one_line_error(capsys, "--deredden needs the dust")
    assert not out.exists()
