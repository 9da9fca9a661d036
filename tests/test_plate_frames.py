"""The plate frames (``starkiln.engine.plates.frames``) against outside references.

Site and moment are invented (a fictional dome on a hill at 31.5 S, 115.25 E, 250 m).
"""

import numpy as np
import pytest

astropy = pytest.importorskip("astropy")
import astropy.units as u  # noqa: E402
from astropy.coordinates import AltAz, EarthLocation, SkyCoord  # noqa: E402

from starkiln.engine.errors import StarkilnError  # noqa: E402
from starkiln.engine.plates.frames import (Site, check_radec, parse_site,  # noqa: E402
                                           parse_time, plate_coordinates)

SITE = Site(-31.5, 115.25, 250.0)
TIME_TEXT = "2026-03-14T13:30:00"


def _stars(n=200, seed=13):
    rng = np.random.default_rng(seed)
    ra = rng.uniform(0, 360, n)
    dec = np.degrees(np.arcsin(rng.uniform(-1, 1, n)))
    return ra, dec


def test_altaz_matches_astropy_altaz_directly():
    # Reference: astropy.coordinates AltAz built here independently, pressure 0 (no refraction).
    ra, dec = _stars()
    t = parse_time(TIME_TEXT)
    az, alt, keep = plate_coordinates(ra, dec, site=SITE, time=t, below_horizon="keep")
    loc = EarthLocation.from_geodetic(115.25 * u.deg, -31.5 * u.deg, 250 * u.m)
    ref = SkyCoord(ra * u.deg, dec * u.deg).transform_to(AltAz(obstime=t, location=loc))
    d = SkyCoord(az * u.deg, alt * u.deg, frame="altaz").separation(
        SkyCoord(ref.az, ref.alt, frame="altaz"))
    assert np.max(d.arcsec) < 1e-3
    assert keep.all()


def test_altaz_matches_textbook_hour_angle_formula():
    # Reference: Meeus, Astronomical Algorithms (2nd ed. 1998) eq. 13.5 / 13.6, applied to
    # apparent (TETE) places and astropy's apparent sidereal time; agreement to 0.02 deg
    # (diurnal aberration and polar motion are below that, from memory).
    from astropy.coordinates import TETE

    ra, dec = _stars(50, seed=7)
    t = parse_time(TIME_TEXT)
    az, alt, _ = plate_coordinates(ra, dec, site=SITE, time=t, below_horizon="keep")
    loc = EarthLocation.from_geodetic(115.25 * u.deg, -31.5 * u.deg, 250 * u.m)
    app = SkyCoord(ra * u.deg, dec * u.deg).transform_to(TETE(obstime=t, location=loc))
    lst = t.sidereal_time("apparent", longitude=115.25 * u.deg).rad
    h = lst - app.ra.rad
    d = app.dec.rad
    phi = np.radians(-31.5)
    alt_ref = np.degrees(np.arcsin(np.sin(phi) * np.sin(d) + np.cos(phi) * np.cos(d) * np.cos(h)))
    # Meeus measures azimuth from south; +180 deg gives north-through-east.
    az_ref = np.degrees(np.arctan2(np.sin(h), np.cos(h) * np.sin(phi) - np.tan(d) * np.cos(phi))) + 180
    assert np.max(np.abs(alt - alt_ref)) < 0.02
    high = alt_ref < 85  # azimuth is ill-conditioned at the zenith
    daz = (az[high] - az_ref[high] + 180) % 360 - 180
    assert np.max(np.abs(daz * np.cos(np.radians(alt[high])))) < 0.02


def test_refraction_lifts_a_star_at_ten_degrees_as_bennett_says():
    # Reference: Bennett (1982), J. Inst. Navigation 35, 255: R = cot(h + 7.31/(h + 4.4))
    # arcmin at standard conditions; about 5.3' at an apparent altitude of 10 deg.
    t = parse_time(TIME_TEXT)
    loc = EarthLocation.from_geodetic(115.25 * u.deg, -31.5 * u.deg, 250 * u.m)
    target = SkyCoord(az=120 * u.deg, alt=10 * u.deg, frame=AltAz(obstime=t, location=loc))
    icrs = target.transform_to("icrs")
    _, geometric, _ = plate_coordinates(np.array([icrs.ra.deg]), np.array([icrs.dec.deg]),
                                        site=SITE, time=t)
    _, apparent, _ = plate_coordinates(np.array([icrs.ra.deg]), np.array([icrs.dec.deg]),
                                       site=SITE, time=t, refraction=True)
    h = apparent[0]
    bennett_arcmin = 1.0 / np.tan(np.radians(h + 7.31 / (h + 4.4)))
    assert abs((apparent[0] - geometric[0]) * 60 - bennett_arcmin) < 0.5


def test_below_horizon_drop_and_keep():
    ra, dec = _stars()
    t = parse_time(TIME_TEXT)
    _, alt, keep = plate_coordinates(ra, dec, site=SITE, time=t)
    assert np.array_equal(keep, alt >= 0)
    assert 0 < keep.sum() < len(ra)  # half the sky is always below a horizon
    _, _, keep_all = plate_coordinates(ra, dec, site=SITE, time=t, below_horizon="keep")
    assert keep_all.all()


def test_equatorial_frame_passes_radec_through():
    ra, dec = _stars(10)
    lon, lat, keep = plate_coordinates(ra, dec)
    assert np.array_equal(lon, ra) and np.array_equal(lat, dec) and keep.all()


def test_time_offsets_convert_to_utc():
    # ISO 8601: +08:00 means eight hours ahead of UTC.
    assert parse_time("2026-03-14T21:30:00+08:00").isot.startswith("2026-03-14T13:30:00")


@pytest.mark.parametrize("text", ["1,2,3,4", "abc,2", "95,10", "10,400", "10,10,99999", "nan,1"])
def test_bad_sites_are_refused_with_one_line(text):
    with pytest.raises(StarkilnError) as e:
        parse_site(text)
    assert "\n" not in str(e.value) and "--site" in str(e.value)


def test_site_round_trips_and_bad_time_refused():
    assert parse_site(SITE.text()) == SITE
    assert parse_site("10,20") == Site(10.0, 20.0, 0.0)
    with pytest.raises(StarkilnError, match="--time"):
        parse_time("yesterday evening")


def test_check_radec_counts_reasons():
    ra = np.array([10.0, np.nan, 400.0, 20.0, -1.0, 30.0])
    dec = np.array([0.0, 5.0, 0.0, 95.0, 0.0, -90.0])
    ok, reasons = check_radec(ra, dec)
    assert ok.tolist() == [True, False, False, False, False, True]
    assert reasons == {"missing RA/Dec": 1, "RA outside 0-360": 2, "Dec outside -90..90": 1}
