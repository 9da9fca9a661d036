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
There is no per-star Python loop. Stars are grouped by footprint size and, with a radix sort
on a 16-bit row key, into bands of rows; a chunk of stars becomes a sparse matrix with one
column per star and one row per pixel of the band its footprints touch (CSC: the column of a
star is its ``(2k + 1)^2`` weights, built directly, no sorting of pixels), and the compiled
CSC product of ``scipy.sparse`` sums all footprints of the chunk, all channels at once,
straight into the image rows of the band (the loop behind ``csc_array @ ndarray``, which
adds into its output). Where that loop is not importable the public ``matrix @ values``
fills a dense band that is then added to the image (or, for few stars on a wide band,
``numpy.add.at``); the sums are the same. Chunks run on two threads (the compiled loops
release the GIL), the sums into the image under a lock. The weights and the sums are in the
image's precision (float32 for a float32 plate: a footprint's sum is still its value within
about 1e-7 relative). Memory: the image and about 250 bytes a star of the chunks in flight.
"""

from __future__ import annotations

import os
import threading
from functools import lru_cache
from concurrent.futures import ThreadPoolExecutor

import numpy as np
from scipy import sparse
from scipy.special import erf

from starkiln.engine.errors import InputRangeError

#: Half-width of a footprint in sigmas (the footprint covers at least this on every side).
FOOTPRINT_SIGMAS = 4.0
#: Stars per chunk for a 7 x 7 footprint (the temporary arrays about 60 MB); wider footprints
#: take proportionally fewer stars a chunk, so the memory stays bounded for any sigma.
CHUNK_STARS = 1 << 17
#: ``Y += A X`` for a CSC matrix ``A`` and dense row-major ``X``, ``Y``: the compiled loop behind
#: ``scipy.sparse``'s ``csc_array @ ndarray`` (scipy.sparse._sparsetools.csc_matvecs), used
#: to sum a chunk straight into the image. It is not public API, so if it is missing the
#: public product into a band (then added to the image) is used; both give the same sums.
try:
    from scipy.sparse._sparsetools import csc_matvecs as _IN_PLACE
except ImportError:                                     # pragma: no cover - other scipy
    _IN_PLACE = None
#: Worker threads for the chunks (numpy and scipy.sparse release the GIL in their loops).
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
    tasks = []
    for members in groups:
        # bands of rows: a stable radix sort on a 16-bit key of the star's (face) row
        row = f[members] * height + y[members].clip(0, height - 1)
        key = (row * (65535.0 / rows_total)).astype(np.uint16)
        members = members[np.argsort(key, kind="stable")]
        k = int(k_all[members[0]])
        step = max(1, CHUNK_STARS * 49 // (2 * k + 1) ** 2)
        tasks += [(members[lo:lo + step], k) for lo in range(0, members.size, step)]
    lock = threading.Lock()

    def run(task):
        sel, k = task
        _deposit_chunk(plane, geometry, x[sel], y[sel], vals[sel], sigma[sel], f[sel], k,
                       wtype, valid_flat, lock)

    if len(tasks) == 1 or THREADS == 1:
        for task in tasks:
            run(task)
        return
    with ThreadPoolExecutor(THREADS) as pool:
        list(pool.map(run, tasks))


class _Geometry:
    """Image size and edge rule of one deposit call."""

    def __init__(self, height, width, faces, wrap_x, cube):
        self.height, self.width, self.faces = height, width, faces
        self.wrap_x, self.cube = wrap_x, cube


def _deposit_chunk(plane, g, x, y, vals, sigma, f, k, wtype, valid_flat, lock):
    """One chunk of stars sharing the footprint half-width ``k`` (vectorised); the sums go
    into ``plane`` under ``lock`` (chunks run on two threads)."""
    side = 2 * k + 1
    col0, wx = _axis_weights(x, sigma, k, wtype)
    row0, wy = _axis_weights(y, sigma, k, wtype)
    cols = col0[:, None] + np.arange(side)               # (n, side)
    rows = row0[:, None] + np.arange(side)
    folded = spill = None
    if g.wrap_x:
        if rows.min() < 0 or rows.max() >= g.height:     # some footprints reach over a pole
            over_top, over_bottom = rows < 0, rows >= g.height
            folded = over_top | over_bottom
            rows = np.where(over_top, -1 - rows,
                            np.where(over_bottom, 2 * g.height - 1 - rows, rows))
            rows = rows.clip(0, g.height - 1)            # a footprint taller than the image
        if cols.min() < 0 or cols.max() >= g.width:      # some footprints cross the seam
            cols = np.mod(cols, g.width)
    else:
        off_c = (cols < 0) | (cols >= g.width)
        off_r = (rows < 0) | (rows >= g.height)
        if g.cube:
            spill = off_c.any(axis=1) | off_r.any(axis=1)
        else:
            # off the image: the per-axis weight is zero there (separable), the index clipped
            wx = np.where(off_c, 0, wx).astype(wtype, copy=False)
            wy = np.where(off_r, 0, wy).astype(wtype, copy=False)
        cols, rows = cols.clip(0, g.width - 1), rows.clip(0, g.height - 1)
    weight = wy[:, :, None] * wx[:, None, :]             # (n, side, side): the separable product
    if spill is not None and spill.any():
        # stars whose footprint crosses a cube edge: reproject the pixels off the face
        few = np.flatnonzero(spill)
        index = _spilled_index(g, f[few], col0[few], row0[few], side)
        with lock:
            _add_at(plane, index, weight[few].reshape(few.size, -1), vals[few])
        keep = ~spill
        cols, rows, weight, vals, f = cols[keep], rows[keep], weight[keep], vals[keep], f[keep]
        folded = None
        if cols.shape[0] == 0:
            return
    row_base = (f[:, None] * g.height + rows) * g.width  # (n, side), flat pixel of column 0
    p0 = int(row_base.min())
    p1 = int(row_base.max()) + g.width
    itype = np.int32 if p1 - p0 < 2 ** 31 else np.int64
    index = (row_base - p0).astype(itype)[:, :, None] + cols.astype(itype)[:, None, :]
    if folded is not None and folded.any():
        # rows over a pole: half-way round in longitude (a few stars near the poles)
        few = np.flatnonzero(folded.any(axis=1))
        turned = np.mod(cols[few] + g.width // 2, g.width).astype(itype)
        over = (row_base[few] - p0).astype(itype)[:, :, None] + turned[:, None, :]
        index[few] = np.where(folded[few][:, :, None], over, index[few])
    n = index.shape[0]
    index = index.reshape(n, -1)
    weight = weight.reshape(n, -1)
    if valid_flat is not None:
        weight = weight * valid_flat[p0:p1][index]
        total = weight.sum(axis=1, keepdims=True)
        weight = np.divide(weight, total, out=np.zeros_like(weight), where=total > 0)
    per_star = index.shape[1]
    indptr = np.arange(0, n * per_star + 1, per_star, dtype=itype)
    weight = np.ascontiguousarray(weight.reshape(-1), dtype=vals.dtype)
    index = index.reshape(-1)
    if _IN_PLACE is not None and plane.dtype == vals.dtype:
        # the same product, summed straight into the image rows (no band to allocate)
        target = plane[p0:p1].reshape(-1)
        with lock:
            _IN_PLACE(p1 - p0, n, plane.shape[1], indptr, index, weight,
                      np.ascontiguousarray(vals).reshape(-1), target)
        return
    if p1 - p0 > 8 * index.size:
        # few stars on a wide band: scatter them one by one in compiled code
        with lock:
            _add_at(plane, index.reshape(n, -1).astype(np.intp) + p0,
                    weight.reshape(n, -1), vals)
        return
    matrix = sparse.csc_array((weight, index, indptr), shape=(p1 - p0, n))
    band = matrix @ vals
    with lock:
        plane[p0:p1] += band


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
