"""Drawing stars on a plate: an energy-conserving Gaussian point-spread function.

Each star adds ``values`` (its colour times its intensity, one number per channel) to the
image as a circular Gaussian of standard deviation ``sigma_px`` centred at its sub-pixel
position, **integrated exactly over each pixel**: the weight of pixel column ``i`` is
``Phi((i + 1 - x) / sigma) - Phi((i - x) / sigma)`` with ``Phi(t) = (1 + erf(t / sqrt 2)) / 2``
(the Gaussian's distribution function), the same for rows, and the 2-D weight is their
product (the circular Gaussian is separable: each star's few column and row weights are
computed once and multiplied). The footprint is the ``(2k + 1)`` square around the centre's
pixel with ``k = ceil(4 sigma)`` (at least 4 sigma on every side, so its size follows the
PSF); the per-axis weights are renormalised over it, so each star's weights sum to exactly 1
(the tail left out is below 6.4e-5 of the flux, so the shape changes by less than that) and
each star's flux is kept exactly. A star's footprint divided by its sum is therefore its value
vector divided by its sum: the colour is kept.

Edges
-----
- ``wrap_x=True`` (the equirectangular CAR plate): columns wrap around the seam; rows past the
  top or bottom edge fold back over the pole (row ``-1 - r`` becomes row ``r``, half-way round
  in longitude), which is where those directions are on the sphere. Nothing is lost.
- Cube faces (``face=``, image ``(6, H, W, C)``): a footprint pixel that falls off its star's
  face is **reprojected onto the neighbouring face**: its centre, continued on the face's
  gnomonic plane, is a direction; that direction's face and pixel
  (:func:`starkiln.engine.plates.projection.cube_face_pixels`) receive its weight. Nothing is
  lost across edges and corners, and the light lands where that direction is on the other face.
- ``valid=`` (a boolean ``(H, W)`` image, e.g. the fisheye circle from
  :func:`starkiln.engine.plates.projection.fisheye_valid_pixels`): weights on invalid pixels
  (and off the image) are dropped and **the rest renormalised**, so a star whose centre is
  inside keeps its whole flux on the image; the part that would fall outside the circle is
  put back onto its pixels inside (the rim stays black outside and the star's energy stays
  whole, its shape is cut at the rim). Pass only stars whose centre is inside.
- Otherwise the part of a footprint off the image is dropped (the flux lost is given by
  :func:`kept_fraction`).

Speed
-----
There is no per-star Python loop. Stars are grouped by footprint size and, with a radix sort on
a 16-bit key of their (face) row, put in row order, and a compiled loop (numba,
``@njit(nogil=True)``, cached on disk after the first compile) computes each star's per-axis
weights (from :func:`_erf_table` for a float32 image with one sigma, else ``math.erf``) and
adds their separable product into the image, applying the edge rules above as it goes. In row
order consecutive footprints touch the same few image rows, which stay in the cache. On two
threads the stars are cut into those well above and well below a middle row (their footprints
cannot share a pixel: more than a footprint apart), drawn at once, then the few in between. Stars whose footprint crosses a cube
edge take the reprojection route (``numpy.add.at``). The weights and the sums are in the
image's precision (float32 for a float32 plate: a footprint's sum is still its value within
about 1e-7 relative). Memory: the image and about 60 bytes a star of the stars drawn.
"""

from __future__ import annotations

import os
from contextlib import nullcontext
from functools import lru_cache
from concurrent.futures import ThreadPoolExecutor

import numpy as np
from scipy.special import erf

from starkiln.engine.errors import InputRangeError

#: Half-width of a footprint in sigmas (the footprint covers at least this on every side).
FOOTPRINT_SIGMAS = 4.0
#: Cube stars spilling over a face edge, per chunk of the reprojection route, for a 7 x 7
#: footprint (its temporary arrays about 60 MB); wider footprints take proportionally fewer.
CHUNK_STARS = 1 << 17
#: Worker threads of the compiled loop (it releases the GIL).
THREADS = max(1, min(2, os.cpu_count() or 1))
_SQRT2 = np.sqrt(2.0)


def footprint_half_width(sigma_px) -> np.ndarray:
    """Footprint half-width ``k = max(1, ceil(4 sigma))`` in pixels.

    Parameters
    ----------
    sigma_px : array_like
        Gaussian standard deviation, pixels.

    Returns
    -------
    numpy.ndarray of int
        ``k``: the footprint is ``2k + 1`` pixels square around the centre's pixel.
    """
    return np.maximum(1, np.ceil(FOOTPRINT_SIGMAS * np.asarray(sigma_px, float))).astype(np.int64)


def _axis_weights(pos, sigma, k, wtype=np.float64):
    """Start pixel ``(n,)`` and normalised pixel-integrated Gaussian weights ``(n, 2k + 1)``.

    The pixel edges relative to the star are ``j - k - frac`` (``frac`` the sub-pixel part,
    exact in float64); the arrays are in ``wtype`` (float32 for a float32 image: half the
    memory traffic). The weights are renormalised over the footprint, so they sum to 1 in that
    precision. For a float32 image with one sigma for the chunk, the erf at the edges comes
    from :func:`_erf_table` (linear interpolation in ``frac``, within 1e-8 of erf: below
    float32's own rounding of erf's values, 6e-8); otherwise scipy's erf is called directly.
    """
    base = np.floor(pos)
    start = base.astype(np.int64) - k
    frac = (pos - base).astype(wtype)
    if wtype == np.float32 and sigma.size and sigma.min() == sigma.max():
        nodes, table, slope = _erf_table(float(sigma.flat[0]), int(k))
        u = frac * np.float32(nodes)
        i = np.minimum(u.astype(np.intp), nodes - 1)
        t = (u - i)[:, None]
        cdf = table[i] + t * slope[i]
    else:
        inv = (1.0 / (sigma * _SQRT2)).astype(wtype)
        offsets = np.arange(-k, k + 2, dtype=wtype)
        cdf = erf((offsets - frac[:, None]) * inv[:, None])
    w = np.diff(cdf, axis=1)
    w /= cdf[:, -1:] - cdf[:, :1]
    return start, w


@lru_cache(maxsize=32)
def _erf_table(sigma_px, k):
    """erf at the footprint's pixel edges as a function of the sub-pixel part ``frac``.

    Returns ``(nodes, table, slope)``: for ``frac`` in ``[i, i + 1) / nodes``, edge ``j``'s
    value is ``table[i, j] + (frac * nodes - i) * slope[i, j]`` (float32). Linear
    interpolation is within ``h^2 / 8 max|f''|`` of the function (``h = 1 / nodes``; here
    ``f'' = inv^2 erf''`` with ``max|erf''| = 2 sqrt(2 / pi) exp(-1/2) < 0.97``; Abramowitz &
    Stegun 1964, 25.2.4 and 7.1.19), so ``nodes = 3500 inv`` keeps it within 1e-8.
    """
    inv = 1.0 / (sigma_px * _SQRT2)
    nodes = max(256, int(np.ceil(3500.0 * inv)))
    frac = np.arange(nodes + 1) / nodes
    values = erf((np.arange(-k, k + 2)[None, :] - frac[:, None]) * inv)   # float64
    return (nodes, values[:-1].astype(np.float32),
            np.diff(values, axis=0).astype(np.float32))


def _check(image, x_px, y_px, values, sigma_px, face):
    image_arr = np.asarray(image)
    if not isinstance(image, np.ndarray) or not image.flags.c_contiguous:
        raise InputRangeError("image is not accepted; a C-contiguous numpy array (H, W, C) "
                              "or (6, H, W, C)")
    cube = face is not None
    if image_arr.ndim != (4 if cube else 3):
        raise InputRangeError(f"image of shape {image_arr.shape} is not accepted; (H, W, C), "
                              "or (6, H, W, C) with face=")
    x = np.asarray(x_px, float).ravel()
    y = np.asarray(y_px, float).ravel()
    n = x.size
    channels = image_arr.shape[-1]
    vals = np.asarray(values)
    if vals.dtype not in (np.float32, np.float64):
        vals = vals.astype(float)
    if vals.ndim == 1 and channels == 1:
        vals = vals[:, None]
    if y.size != n or vals.shape != (n, channels):
        raise InputRangeError(f"values of shape {vals.shape} for {n} stars are not accepted; "
                              f"(N, {channels}) with x_px and y_px of length N")
    sigma = np.broadcast_to(np.asarray(sigma_px, float), (n,))
    if n and not (np.all(np.isfinite(sigma)) and sigma.min() > 0):
        raise InputRangeError(f"sigma_px {np.asarray(sigma_px)!r} is not accepted; a finite "
                              "number of pixels > 0")
    f = np.zeros(n, np.int64) if face is None else np.asarray(face, np.int64).ravel()
    if f.size != n or (cube and n and (f.min() < 0 or f.max() >= image_arr.shape[0])):
        raise InputRangeError("face is not accepted; one face index 0-5 per star")
    good = np.isfinite(x) & np.isfinite(y) & np.all(np.isfinite(vals), axis=1)
    if good.all():
        return x, y, vals, sigma, f
    return x[good], y[good], vals[good], sigma[good], f[good]


def deposit(image, x_px, y_px, values, sigma_px, wrap_x=False, face=None, *, valid=None) -> None:
    """Add stars to an image as pixel-integrated Gaussians, in place, keeping their energy.

    Parameters
    ----------
    image : numpy.ndarray
        ``(H, W, C)``, or ``(6, H, W, C)`` for a cube with ``face``; float, C-contiguous.
    x_px, y_px : array_like
        ``(N,)`` continuous pixel positions (pixel centres at ``i + 0.5``), as from
        :func:`starkiln.engine.plates.projection.project`.
    values : array_like
        ``(N, C)``: what each star adds in total, per channel (colour times intensity).
    sigma_px : float or array_like
        Gaussian standard deviation in pixels, one for all or one per star.
    wrap_x : bool
        Wrap columns around (the equirectangular seam) and fold rows over the poles.
    face : array_like of int, optional
        ``(N,)`` cube face of each star (0-5); the image is then ``(6, H, W, C)`` and
        footprints spill over face edges onto the neighbouring faces.
    valid : numpy.ndarray of bool, optional
        ``(H, W)`` pixels that may receive light (the fisheye circle); the kept weights are
        renormalised so each star's flux stays whole on the image.

    Notes
    -----
    The pixel integral of the Gaussian is the difference of its distribution function at the
    pixel edges, ``(erf(b / (sigma sqrt 2)) - erf(a / (sigma sqrt 2))) / 2`` (Abramowitz &
    Stegun 1964, 26.2.29 and 7.1.1). Rows or values that are not finite are skipped. See the
    module notes for edges, the seam, cube edges, the fisheye rim and the speed.

    References
    ----------
    Abramowitz & Stegun (1964), Handbook of Mathematical Functions, 26.2.29 and 7.1.1;
    Calabretta & Greisen (2002), A&A 395, 1077 (the cube faces' gnomonic planes).
    """
    x, y, vals, sigma, f = _check(image, x_px, y_px, values, sigma_px, face)
    if x.size == 0:
        return
    height, width, channels = image.shape[-3:]
    faces = image.shape[0] if face is not None else 1
    plane = image.reshape(-1, channels)                  # (faces * H * W, C), a view
    wtype = np.float32 if image.dtype == np.float32 else np.float64
    vals = vals.astype(wtype, copy=False)
    valid_flat = None
    if valid is not None:
        valid = np.asarray(valid, bool)
        if valid.shape != (height, width):
            raise InputRangeError(f"valid of shape {valid.shape} is not accepted; "
                                  f"({height}, {width})")
        valid_flat = valid.reshape(-1)
    geometry = _Geometry(height, width, faces, wrap_x, face is not None)
    k_all = footprint_half_width(sigma)
    rows_total = faces * height
    groups = [np.arange(x.size)] if k_all.min() == k_all.max() else \
        [np.flatnonzero(k_all == k) for k in np.unique(k_all)]
    scatter = _scatter_kernel()
    valid_arr = np.zeros(0, dtype=np.bool_) if valid_flat is None else valid_flat
    sig = np.ascontiguousarray(sigma, dtype=np.float64)
    with ThreadPoolExecutor(THREADS) if THREADS > 1 else nullcontext() as pool:
        for members in groups:
            # row order: a stable radix sort on a 16-bit key of the star's (face) row
            row = f[members] * height + y[members].clip(0, height - 1)
            key = (row * (65535.0 / rows_total)).astype(np.uint16)
            members = members[np.argsort(key, kind="stable")]
            k = int(k_all[members[0]])
            if geometry.cube:
                members = _spill_off(plane, geometry, x, y, vals, sigma, f, members, k, wtype)
            if members.size == 0:
                continue
            # the stars' values in row order: the compiled loop then reads them in sequence
            xs, ys, fs, ss = x[members], y[members], f[members], sig[members]
            nodes, table, slope = 0, _NO_TABLE, _NO_TABLE
            if wtype == np.float32 and ss.min() == ss.max():
                nodes, table, slope = _erf_table(float(ss[0]), k)
            args = (plane, xs, ys, vals[members], fs, ss, k, height, width, wrap_x, valid_arr,
                    nodes, table, slope)
            upper, lower, between = _row_parts(fs, ys, height, k)
            if pool is None or upper.size == 0 or lower.size == 0:
                scatter(np.arange(members.size), *args)
                continue
            jobs = [pool.submit(scatter, part, *args) for part in (upper, lower)]
            for job in jobs:
                job.result()
            scatter(between, *args)


#: No erf table (the compiled loop then calls erf itself).
_NO_TABLE = np.zeros((0, 0), dtype=np.float32)


class _Geometry:
    """Image size and edge rule of one deposit call."""

    def __init__(self, height, width, faces, wrap_x, cube):
        self.height, self.width, self.faces = height, width, faces
        self.wrap_x, self.cube = wrap_x, cube


def _row_parts(f, y, height, k):
    """Stars in row order (their faces and rows) cut into those well above and well below the
    middle row (their footprints, ``2k + 1`` rows tall, cannot share a pixel: two threads draw
    them at once) and the few between: three index arrays."""
    side = 2 * k + 1
    face_row = f * height + np.floor(y).astype(np.int64)
    middle = int(face_row[face_row.size // 2])
    upper = np.flatnonzero(face_row < middle - side)
    lower = np.flatnonzero(face_row > middle + side)
    between = np.flatnonzero((face_row >= middle - side) & (face_row <= middle + side))
    return upper, lower, between


def _spill_off(plane, g, x, y, vals, sigma, f, members, k, wtype):
    """Cube stars whose footprint crosses a face edge: reproject the pixels off the face
    (``numpy.add.at``, in chunks); returns the other stars, for the compiled loop."""
    side = 2 * k + 1
    col0 = np.floor(x[members]).astype(np.int64) - k
    row0 = np.floor(y[members]).astype(np.int64) - k
    spill = (col0 < 0) | (col0 + side > g.width) | (row0 < 0) | (row0 + side > g.height)
    few = members[spill]
    step = max(1, CHUNK_STARS * 49 // side ** 2)
    for lo in range(0, few.size, step):
        sel = few[lo:lo + step]
        c0, wx = _axis_weights(x[sel], sigma[sel], k, wtype)
        r0, wy = _axis_weights(y[sel], sigma[sel], k, wtype)
        index = _spilled_index(g, f[sel], c0, r0, side)
        weight = wy[:, :, None] * wx[:, None, :]
        _add_at(plane, index, weight.reshape(sel.size, -1), vals[sel])
    return members[~spill]


@lru_cache(maxsize=1)
def _scatter_kernel():
    """The compiled loop that draws stars into the image (numba, imported on first use so that
    commands without plates do not load it; compiled once and cached on disk).

    Per star: the per-axis weights, as :func:`_axis_weights` gives them (erf at the pixel
    edges from the :func:`_erf_table` when one is given, else ``math.erf``; renormalised over
    the footprint), then their separable product added into the image with the edge rules.
    """
    import math

    from numba import njit

    sqrt2 = math.sqrt(2.0)

    @njit(cache=True, nogil=True)
    def scatter(order, plane, x, y, vals, face, sig, k, height, width, wrap, valid, nodes,
                table, slope):
        side = 2 * k + 1
        channels = plane.shape[1]
        half = width // 2
        use_valid = valid.size > 0
        use_table = table.shape[0] > 0
        w2 = np.empty((2, side), dtype=plane.dtype)
        cdf = np.empty(side + 1)
        start = np.empty(2, dtype=np.int64)
        one = np.ones(1, dtype=plane.dtype)  # the image's precision for the scale
        for t in range(order.size):
            s = order[t]
            for a in range(2):  # the per-axis weights: x, then y
                pos = x[s] if a == 0 else y[s]
                base = math.floor(pos)
                frac = pos - base
                start[a] = int(base) - k
                if use_table:
                    u = frac * nodes
                    i = min(int(u), nodes - 1)
                    du = u - i
                    for e in range(side + 1):
                        cdf[e] = table[i, e] + du * slope[i, e]
                else:
                    inv = 1.0 / (sig[s] * sqrt2)
                    for e in range(side + 1):
                        cdf[e] = math.erf((e - k - frac) * inv)
                norm = 1.0 / (cdf[side] - cdf[0])
                for e in range(side):
                    w2[a, e] = (cdf[e + 1] - cdf[e]) * norm
            col0, row0 = start[0], start[1]
            one[0] = 1.0
            if use_valid:  # renormalise over the pixels that may receive light
                total = 0.0
                for j in range(side):
                    r = row0 + j
                    if r < 0 or r >= height:
                        continue
                    for i in range(side):
                        c = col0 + i
                        if 0 <= c < width and valid[r * width + c]:
                            total += w2[1, j] * w2[0, i]
                if total <= 0.0:
                    continue
                one[0] = 1.0 / total
            scale = one[0]
            top = face[s] * height
            for j in range(side):
                r = row0 + j
                shift = 0
                if r < 0 or r >= height:
                    if not wrap:
                        continue
                    # over a pole: folded back, half-way round in longitude
                    r = -1 - r if r < 0 else 2 * height - 1 - r
                    r = min(max(r, 0), height - 1)
                    shift = half
                wyj = w2[1, j] * scale
                row_base = (top + r) * width
                c0 = col0 + shift
                if wrap and c0 >= width:
                    c0 -= width
                if (0 <= c0 and c0 + side <= width and not use_valid and channels == 3):
                    # the common case: the whole row of the footprint on the image
                    v0, v1, v2 = vals[s, 0], vals[s, 1], vals[s, 2]
                    for i in range(side):
                        w = wyj * w2[0, i]
                        p = row_base + c0 + i
                        plane[p, 0] += w * v0
                        plane[p, 1] += w * v1
                        plane[p, 2] += w * v2
                    continue
                for i in range(side):
                    c = c0 + i
                    if wrap:
                        c = c % width
                    elif c < 0 or c >= width:
                        continue
                    if use_valid and not valid[r * width + c]:
                        continue
                    w = wyj * w2[0, i]
                    p = row_base + c
                    for ch in range(channels):
                        plane[p, ch] += w * vals[s, ch]

    return scatter


def _spilled_index(g, f, col0, row0, side):
    """Flat pixel indices ``(n, side * side)`` of cube footprints, off-face pixels reprojected."""
    from starkiln.engine.plates.projection import cube_face_directions, cube_face_pixels

    cols = col0[:, None, None] + np.arange(side)[None, None, :]
    rows = row0[:, None, None] + np.arange(side)[None, :, None]
    cols, rows = np.broadcast_arrays(cols, rows)
    off = (cols < 0) | (cols >= g.width) | (rows < 0) | (rows >= g.height)
    # each off-face pixel centre, continued on its face's gnomonic plane, is a direction
    direction = cube_face_directions(np.broadcast_to(f[:, None, None], cols.shape)[off],
                                     cols[off] + 0.5, rows[off] + 0.5, g.width)
    x2, y2, f2 = cube_face_pixels(direction, g.width)
    c2 = np.floor(x2).astype(np.int64).clip(0, g.width - 1)
    r2 = np.floor(y2).astype(np.int64).clip(0, g.height - 1)
    face = np.broadcast_to(f[:, None, None], cols.shape).astype(np.int64)
    index = (face * g.height + rows.clip(0, g.height - 1)) * g.width \
        + cols.clip(0, g.width - 1)
    index[off] = (f2.astype(np.int64) * g.height + r2) * g.width + c2
    return index.reshape(f.size, -1)


def _add_at(plane, index, weight, vals):
    """Scatter ``weight (n, P) x vals (n, C)`` into ``plane`` at flat pixels ``index (n, P)``."""
    channels = plane.shape[1]
    flat = plane.reshape(-1)
    target = index.astype(np.intp)[:, :, None] * channels + np.arange(channels)
    contrib = weight[:, :, None] * vals[:, None, :]
    np.add.at(flat, target.reshape(-1), contrib.reshape(-1).astype(flat.dtype, copy=False))


def kept_fraction(x_px, y_px, sigma_px, width_px, height_px) -> np.ndarray:
    """Fraction of each star's (footprint-normalised) flux that lands on a ``W x H`` image.

    What :func:`deposit` keeps on a plain image (no ``wrap_x``, ``valid`` or ``face``);
    ``1 - kept_fraction`` is the lost part to report.

    Parameters
    ----------
    x_px, y_px : array_like
        ``(N,)`` continuous pixel positions.
    sigma_px : float or array_like
        Gaussian standard deviation, pixels.
    width_px, height_px : int
        Image (or face) size.

    Returns
    -------
    numpy.ndarray
        ``(N,)`` in ``[0, 1]``: the product of the per-axis kept parts of the pixel-integrated
        Gaussian (separable; differences of erf, Abramowitz & Stegun 1964, 26.2.29).
    """
    x = np.asarray(x_px, float).ravel()
    y = np.asarray(y_px, float).ravel()
    sigma = np.broadcast_to(np.asarray(sigma_px, float), x.shape)
    k = footprint_half_width(sigma)
    out = np.ones(x.shape)
    for pos, size in ((x, width_px), (y, height_px)):
        a = np.floor(pos) - k
        b = np.floor(pos) + k + 1
        s = sigma * _SQRT2
        full = erf((b - pos) / s) - erf((a - pos) / s)
        kept = erf((np.clip(b, 0, size) - pos) / s) - erf((np.clip(a, 0, size) - pos) / s)
        out *= np.clip(kept / full, 0.0, 1.0)
    return out
