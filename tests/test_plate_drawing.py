"""Drawing stars on plates: energy kept, colour kept, the pixel integral right.

Sources:
- The pixel-integrated Gaussian: the normal distribution function of ``scipy.stats.norm``
  (a reference library), and for one pixel a direct numerical double integral of the 2-D
  Gaussian density with ``scipy.integrate.dblquad``.
- Flux and colour conservation: the definition of an energy-conserving point-spread function
  (the weights of a star sum to one), checked to 1e-6 relative as issue 13 asks.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import integrate, stats

from starkiln.engine.errors import InputRangeError
from starkiln.engine.plates.drawing import deposit, footprint_half_width, kept_fraction
from starkiln.engine.plates.projection import PlateSpec, fisheye_valid_pixels, project

RNG = np.random.default_rng(13)


def _one(shape, x, y, value, sigma, **kwargs):
    image = np.zeros(shape)
    deposit(image, [x], [y], np.asarray([value], float), sigma, **kwargs)
    return image


def test_pixels_are_the_gaussian_integrated_over_them():
    # reference: scipy.stats.norm.cdf differences (per axis, the Gaussian is separable),
    # renormalised over the 4-sigma footprint, and one pixel by scipy.integrate.dblquad
    x, y, sigma = 20.37, 11.81, 0.7
    image = _one((24, 40, 1), x, y, [1.0], sigma)
    k = int(footprint_half_width(sigma))
    cols = np.arange(int(x) - k, int(x) + k + 1)
    rows = np.arange(int(y) - k, int(y) + k + 1)
    px = stats.norm.cdf(cols + 1, x, sigma) - stats.norm.cdf(cols, x, sigma)
    py = stats.norm.cdf(rows + 1, y, sigma) - stats.norm.cdf(rows, y, sigma)
    expected = np.outer(py / py.sum(), px / px.sum())
    np.testing.assert_allclose(image[rows[0]:rows[-1] + 1, cols[0]:cols[-1] + 1, 0], expected,
                               rtol=1e-10, atol=1e-15)
    assert image.sum() == pytest.approx(1.0, rel=1e-12)
    density = lambda v, u: np.exp(-((u - x) ** 2 + (v - y) ** 2) / (2 * sigma ** 2)) / (
        2 * np.pi * sigma ** 2)
    raw, _ = integrate.dblquad(density, 21, 22, 11, 12, epsabs=1e-13)   # column 21, row 11
    assert image[11, 21, 0] == pytest.approx(raw / (py.sum() * px.sum()), rel=1e-8)


@pytest.mark.parametrize("sigma", [0.25, 0.7, 2.3])
def test_float32_plates_match_the_pixel_integral_to_float32_precision(sigma):
    # a float32 plate's weights (erf from an interpolated table) against scipy.stats.norm.cdf
    # differences in float64, renormalised over the footprint: within 3e-7 of the star's
    # value per pixel (a few float32 roundings of numbers below 1)
    k = int(footprint_half_width(sigma))
    x = RNG.uniform(k + 1, 200 - k - 1, 40)
    y = RNG.uniform(k + 1, 60 - k - 1, 40)
    for xi, yi in zip(x, y):
        image = np.zeros((64, 200, 1), np.float32)
        deposit(image, [xi], [yi], np.ones((1, 1), np.float32), sigma)
        cols = np.arange(int(xi) - k, int(xi) + k + 1)
        rows = np.arange(int(yi) - k, int(yi) + k + 1)
        px = stats.norm.cdf(cols + 1, xi, sigma) - stats.norm.cdf(cols, xi, sigma)
        py = stats.norm.cdf(rows + 1, yi, sigma) - stats.norm.cdf(rows, yi, sigma)
        expected = np.outer(py / py.sum(), px / px.sum())
        got = image[rows[0]:rows[-1] + 1, cols[0]:cols[-1] + 1, 0]
        np.testing.assert_allclose(got, expected, rtol=0, atol=3e-7)
        assert image.sum(dtype=float) == pytest.approx(1.0, rel=1e-6)


@pytest.mark.parametrize("sigma", [0.3, 0.7, 1.6, 4.0])
def test_isolated_stars_keep_flux_and_colour(sigma):
    # energy-conserving PSF: each footprint sums to the star's value (1e-6 relative) and,
    # divided by its sum, equals the value vector divided by its sum (the colour)
    image = np.zeros((200, 400, 3))
    gx, gy = np.meshgrid(np.arange(30, 370, 60.0), np.arange(30, 200, 60.0))
    x = gx.ravel() + RNG.uniform(-0.5, 0.5, gx.size)
    y = gy.ravel() + RNG.uniform(-0.5, 0.5, gy.size)
    values = RNG.uniform(0.01, 5.0, (x.size, 3))
    deposit(image, x, y, values, sigma)
    half = 29
    for (cx, cy), value in zip(zip(gx.ravel().astype(int), gy.ravel().astype(int)), values):
        patch = image[cy - half:cy + half, cx - half:cx + half].reshape(-1, 3)
        np.testing.assert_allclose(patch.sum(axis=0), value, rtol=1e-6)
        lit = patch.sum(axis=1) > 1e-12 * value.sum()
        np.testing.assert_allclose(patch[lit] / patch[lit].sum(axis=1, keepdims=True),
                                   np.broadcast_to(value / value.sum(), patch[lit].shape),
                                   rtol=1e-6)
    assert image.sum() == pytest.approx(values.sum(), rel=1e-9)


def test_vectorised_equals_stars_one_at_a_time():
    # linearity: one call with many stars (and two footprint sizes) equals the sum of single calls
    shape = (64, 128, 3)
    x = RNG.uniform(0, 128, 300)
    y = RNG.uniform(0, 64, 300)
    values = RNG.uniform(0, 1, (300, 3))
    sigma = np.where(np.arange(300) % 2, 0.7, 1.9)
    together = np.zeros(shape)
    deposit(together, x, y, values, sigma, wrap_x=True)
    single = np.zeros(shape)
    for i in range(300):
        deposit(single, x[i:i + 1], y[i:i + 1], values[i:i + 1], sigma[i], wrap_x=True)
    np.testing.assert_allclose(together, single, rtol=1e-12, atol=1e-15)


@pytest.mark.parametrize("dtype", [np.float64, np.float32])
@pytest.mark.parametrize("x, y", [(0.1, 50.0), (255.95, 70.3), (128.0, 0.2), (3.0, 127.9),
                                  (255.99, 0.01)])
def test_equirect_seam_and_poles_keep_flux(x, y, dtype):
    # across the CAR seam the footprint wraps; over a pole it folds half-way round; a float32
    # plate (weights and sums in float32) keeps the flux within 1e-6 too
    value = [2.0, 1.0, 0.5]
    image = np.zeros((128, 256, 3), dtype)
    deposit(image, [x], [y], np.asarray([value], dtype), 0.9, wrap_x=True)
    np.testing.assert_allclose(image.reshape(-1, 3).sum(axis=0, dtype=float), value, rtol=1e-6)
    if x < 1 or x > 255:
        assert image[:, :2].sum() > 0 and image[:, -2:].sum() > 0      # both sides of the seam
    if y < 1:
        assert image[0, (int(x) + 128) % 256].sum() > 0                # over the pole


def test_equirect_star_projected_on_the_seam():
    spec = PlateSpec("equirect", 512, 256, centre_lon_deg=0.0)
    x, y, _, _ = project([180.0 + 1e-4], [12.0], spec)
    image = np.zeros((256, 512, 1))
    deposit(image, x, y, [[1.0]], 0.7, wrap_x=True)
    assert image.sum() == pytest.approx(1.0, rel=1e-6)
    assert image[:, 0].sum() > 0.2 and image[:, -1].sum() > 0.2


def test_fisheye_rim_keeps_flux_inside_the_circle():
    spec = PlateSpec("fisheye", 128, 128)
    valid = fisheye_valid_pixels(spec)
    lon = np.array([0.0, 90.0, 200.0, 333.0])
    lat = np.array([0.2, 0.05, 0.5, 0.01])            # just above the horizon: on the rim
    x, y, _, inside = project(lon, lat, spec)
    assert inside.all()
    for i in range(lon.size):
        for dtype in (np.float64, np.float32):
            image = np.zeros((128, 128, 3), dtype)
            deposit(image, x[i:i + 1], y[i:i + 1], [[1.0, 2.0, 3.0]], 1.2, valid=valid)
            np.testing.assert_allclose(image.reshape(-1, 3).sum(axis=0, dtype=float), [1, 2, 3],
                                       rtol=1e-6)
            assert image[~valid].sum() == 0.0                         # black outside
    # without the mask, part of a star on the diagonal rim lands outside the circle
    x, y, _, _ = project([45.0], [0.1], spec)
    image = np.zeros((128, 128, 1))
    deposit(image, x, y, [[1.0]], 1.2)
    assert image[~valid].sum() > 0


def test_clipped_edges_report_the_loss():
    # a plain image (no wrap, no mask) drops what is off it; kept_fraction gives what stays
    # (reference: scipy.stats.norm.cdf over the image, renormalised footprint)
    n, sigma = 32, 0.8
    x, y = np.array([0.3, 16.0, 31.9]), np.array([16.2, 0.6, 31.5])
    kept = kept_fraction(x, y, sigma, n, n)
    for i in range(3):
        image = _one((n, n, 3), x[i], y[i], [1.0, 1.0, 1.0], sigma)
        assert image.sum() / 3 == pytest.approx(kept[i], rel=1e-9)
        k = int(footprint_half_width(sigma))
        frac = 1.0
        for pos in (x[i], y[i]):
            a, b = np.floor(pos) - k, np.floor(pos) + k + 1
            full = stats.norm.cdf(b, pos, sigma) - stats.norm.cdf(a, pos, sigma)
            on = stats.norm.cdf(min(b, n), pos, sigma) - stats.norm.cdf(max(a, 0), pos, sigma)
            frac *= on / full
        assert kept[i] == pytest.approx(frac, rel=1e-9)
    assert np.all(kept < 1)


def _near_cube_edges(n_stars, size):
    """Random stars on every face, within 2.5 px of an edge (corners included)."""
    face = RNG.integers(0, 6, n_stars)
    x = RNG.uniform(0, size, n_stars)
    y = RNG.uniform(0, size, n_stars)
    edge = RNG.integers(0, 4, n_stars)
    near = RNG.uniform(0.0, 2.5, n_stars)
    x = np.where(edge == 0, near, np.where(edge == 1, size - near, x))
    y = np.where(edge == 2, near, np.where(edge == 3, size - near, y))
    corner = RNG.uniform(size=n_stars) < 0.25
    y = np.where(corner & (edge < 2), RNG.choice([0.3, size - 0.3], n_stars), y)
    return x, y, face


@pytest.mark.parametrize("dtype, sigma", [(np.float64, 0.7), (np.float64, 1.9),
                                          (np.float32, 0.7)])
def test_cube_footprints_spill_over_edges_keeping_flux(dtype, sigma):
    # flux conservation (issue 13, 1e-6 relative) across cube edges and corners: the part of
    # a footprint off its face lands on the neighbouring faces
    size = 24
    x, y, face = _near_cube_edges(60, size)
    values = RNG.uniform(0.1, 3.0, (60, 3))
    together = np.zeros((6, size, size, 3), dtype)
    deposit(together, x, y, values, sigma, face=face)
    spilled = 0
    for i in range(60):
        image = np.zeros((6, size, size, 3), dtype)
        deposit(image, x[i:i + 1], y[i:i + 1], values[i:i + 1], sigma, face=face[i:i + 1])
        np.testing.assert_allclose(image.reshape(-1, 3).sum(axis=0, dtype=float), values[i],
                                   rtol=1e-6)
        on_other_faces = np.delete(image, face[i], axis=0).sum()
        spilled += on_other_faces > 1e-3 * values[i].sum()
    assert spilled > 40                                   # most of them reach a neighbour
    np.testing.assert_allclose(together.reshape(-1, 3).sum(axis=0, dtype=float),
                               values.sum(axis=0), rtol=1e-6)


def _side_face_wcs(lon_deg, size):
    # a cube side face is a gnomonic (TAN) view, east left, pole up, 90 degrees across:
    # Calabretta & Greisen 2002 section 5.1.3, intermediate x = (180/pi) tan, via astropy.wcs
    # [Astropy2022] (WCSLIB)
    from astropy.wcs import WCS

    w = WCS(naxis=2)
    w.wcs.ctype = ["RA---TAN", "DEC--TAN"]
    w.wcs.crval = [lon_deg, 0.0]
    w.wcs.crpix = [size / 2 + 0.5, size / 2 + 0.5]
    scale = np.degrees(2.0 / size)
    w.wcs.cdelt = [-scale, scale]
    return w


@pytest.mark.parametrize("x_px, y_px", [(63.6, 20.3), (63.95, 40.0), (63.2, 63.7)])
def test_cube_spill_lands_where_astropy_puts_those_directions(x_px, y_px):
    # A star near the right edge of the +X face (longitude 0) spills onto -Y (longitude 270,
    # the face to its right seen from inside). Reference: astropy.wcs TAN for both faces
    # turns every lit pixel centre into a direction; the light-weighted mean direction is the
    # star's within 0.71 px (each spilled weight moves at most half a pixel diagonal).
    from astropy.coordinates import SkyCoord

    size, sigma = 64, 0.9
    image = np.zeros((6, size, size, 1))
    deposit(image, [x_px], [y_px], [[1.0]], sigma, face=[0])
    wcs = {0: _side_face_wcs(0.0, size), 3: _side_face_wcs(270.0, size)}
    star = SkyCoord(*wcs[0].wcs_pix2world([[x_px + 0.5, size + 0.5 - y_px]], 1)[0],
                    unit="deg")
    assert image[3].sum() > 0.05                         # the spill reached -Y
    total = np.zeros(3)
    for f, w in wcs.items():
        rows, cols = np.nonzero(image[f, :, :, 0])
        lit = image[f, rows, cols, 0]
        lon, lat = w.wcs_pix2world(cols + 1.0, size - rows + 0.0, 1)   # pixel centres
        c = SkyCoord(lon, lat, unit="deg").cartesian.xyz.value
        total += (c * lit).sum(axis=1)
        # no lit pixel is farther from the star than the footprint reaches
        sep_px = star.separation(SkyCoord(lon, lat, unit="deg")).rad * size / 2
        assert sep_px.max() < (footprint_half_width(sigma) + 1) * np.sqrt(2) + 0.71
    assert image.sum() - image[[0, 3]].sum() < 1e-12 or y_px > 63   # only the corner reaches +Z/-Z
    mean = SkyCoord(*total, representation_type="cartesian")
    assert star.separation(mean).rad * size / 2 < 0.71


@pytest.mark.parametrize("bad", [
    dict(values=np.ones((2, 2))),
    dict(sigma_px=0.0),
    dict(sigma_px=float("nan")),
    dict(image=np.zeros((8, 8, 3))[:, ::2]),
])
def test_bad_input_is_one_line(bad):
    args = dict(image=np.zeros((8, 8, 3)), x_px=[1.0, 2.0], y_px=[1.0, 2.0],
                values=np.ones((2, 3)), sigma_px=0.7)
    args.update(bad)
    with pytest.raises(InputRangeError) as info:
        deposit(**args)
    assert "\n" not in str(info.value)


@pytest.mark.parametrize("chunk, threads", [(1 << 17, 1), (1 << 17, 2), (7, 2), (2, 2)])
@pytest.mark.parametrize("n", [200, 5000])
def test_chunks_bands_and_threads_give_the_reference_image(monkeypatch, chunk, threads, n):
    # However the stars are cut into chunks (and each chunk into the row-disjoint parts drawn
    # at once on two threads), the image is the sum of the renormalised pixel integrals from
    # scipy.stats.norm.cdf, star by star (columns wrapped at the seam; Abramowitz & Stegun
    # 26.2.29 for the pixel integral)
    from starkiln.engine.plates import drawing

    monkeypatch.setattr(drawing, "CHUNK_STARS", chunk)
    monkeypatch.setattr(drawing, "THREADS", threads)
    h, w, sigma = 64, 128, 0.8
    x, y = RNG.uniform(0, w, n), RNG.uniform(5, h - 5, n)
    values = RNG.uniform(0, 1, (n, 3))
    image = np.zeros((h, w, 3))
    deposit(image, x, y, values, sigma, wrap_x=True)
    expected = np.zeros((h, w, 3))
    k = int(footprint_half_width(sigma))
    for xi, yi, v in zip(x, y, values):
        cols = np.arange(int(xi) - k, int(xi) + k + 1)
        rows = np.arange(int(yi) - k, int(yi) + k + 1)
        px = stats.norm.cdf(cols + 1, xi, sigma) - stats.norm.cdf(cols, xi, sigma)
        py = stats.norm.cdf(rows + 1, yi, sigma) - stats.norm.cdf(rows, yi, sigma)
        patch = np.outer(py / py.sum(), px / px.sum())
        expected[rows[:, None], np.mod(cols, w)[None, :]] += patch[:, :, None] * v
    np.testing.assert_allclose(image, expected, rtol=1e-9, atol=1e-14)
