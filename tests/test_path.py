"""The path of the light (engine/path, the render path's dust and air, brightness from the
spectrum), each check against a source outside Starkiln, named beside it.
"""

from __future__ import annotations

import numpy as np
import pytest

from starkiln.engine.colour import photometry as ph
from starkiln.engine.errors import InputRangeError, SettingsError
from starkiln.engine.path import atmosphere as atm
from starkiln.engine.path import dust
from starkiln.engine.path.chain import has_path, path_transmission
from starkiln.engine.pipeline.render import render
from starkiln.engine.pipeline.settings import Settings, settings_from_toml, settings_to_toml

GRID = ph.PHOTOMETRY_GRID_NM


def _law(name, rv):
    from starkiln.engine.catalogue.formats import astropy_guard

    with astropy_guard():
        from dust_extinction import parameter_averages as pa

        return getattr(pa, name)(Rv=rv)


# -- dust: the laws through dust-extinction's own evaluation ([DustExtinction]) ----------------

@pytest.mark.parametrize("law", dust.DUST_LAWS)
def test_rv_ranges_are_the_packages(law):
    # [DustExtinction]: each class's Rv_range (G23 2.3-5.6 [Gordon2023]; F99, CCM89 2.0-6.0).
    from dust_extinction import parameter_averages as pa

    assert dust.rv_range(law) == tuple(float(v) for v in getattr(pa, law).Rv_range)


@pytest.mark.parametrize("law", dust.DUST_LAWS)
def test_both_grids_lie_inside_each_laws_range(law):
    # [DustExtinction] x_range (inverse microns): 300-1100 nm (photometry) and 360-830 nm
    # (colour) inside it, so the law is used as published everywhere Starkiln integrates.
    lo, hi = _law(law, 3.1).x_range
    assert lo < 1e3 / 1100.0 and 1e3 / 300.0 < hi


@pytest.mark.parametrize("law", dust.DUST_LAWS)
@pytest.mark.parametrize("rv", [2.5, 3.1, 5.0])
def test_law_and_transmission_are_dust_extinctions(law, rv):
    import astropy.units as u

    model = _law(law, rv)
    import warnings

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        ref = np.asarray(model(GRID * u.nm))
        # [DustExtinction] extinguish: 10^(-0.4 A(lambda)), A = R_V E(B-V) A/A_V.
        ref_t = np.asarray(model.extinguish(GRID * u.nm, Ebv=0.4))
    assert np.allclose(dust.dust_a_over_av(GRID, law, rv), ref, rtol=1e-12, atol=0)
    assert np.allclose(dust.dust_transmission(GRID, 0.4, law, rv), ref_t, rtol=1e-10, atol=0)
    # A(lambda)/A(V) = 1 at V, 550 nm, in the package's own evaluation: within 0.5 % for G23
    # and CCM89 (G23 gives 0.9985 there). dust-extinction's F99 crosses 1 a little bluer
    # (0.978 at 550 nm for R_V = 3.1, 1 near 541 nm): its V anchor is the V band's
    # effective wavelength, not 550 nm ([Fitzpatrick1999] section 2; from memory).
    at_v = float(np.asarray(model(550.0 * u.nm)))
    assert float(dust.dust_a_over_av([550.0], law, rv)[0]) == at_v
    assert at_v == pytest.approx(1.0, abs=5e-3 if law != "F99" else 3e-2)


def test_law_values_kept_on_disk_are_dust_extinctions(tmp_path, monkeypatch):
    # Reference: dust-extinction's own evaluation of F99 at R_V 3.3 ([DustExtinction]). The
    # values come back from the cache folder (a second process need not import it), and a
    # damaged file is evaluated again, never read as values.
    import astropy.units as u

    monkeypatch.setenv("STARKILN_CACHE_DIR", str(tmp_path))
    wl = np.arange(400.0, 700.0, 10.0)
    ref = np.asarray(_law("F99", 3.3)(wl * u.nm))
    dust._a_over_av_cached.cache_clear()
    try:
        assert np.allclose(dust.dust_a_over_av(wl, "F99", 3.3), ref, rtol=1e-12)
        (kept,) = tmp_path.glob("dust-law-*.npz")
        dust._a_over_av_cached.cache_clear()
        assert np.allclose(dust.dust_a_over_av(wl, "F99", 3.3), ref, rtol=1e-12)
        kept.write_bytes(b"not a zip")
        dust._a_over_av_cached.cache_clear()
        assert np.allclose(dust.dust_a_over_av(wl, "F99", 3.3), ref, rtol=1e-12)
    finally:
        dust._a_over_av_cached.cache_clear()


def test_wavelengths_outside_a_law_are_refused_with_its_range():
    with pytest.raises(InputRangeError, match="outside the range of dust law F99: accepted 100-3333 nm"):
        dust.dust_a_over_av([50.0], "F99", 3.1)


def test_reddened_blackbody_gives_back_the_excess_through_bessell_filters():
    # Synthetic photometry through speclite's Bessell B and V ([Speclite], [Bessell1990]),
    # evaluated by speclite itself: a hot blackbody (25 000-30 000 K, the early B stars
    # reddening is measured on) reddened by E(B-V) = 0.5 has B-V larger by 0.5 within 0.03 mag. The
    # broad-band excess depends on the spectrum's shape: it shrinks for cooler stars, whose
    # light in B sits further to the red (common practice; [Fitzpatrick1999] section 3).
    import astropy.units as u
    import speclite.filters

    from starkiln.engine.colour.spectrum import planck_radiance

    filters = speclite.filters.load_filters("bessell-B", "bessell-V")
    wl = np.arange(320.0, 1000.0, 1.0)
    unit = u.erg / (u.s * u.cm**2 * u.Angstrom)
    for law in dust.DUST_LAWS:
        excess = []
        for temperature in (4000.0, 7000.0, 10000.0, 25000.0, 30000.0):
            f = planck_radiance(temperature, wl)
            reddened = f * dust.dust_transmission(wl, 0.5, law, 3.1)
            b0, v0 = filters.get_ab_magnitudes(f * unit, wl * u.nm)[0]
            b1, v1 = filters.get_ab_magnitudes(reddened * unit, wl * u.nm)[0]
            excess.append((b1 - v1) - (b0 - v0))
        assert np.all(np.diff(excess) > 0), law
        assert np.allclose(excess[3:], 0.5, atol=0.03), (law, excess)


# -- the atmosphere -----------------------------------------------------------------------------

def test_rayleigh_optical_depth_at_550_nm_is_bucholtzs():
    # [Bucholtz1995] Table 5 / text: 0.0973 at 550 nm, US Standard Atmosphere at sea level.
    assert float(atm.rayleigh_optical_depth(550.0)) == pytest.approx(0.097, rel=0.01)
    # Pressure scaling: half the pressure, half the depth ([Bucholtz1995] eq. 5, tau ~ p).
    assert float(atm.rayleigh_optical_depth(550.0, 506.625)) == pytest.approx(
        0.5 * float(atm.rayleigh_optical_depth(550.0)), rel=1e-12)
    # The two coefficient sets join at 500 nm (within 0.1 %).
    lo, hi = atm.rayleigh_optical_depth(np.array([499.999, 500.0]))
    assert lo == pytest.approx(hi, rel=1e-3)


def test_airmass_is_one_at_the_zenith_and_about_38_at_the_horizon():
    # [KastenYoung1989]: 1.000 at 90 degrees; Table 2 gives 38.09 at the horizon (their
    # formula reaches 37.92 there, within 0.5 %); 2.0 near 30 degrees (1/sin 30; [KastenYoung1989]).
    assert float(atm.airmass_kasten_young(90.0)) == pytest.approx(1.0, abs=1e-3)
    assert float(atm.airmass_kasten_young(0.0)) == pytest.approx(38.09, rel=0.01)
    assert float(atm.airmass_kasten_young(30.0)) == pytest.approx(2.0, rel=5e-3)


def test_barometric_pressure_is_the_standard_atmospheres():
    # [USSA1976] Table I (from memory): 1013.25 hPa at 0 m, 540.48 hPa at 5000 m.
    assert float(atm.pressure_hPa_at_height(0.0)) == pytest.approx(1013.25, rel=1e-12)
    assert float(atm.pressure_hPa_at_height(5000.0)) == pytest.approx(540.48, rel=2e-3)


def test_v_band_extinction_of_a_clear_high_site():
    # From memory: a clear high observing site loses 0.12-0.2 mag per airmass in V.
    s = Settings(altitude_deg=90.0, site_height_m=2500.0, aerosol_tau550=0.05)
    k_v = float(render(s, 9500.0).extinction_mag)
    assert 0.12 <= k_v <= 0.2
    # Bouguer's law: at airmass 2 (30 degrees) twice the zenith's extinction, within the
    # small ozone-airmass and colour terms ([KastenYoung1989]; common practice).
    k_30 = float(render(s.replace(altitude_deg=30.0), 9500.0).extinction_mag)
    assert k_30 == pytest.approx(2.0 * k_v, rel=0.02)


def test_stars_near_the_horizon_are_yellower_and_fainter():
    # Common practice: near the horizon stars look yellower (lower correlated colour
    # temperature, CCT by colour-science's Ohno 2013 method, from CIE 1960 uv) and fainter.
    import colour

    s = Settings()
    alts = [90.0, 45.0, 20.0, 10.0, 5.0]
    r = render(s, 8000.0, 1.0, altitude_deg=alts)
    cct = [float(colour.temperature.uv_to_CCT(colour.xy_to_UCS_uv(xy), method="Ohno 2013")[0])
           for xy in r.xy]
    assert all(a > b for a, b in zip(cct, cct[1:]))
    assert cct[-1] < 0.8 * cct[0]
    assert np.all(np.diff(r.extinction_mag) > 0) and np.all(np.diff(r.intensity) < 0)
    # The night-vision model sees the arriving light: the faint star near the horizon keeps less
    # colour than at the zenith.
    assert r.saturation[-1] < r.saturation[0]


def test_reddening_moves_along_the_planckian_locus_toward_lower_temperature():
    # Common practice: the reddened colour moves along, not across, the locus toward lower
    # temperature. Direction of the shift in CIE 1960 uv against the locus tangent from
    # colour-science (CCT_to_uv, Ohno 2013), angle below 20 degrees.
    import colour

    for temperature in (5000.0, 10000.0, 25000.0):
        xy0 = render(Settings(), temperature).xy
        xy1 = render(Settings(dust_ebv=0.1), temperature).xy
        uv0, uv1 = colour.xy_to_UCS_uv(xy0), colour.xy_to_UCS_uv(xy1)
        shift = uv1 - uv0
        a = colour.temperature.CCT_to_uv(np.array([temperature, 0.0]), method="Ohno 2013")
        b = colour.temperature.CCT_to_uv(np.array([temperature * 0.97, 0.0]), method="Ohno 2013")
        tangent = b - a  # toward lower temperature
        cos = shift @ tangent / (np.linalg.norm(shift) * np.linalg.norm(tangent))
        assert np.degrees(np.arccos(cos)) < 20.0, temperature


# -- the render path ------------------------------------------------------------------------

def test_defaults_have_no_path_and_no_extinction():
    assert not has_path(Settings())
    r = render(Settings(), [3000.0, 6500.0], [1.0, 2.0])
    assert r.extinction_mag is None
    assert np.array_equal(path_transmission(Settings(), GRID), np.ones(GRID.size))


def test_a_unit_transmission_through_the_path_route_is_the_plain_render_bit_for_bit():
    # Regression guard: the per-star path route with E(B-V) = 0 (transmission exactly 1) must
    # give the no-path render value for value (the physics is checked above, against outside
    # references; this checks that the path adds nothing of its own).
    t = np.geomspace(1000.0, 40000.0, 37)
    m = np.linspace(-1.0, 6.0, 5)[:, None]
    for settings in (Settings(), Settings(display="dci-p3" if False else "rec2020"),
                     Settings(compensate=True)):
        plain = render(settings, t, m)
        routed = render(settings, t, m, dust_ebv=np.zeros(t.shape))
        assert np.array_equal(routed.rgb_linear, plain.rgb_linear)
        assert np.array_equal(routed.XYZ, plain.XYZ)
        assert np.array_equal(routed.intensity, plain.intensity)
        assert np.array_equal(routed.photopic_luminance_cd_m2, plain.photopic_luminance_cd_m2)
        assert np.all(routed.extinction_mag == 0.0)
        # Without magnitudes the plain render sums three colour-matching columns, the path
        # route one more (the V band): the same within the last bit of float64 rounding.
        assert np.allclose(render(settings, t, dust_ebv=0.0).rgb_linear,
                           render(settings, t).rgb_linear, rtol=0, atol=1e-15)


def test_per_star_values_agree_with_the_settings_fixed_path():
    t = np.array([3000.0, 6000.0, 12000.0, 6000.0])
    fixed = render(Settings(dust_ebv=0.3, altitude_deg=40.0), t, 2.0)
    per_star = render(Settings(), t, 2.0, dust_ebv=np.full(4, 0.3), altitude_deg=40.0)
    assert np.allclose(per_star.rgb_linear, fixed.rgb_linear, atol=1e-12)
    assert np.allclose(per_star.extinction_mag, fixed.extinction_mag, atol=1e-12)
    assert np.allclose(per_star.photopic_luminance_cd_m2, fixed.photopic_luminance_cd_m2,
                       rtol=1e-12)
    # Broadcasting: temperatures (1, W) x E(B-V) (H, 1).
    grid = render(Settings(), t[None, :], dust_ebv=np.array([[0.0], [0.3]]))
    assert grid.rgb_linear.shape == (2, 4, 3)
    assert np.allclose(grid.rgb_linear[1], render(Settings(dust_ebv=0.3), t).rgb_linear)


def test_extinction_mag_is_the_synthetic_v_difference():
    # Synthetic photometry of the emitted and arriving spectra through the V band, by the
    # photometry module's own magnitude function ([BessellMurphy2012] eq. 1); A_V of the dust
    # is close to R_V E(B-V) = 1.55 for E(B-V) = 0.5 ([Cardelli1989] eq. 1).
    from starkiln.engine.colour.spectrum import planck_radiance

    s = Settings(dust_ebv=0.5, altitude_deg=25.0, site_height_m=800.0)
    for temperature in (3500.0, 9000.0):
        f = planck_radiance(temperature, GRID)
        arriving = f * path_transmission(s, GRID)
        expected = (ph.synthetic_magnitude(GRID, arriving, "V")
                    - ph.synthetic_magnitude(GRID, f, "V"))
        assert float(render(s, temperature).extinction_mag) == pytest.approx(expected, abs=1e-9)
    a_v = float(render(Settings(dust_ebv=0.5), 9000.0).extinction_mag)
    assert a_v == pytest.approx(1.55, abs=0.05)


# -- brightness from the spectrum ([CIES010], CALSPEC Vega [Bohlin2020]) -----------------------

def _vega_calspec():
    from starkiln.engine.catalogue.formats import astropy_guard
    from starkiln.engine.colour import photometry_build as build

    try:
        with astropy_guard():
            return build.read_calspec("alpha_lyr_stis_011.fits")
    except ModuleNotFoundError:
        pytest.skip("pyphot (test extra, carries the CALSPEC files) is not installed")


def test_v_zero_point_reproduces_the_calspec_vega_illuminance():
    # Vega's CALSPEC spectrum ([Bohlin2020], read from the FITS file) through colour-science's
    # V(lambda) (CIE 1924, [CIES010]) with K_m = 683 lm/W: the illuminance of Vega outside the
    # air. The engine's illuminance for a star of Vega's colour (B-V = 0, the blackbody of that
    # synthetic colour) at V = 0.03 (Vega's V, common practice) agrees within 1 %.
    import colour

    wl, flux = _vega_calspec()
    v = colour.colorimetry.SDS_LEFS_PHOTOPIC["CIE 1924 Photopic Standard Observer"]
    keep = (wl >= 360.0) & (wl <= 830.0)
    v_on = np.interp(wl[keep], v.wavelengths, v.values)
    e_vega = 683.0 * np.trapezoid(flux[keep] * 1e-2 * v_on, wl[keep])  # W m^-2 nm^-1 * nm
    t_vega = float(ph.temperature_from_colour_index(0.0, "B-V"))
    s = Settings()
    from starkiln.engine.eye.vision import blur_spot_solid_angle_sr

    r = render(s, t_vega, 0.03)
    e_engine = float(r.photopic_luminance_cd_m2) * blur_spot_solid_angle_sr(s.blur_spot_arcmin)
    assert e_engine == pytest.approx(e_vega, rel=0.01)
    # The spectrum itself scaled to V = 0.03 gives Vega's own illuminance (the unit chain).
    from starkiln.engine.eye.brightness import illuminance_lux

    on_grid = ph.cached_arrays()["vega_flux_lambda"]
    assert float(illuminance_lux(GRID, on_grid, 0.03)) == pytest.approx(e_vega, rel=2e-3)


def test_a_red_star_is_brighter_to_the_eye_than_a_blue_one_of_the_same_v():
    # The V band is bluer than V(lambda) at its red edge ([Bessell1990] vs [CIES010]): at equal
    # V a cool star gives more lux. The measurement: up to about 13 % between the ends
    # of the range (common practice: a few to 15 %).
    r = render(Settings(), [2500.0, 30000.0], 0.0)
    ratio = r.photopic_luminance_cd_m2[0] / r.photopic_luminance_cd_m2[1]
    assert 1.03 < ratio < 1.2


def test_g_magnitudes_use_the_g_band():
    # A star of V = 5 is a star of G = 5 + (G - V), with G - V from its BP-RP by the published
    # relation ([Riello2021] Table C.2, coefficients from memory in engine/stars/gaia.py,
    # scatter 0.03 mag); the BP-RP here is the blackbody's own synthetic colour. Given as V or
    # as G, the star must send the same light to the eye within that scatter.
    from starkiln.engine.stars.gaia import g_minus_v

    for temperature in (4000.0, 6000.0, 9000.0, 15000.0):
        g_v = float(g_minus_v(float(ph.planck_colour_index(temperature, "BP-RP"))))
        v = render(Settings(), temperature, 5.0).photopic_luminance_cd_m2
        g = render(Settings(), temperature, 5.0 + g_v,
                   magnitude_band="G").photopic_luminance_cd_m2
        assert abs(2.5 * np.log10(float(g / v))) < 0.03, temperature
    with pytest.raises(InputRangeError, match="magnitude band 'R' unknown; accepted: V, G"):
        render(Settings(), 5000.0, 1.0, magnitude_band="R")


# -- settings and bad input -------------------------------------------------------------------

def test_format_1_files_read_with_the_path_at_its_defaults():
    old = settings_from_toml('starkiln_settings = 1\ngamut = "clip"\n')
    assert old == Settings(gamut="clip") and not has_path(old)
    with pytest.raises(SettingsError, match="'dust_ebv' is not part of settings format 1"):
        settings_from_toml("starkiln_settings = 1\ndust_ebv = 0.2\n")
    s = Settings(dust_ebv=0.25, dust_law="f99", dust_rv=2.2, altitude_deg=12.5,
                 site_height_m=1800.0, aerosol_tau550=0.2, angstrom_exponent=0.9, ozone_du=250.0)
    again = settings_from_toml(settings_to_toml(s))
    assert again == s and again.dust_law == "F99"


@pytest.mark.parametrize("change,message", [
    ({"dust_ebv": -0.1}, "dust_ebv -0.1 is outside the accepted range 0 <= E(B-V) <= 10 mag"),
    ({"dust_ebv": float("inf")}, "dust_ebv inf is not finite"),
    ({"dust_rv": 6.5}, "dust_rv 6.5 is outside the range of dust law G23: accepted 2.3 <= R_V <= 5.6"),
    ({"dust_law": "F99", "dust_rv": 1.5}, "accepted 2 <= R_V <= 6"),
    ({"dust_law": "Milky"}, "unknown dust_law 'Milky'; accepted: G23, F99, CCM89"),
    ({"altitude_deg": -1.0}, "altitude_deg -1 is outside the accepted range 0 (horizon) to 90"),
    ({"altitude_deg": 90.5}, "altitude_deg 90.5 is outside"),
    ({"site_height_m": 20000.0}, "site_height_m 20000 is outside"),
])
def test_bad_path_settings_are_one_line(change, message):
    with pytest.raises(SettingsError) as exc:
        Settings(**change)
    assert message in str(exc.value) and "\n" not in str(exc.value)


def test_bad_per_star_values_are_one_line():
    with pytest.raises(InputRangeError, match="dust_ebv -0.5 is outside"):
        render(Settings(), [5000.0, 6000.0], dust_ebv=[0.1, -0.5])
    with pytest.raises(InputRangeError, match="altitude_deg nan is outside"):
        render(Settings(), 5000.0, altitude_deg=np.nan)


# -- the command line -------------------------------------------------------------------------

@pytest.mark.parametrize("args,message", [
    (["--ebv", "-0.2"], "dust_ebv -0.2 is outside the accepted range 0 <= E(B-V) <= 10 mag"),
    (["--av", "-1"], "--av -1 is negative; accepted: A_V >= 0 mag"),
    (["--ebv", "nan"], "'nan' is not finite"),
    (["--rv", "9"], "accepted 2.3 <= R_V <= 5.6"),
    (["--av", "1", "--rv", "1.5", "--dust-law", "CCM89"], "accepted 2 <= R_V <= 6"),
    (["--dust-law", "LMC"], "unknown dust_law 'LMC'; accepted: G23, F99, CCM89"),
    (["--altitude", "-3"], "altitude_deg -3 is outside the accepted range 0 (horizon)"),
    (["--altitude", "95"], "altitude_deg 95 is outside"),
])
def test_cli_bad_path_values_exit_2_with_one_line(capsys, args, message):
    from starkiln.cli.main import main

    assert main(["colour", "--temperature", "6000", *args]) == 2
    err = capsys.readouterr().err.strip()
    assert message in err and len(err.splitlines()) == 1


def test_cli_json_reports_the_path_and_its_extinction(capsys):
    import json

    from starkiln.cli.main import main

    assert main(["colour", "--temperature", "9000", "--av", "0.62", "--altitude", "30",
                 "--site-height", "1200", "--magnitude", "2", "--json"]) == 0
    record = json.loads(capsys.readouterr().out)
    s = Settings(dust_ebv=0.62 / 3.1, altitude_deg=30.0, site_height_m=1200.0)
    # A_V = 0.62 is E(B-V) = 0.2 for R_V = 3.1 ([Cardelli1989] eq. 1).
    assert record["settings"]["dust_ebv"] == pytest.approx(0.2, rel=1e-12)
    assert record["settings"]["altitude_deg"] == 30.0
    assert record["extinction_mag"] == pytest.approx(float(render(s, 9000.0).extinction_mag),
                                                     abs=1e-6)
    assert main(["colour", "--temperature", "9000", "--json"]) == 0
    assert json.loads(capsys.readouterr().out)["extinction_mag"] is None


def test_texture_metadata_carries_the_path_and_rebuilds_it():
    # The texture's embedded settings (docs/formats.md, "Embedded metadata") hold the path, and
    # read back to the same settings (JSON, RFC 8259).
    import json

    from starkiln.engine.exports.texture_metadata import lut_metadata
    from starkiln.engine.exports.texture_spec import TextureSpec

    s = Settings(dust_ebv=0.2, dust_law="CCM89", altitude_deg=15.0, site_height_m=600.0)
    meta = json.loads(json.dumps(lut_metadata(s, TextureSpec(width=8, height=4))))
    assert meta["settings"]["starkiln_settings"] == 2
    assert meta["settings"]["dust_ebv"] == 0.2 and meta["settings"]["altitude_deg"] == 15.0
    assert Settings.from_dict(meta["settings"]) == s


def test_same_stars_in_another_target_keep_their_own_path():
    # A working-space copy of a render with per-star dust equals a direct render (the render
    # path's own contract, render.same_stars_in); two stars of one temperature behind different
    # dust stay different.
    from starkiln.engine.pipeline.render import same_stars_in

    t = np.array([6000.0, 6000.0, 9000.0])
    ebv = np.array([0.0, 0.8, 0.3])
    shown = render(Settings(), t, 2.0, dust_ebv=ebv)
    aces = Settings(display="acescg")
    direct = render(aces, t, 2.0, dust_ebv=ebv).rgb_linear
    assert np.allclose(same_stars_in(aces, shown), direct, atol=1e-12)
    assert not np.allclose(direct[0], direct[1])
