"""Plate projections checked against astropy.wcs and a direct vector computation.

Sources:
- CAR (plate carree) and ARC (zenithal equidistant): Calabretta & Greisen 2002, A&A 395, 1077,
  as implemented by WCSLIB through ``astropy.wcs``; the WCS is built for the same image
  (CRPIX at the image centre, CDELT1 < 0: east to the left, LONPOLE = 180: north up), and
  FITS pixels are 1-based with rows counting upwards, so ``x = p1 - 0.5`` and
  ``y = H + 0.5 - p2`` in the plate's convention (row 0 at the top, centres at i + 0.5).
- Cube faces: the gnomonic projection onto the face plane written out per face
  (a = right . v / forward . v, b = up . v / forward . v), from the layout documented in
  ``starkiln.engine.plates.projection``.
"""

from __future__ import annotations

import numpy as np
import pytest
from astropy.wcs import WCS

from starkiln.engine.errors import InputRangeError
from starkiln.engine.plates.projection import PlateSpec, fisheye_valid_pixels, project

RNG = np.random.default_rng(20261202)


def _random_sky(n):
    """Directions uniform on the sphere, degrees."""
    lon = RNG.uniform(0.0, 360.0, n)
    lat = np.degrees(np.arcsin(RNG.uniform(-1.0, 1.0, n)))
    return lon, lat


def _wcs(ctype, crval, crpix, cdelt):
    w = WCS(naxis=2)
    w.wcs.ctype = [f"RA---{ctype}", f"DEC--{ctype}"]
    w.wcs.crval = crval
    w.wcs.crpix = crpix
    w.wcs.cdelt = cdelt
    w.wcs.lonpole = 180.0
    w.wcs.set()
    return w


@pytest.mark.parametrize("centre_lon", [0.0, 100.0, 266.4, -45.0])
def test_equirect_matches_astropy_car(centre_lon):
    # Calabretta & Greisen 2002, CAR (section 5.2.3), via astropy.wcs (WCSLIB)
    height = 1024
    width = 2 * height
    spec = PlateSpec("equirect", width, height, centre_lon_deg=centre_lon)
    lon, lat = _random_sky(5000)
    # keep off the seam itself (centre + 180), where either edge is right
    seam_gap = np.abs(np.mod(lon - centre_lon, 360.0) - 180.0)
    lon, lat = lon[seam_gap > 1e-6], lat[seam_gap > 1e-6]
    w = _wcs("CAR", [centre_lon, 0.0], [width / 2 + 0.5, height / 2 + 0.5],
             [-360.0 / width, 180.0 / height])
    p1, p2 = w.all_world2pix(lon, lat, 1)
    x, y, face, inside = project(lon, lat, spec)
    assert np.all(inside) and np.all(face == 0)
    assert np.max(np.abs(x - (p1 - 0.5))) < 0.01
    assert np.max(np.abs(y - (height + 0.5 - p2))) < 0.01
    assert np.all((x >= 0) & (x < width) & (y >= 0) & (y <= height))


def test_equirect_orientation_and_seam():
    # seen from inside with north up, longitude increases to the left (common practice for
    # sky spheres and domes; FITS CDELT1 < 0); the seam is at centre + 180
    spec = PlateSpec("equirect", 720, 360, centre_lon_deg=30.0)
    x, y, _, _ = project([30.0, 31.0, 29.0, 210.0 - 1e-9, 210.0 + 1e-9], [0, 0, 0, 0, 0], spec)
    assert x[0] == pytest.approx(360.0)
    assert x[1] < x[0] < x[2]
    assert x[3] == pytest.approx(0.0, abs=1e-6) and x[4] == pytest.approx(720.0, abs=1e-6)
    _, y, _, _ = project([0, 0], [90.0, -90.0], spec)
    assert y.tolist() == [0.0, 360.0]


@pytest.mark.parametrize("size, fov, lon0, lat0, tilt", [
    (1024, 180.0, 0.0, 90.0, 0.0),      # zenith / pole centre
    (1024, 180.0, 83.6, 22.0, 0.0),
    (800, 220.0, 310.0, -35.0, 0.0),
    (1024, 180.0, 120.0, 90.0, 30.0),   # a dome tilted 30 degrees
    (512, 360.0, 15.0, 10.0, -12.5),
    (640, 60.0, 200.0, -60.0, 0.0),
])
def test_fisheye_matches_astropy_arc(size, fov, lon0, lat0, tilt):
    # Calabretta & Greisen 2002, ARC (section 5.1.4), via astropy.wcs (WCSLIB). The tilt moves
    # the centre along its meridian towards the image bottom: CRVAL2 = lat0 - tilt.
    spec = PlateSpec("fisheye", size, size, fov, lon0, lat0, tilt)
    lon, lat = _random_sky(5000)
    w = _wcs("ARC", [lon0, lat0 - tilt], [size / 2 + 0.5, size / 2 + 0.5],
             [-fov / size, fov / size])
    p1, p2 = w.all_world2pix(lon, lat, 1)
    x, y, _, inside = project(lon, lat, spec)
    # angular distance from the centre, independently (astropy's WCS centre direction)
    c_lon, c_lat = w.wcs.crval
    cos_d = (np.sin(np.radians(lat)) * np.sin(np.radians(c_lat)) + np.cos(np.radians(lat))
             * np.cos(np.radians(c_lat)) * np.cos(np.radians(lon - c_lon)))
    theta = np.degrees(np.arccos(np.clip(cos_d, -1, 1)))
    near = theta < 179.0            # ARC is singular at the antipode
    assert np.max(np.abs(x - (p1 - 0.5))[near]) < 0.01
    assert np.max(np.abs(y - (size + 0.5 - p2))[near]) < 0.01
    np.testing.assert_array_equal(inside[near], theta[near] <= fov / 2)


def test_fisheye_zenith_orientation():
    # centre at the pole: the image bottom points to longitude centre_lon (the dome's front),
    # east-handed longitude increases to the left (seen from inside)
    spec = PlateSpec("fisheye", 1000, 1000, centre_lon_deg=180.0)
    x, y, _, inside = project([180.0, 270.0, 0.0, 0.0], [0.0, 0.0, 0.0, 90.0], spec)
    assert inside.all()
    np.testing.assert_allclose(x, [500, 0, 500, 500], atol=1e-9)
    np.testing.assert_allclose(y, [1000, 500, 0, 500], atol=1e-9)


def test_fisheye_outside_circle_and_valid_pixels():
    spec = PlateSpec("fisheye", 64, 64)
    _, _, _, inside = project([0.0, 0.0], [-1.0, 1.0], spec)    # below / above the horizon
    assert inside.tolist() == [False, True]
    valid = fisheye_valid_pixels(spec)
    assert valid[32, 32] and not valid[0, 0]
    # area of the disc, pi r^2 with r = 32 px, to within the rim's pixel count (about 2 pi r)
    assert abs(valid.sum() - np.pi * 32 ** 2) < 2 * np.pi * 32


# Cube faces written out one by one, as documented: (forward, right, up) seen from inside.
_FACES = {
    0: (lambda v: v[0], lambda v: -v[1], lambda v: v[2]),    # +X
    1: (lambda v: -v[0], lambda v: v[1], lambda v: v[2]),    # -X
    2: (lambda v: v[1], lambda v: v[0], lambda v: v[2]),     # +Y
    3: (lambda v: -v[1], lambda v: -v[0], lambda v: v[2]),   # -Y
    4: (lambda v: v[2], lambda v: -v[1], lambda v: -v[0]),   # +Z
    5: (lambda v: -v[2], lambda v: -v[1], lambda v: v[0]),   # -Z
}


@pytest.mark.parametrize("centre_lon", [0.0, 47.0])
def test_cube_faces_match_direct_vector_computation(centre_lon):
    n = 256
    spec = PlateSpec("cube", n, n, centre_lon_deg=centre_lon)
    lon, lat = _random_sky(20000)
    x, y, face, inside = project(lon, lat, spec)
    assert inside.all()
    la, lo = np.radians(lat), np.radians(lon - centre_lon)
    v = np.array([np.cos(la) * np.cos(lo), np.cos(la) * np.sin(lo), np.sin(la)])
    for f, (fwd, right, up) in _FACES.items():
        # the face of a direction is the one it is most along (forward the largest component)
        others = [fwd2(v) for g, (fwd2, _, _) in _FACES.items() if g != f]
        mine = face == f
        assert mine.sum() > 2000
        assert np.all(fwd(v)[mine] >= np.max(others, axis=0)[mine] - 1e-12)
        a = right(v)[mine] / fwd(v)[mine]
        b = up(v)[mine] / fwd(v)[mine]
        np.testing.assert_allclose(x[mine], (a + 1) * n / 2, atol=1e-9)
        np.testing.assert_allclose(y[mine], (1 - b) * n / 2, atol=1e-9)
        assert np.all((x[mine] >= 0) & (x[mine] <= n) & (y[mine] >= 0) & (y[mine] <= n))


def test_cube_face_centres_and_seams():
    n = 100
    spec = PlateSpec("cube", n, n)
    lon = [0, 180, 90, 270, 0, 0]
    lat = [0, 0, 0, 0, 90, -90]
    x, y, face, _ = project(lon, lat, spec)
    assert face.tolist() == [0, 1, 2, 3, 4, 5]
    np.testing.assert_allclose(x, 50.0, atol=1e-9)
    np.testing.assert_allclose(y, 50.0, atol=1e-9)
    # the +Z face's bottom edge meets the +X face's top edge (lon 0, lat 45 is on that edge)
    x, y, face, _ = project([0.0, 0.0], [45.0 - 1e-7, 45.0 + 1e-7], spec)
    assert face.tolist() == [0, 4]
    np.testing.assert_allclose(y, [0.0, 100.0], atol=1e-4)
    np.testing.assert_allclose(x, [50.0, 50.0], atol=1e-4)


@pytest.mark.parametrize("kwargs", [
    dict(projection="mercator", width_px=10, height_px=10),
    dict(projection="equirect", width_px=300, height_px=100),
    dict(projection="fisheye", width_px=300, height_px=200),
    dict(projection="fisheye", width_px=0, height_px=0),
    dict(projection="fisheye", width_px=100, height_px=100, fov_deg=400.0),
    dict(projection="fisheye", width_px=100, height_px=100, fov_deg=float("nan")),
    dict(projection="cube", width_px=10.5, height_px=10.5),
    dict(projection="fisheye", width_px=100, height_px=100, centre_lat_deg=95.0),
])
def test_bad_specs_name_the_value(kwargs):
    with pytest.raises(InputRangeError) as info:
        PlateSpec(**kwargs)
    assert "\n" not in str(info.value) and "accepted" in str(info.value)
