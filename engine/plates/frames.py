"""Frames for star plates: the fixed equatorial sphere, or the sky over a site at a moment.

:func:`parse_site` and :func:`parse_time` check ``--site LAT,LON[,HEIGHT_M]`` and
``--time ISO-8601``; :func:`plate_coordinates` turns ICRS right ascension and declination
(degrees) into the longitude / latitude pair that the projection takes: RA/Dec unchanged
for ``equatorial``, azimuth / altitude for a site (astropy's ICRS -> AltAz transform;
refraction off by default, pressure 0, as astropy documents for ``AltAz``).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from starkiln.engine.errors import StarkilnError

FRAMES = ("equatorial", "horizon")
BELOW_HORIZON = ("drop", "keep")
#: Standard sea-level pressure, hPa, used when refraction is asked for (ISO 2533, common practice).
STANDARD_PRESSURE_HPA = 1013.25


@dataclass(frozen=True)
class Site:
    """An observing site: geodetic latitude and longitude (degrees, east positive) and
    height above the WGS84 ellipsoid (metres)."""

    lat_deg: float
    lon_deg: float
    height_m: float = 0.0

    def text(self) -> str:
        """The site as ``--site`` takes it (round-trips through :func:`parse_site`)."""
        return f"{self.lat_deg!r},{self.lon_deg!r},{self.height_m!r}"


def parse_site(text: str) -> Site:
    """Read ``LAT,LON[,HEIGHT_M]`` (degrees, east-positive longitude, metres).

    Parameters
    ----------
    text : str
        For example ``"-31.5,115.25,250"`` (an invented site).

    Returns
    -------
    Site

    Raises
    ------
    StarkilnError
        Not two or three numbers, latitude outside -90..90, longitude outside -180..360,
        or a height outside -500..10000 m.

    References
    ----------
    WGS84 geodetic coordinates as astropy's ``EarthLocation.from_geodetic`` takes them.
    """
    parts = [p.strip() for p in str(text).split(",")]
    accepted = "accepted: LAT,LON[,HEIGHT_M] in degrees and metres, e.g. -31.5,115.25,250"
    if len(parts) not in (2, 3):
        raise StarkilnError(f"--site {text!r} is not LAT,LON[,HEIGHT_M]; {accepted}")
    try:
        values = [float(p) for p in parts]
    except ValueError:
        raise StarkilnError(f"--site {text!r} has a value that is not a number; "
                            f"{accepted}") from None
    if not all(math.isfinite(v) for v in values):
        raise StarkilnError(f"--site {text!r} has a value that is not finite; {accepted}")
    lat, lon = values[0], values[1]
    height = values[2] if len(values) == 3 else 0.0
    if not -90.0 <= lat <= 90.0:
        raise StarkilnError(f"--site latitude {lat:g} is outside -90..90 degrees; {accepted}")
    if not -180.0 <= lon <= 360.0:
        raise StarkilnError(f"--site longitude {lon:g} is outside -180..360 degrees; {accepted}")
    if not -500.0 <= height <= 10000.0:
        raise StarkilnError(f"--site height {height:g} m is outside -500..10000 m; {accepted}")
    return Site(lat, lon, height)


def parse_time(text: str):
    """Read ``--time`` as an ISO-8601 moment (UTC unless it carries an offset).

    Parameters
    ----------
    text : str
        For example ``"2031-03-14T21:30:00"``.

    Returns
    -------
    astropy.time.Time
        In the UTC scale.

    Raises
    ------
    StarkilnError
        Text astropy's ISO / ISOT parser does not read.

    References
    ----------
    ISO 8601; astropy.time formats ``isot`` and ``iso``.
    """
    import datetime

    from starkiln.engine.catalogue.formats import astropy_guard

    with astropy_guard():  # a stand-in matplotlib left by colour-science breaks astropy's probe
        from astropy.time import Time

    raw = str(text).strip()
    accepted = "accepted: an ISO-8601 date and time, e.g. 2031-03-14T21:30:00 or 2031-03-14T21:30:00+08:00"
    try:
        moment = datetime.datetime.fromisoformat(raw.replace("Z", "+00:00"))
    except ValueError:
        raise StarkilnError(f"--time {text!r} is not an ISO-8601 moment; {accepted}") from None
    if moment.tzinfo is not None:
        moment = moment.astimezone(datetime.timezone.utc).replace(tzinfo=None)
    return Time(moment, scale="utc")


def check_radec(ra_deg, dec_deg):
    """Which rows carry a usable ICRS position, and why the others do not.

    Parameters
    ----------
    ra_deg, dec_deg : array_like of float
        Right ascension and declination, degrees (NaN for missing or non-numeric cells).

    Returns
    -------
    ok : ndarray of bool
    reasons : dict of str -> int
        Rows skipped per reason: ``missing RA/Dec``, ``RA outside 0-360``,
        ``Dec outside -90..90`` (each row counted once, first reason first).

    References
    ----------
    ICRS ranges, IAU 1997 Resolution B2 (common practice: RA in [0, 360), Dec in [-90, 90]).
    """
    ra = np.asarray(ra_deg, dtype=float)
    dec = np.asarray(dec_deg, dtype=float)
    missing = ~(np.isfinite(ra) & np.isfinite(dec))
    with np.errstate(invalid="ignore"):
        bad_ra = ~missing & ((ra < 0.0) | (ra > 360.0))
        bad_dec = ~missing & ~bad_ra & ((dec < -90.0) | (dec > 90.0))
    ok = ~(missing | bad_ra | bad_dec)
    reasons = {"missing RA/Dec": int(missing.sum()), "RA outside 0-360": int(bad_ra.sum()),
               "Dec outside -90..90": int(bad_dec.sum())}
    return ok, reasons


def plate_coordinates(ra_deg, dec_deg, *, site: Site | None = None, time=None,
                      refraction: bool = False, below_horizon: str = "drop"):
    """Longitude / latitude (degrees) for the projection, and which stars to keep.

    Parameters
    ----------
    ra_deg, dec_deg : ndarray of float
        ICRS right ascension and declination, degrees (already checked).
    site : Site, optional
        None: the equatorial frame (RA/Dec returned unchanged, all kept).
    time : astropy.time.Time, optional
        Needed with ``site``.
    refraction : bool
        False (default): pressure 0, geometric positions. True: astropy's refraction model
        at :data:`STANDARD_PRESSURE_HPA`, 10 degC, 0 % humidity, 0.55 um.
    below_horizon : {"drop", "keep"}
        For a site: drop stars with altitude < 0, or keep them.

    Returns
    -------
    lon_deg : ndarray
        RA, or azimuth (north through east, astropy's convention).
    lat_deg : ndarray
        Dec, or altitude.
    keep : ndarray of bool

    References
    ----------
    astropy.coordinates ``SkyCoord(...).transform_to(AltAz(...))`` (IAU SOFA/ERFA models).
    """
    ra = np.asarray(ra_deg, dtype=float)
    dec = np.asarray(dec_deg, dtype=float)
    if below_horizon not in BELOW_HORIZON:
        raise StarkilnError(f"--below-horizon {below_horizon!r} unknown; accepted: drop, keep")
    if site is None:
        return ra, dec, np.ones(ra.shape, dtype=bool)
    if time is None:
        raise StarkilnError("--site needs --time (an ISO-8601 moment)")
    from starkiln.engine.catalogue.formats import astropy_guard

    with astropy_guard():
        import astropy.units as u
        from astropy.coordinates import AltAz, EarthLocation, SkyCoord

    location = EarthLocation.from_geodetic(lon=site.lon_deg * u.deg, lat=site.lat_deg * u.deg,
                                           height=site.height_m * u.m)
    extra = {}
    if refraction:
        extra = dict(pressure=STANDARD_PRESSURE_HPA * u.hPa, temperature=10 * u.deg_C,
                     relative_humidity=0.0, obswl=0.55 * u.micron)
    else:
        extra = dict(pressure=0 * u.hPa)
    frame = AltAz(obstime=time, location=location, **extra)
    altaz = SkyCoord(ra=ra * u.deg, dec=dec * u.deg, frame="icrs").transform_to(frame)
    az = np.asarray(altaz.az.deg, dtype=float)
    alt = np.asarray(altaz.alt.deg, dtype=float)
    keep = np.ones(ra.shape, dtype=bool) if below_horizon == "keep" else alt >= 0.0
    return az, alt, keep
