"""Drawing stars on a plate: an energy-conserving Gaussian point-spread function.

Each star adds ``values`` (its colour times its intensity, one number per channel) to the
image as a circular Gaussian of standard deviation ``sigma_px`` centred at its sub-pixel
position, **integrated exactly over each pixel**: the weight of pixel column ``i`` is
``Phi((i + 1 - x) / sigma) - Phi((i - x) / sigma)`` with ``Phi(t) = (1 + erf(t / sqrt 2)) / 2``
(the Gaussian's distribution function), the same for rows, and the 2-D weight is their
product (the circular Gaussian is separable). The footprint is the ``(2k + 1)`` square around
the centre's pixel with ``k = ceil(4 sigma)`` (at least 4 sigma on every side); the per-axis
weights are renormalised over it, so each star's weights sum to exactly 1 (the tail left out
is below 6.4e-5 of the flux, so the shape changes by less than that) and each star's flux is
kept exactly. A star's footprint divided by its sum is therefore its value vector divided by
its sum: the colour is kept.

Edges
-----
- ``wrap_x=True`` (the equirectangular CAR plate): columns wrap around the seam; rows past the
  top or bottom edge fold back over the pole (row ``-1 - r`` becomes row ``r``, half-way round
  in longitude), which is where those directions are on the sphere. Nothing is lost.
- Otherwise the part of a footprint off the image is dropped (the flux lost is given by
  :func:`kept_fraction`). Cube faces (``face=``) follow this rule: a star draws on the face of
  its centre and is clipped at that face's edges; no spill to the neighbouring face.
- ``valid=`` (a boolean ``(H, W)`` image, e.g. the fisheye circle from
  :func:`starkiln.engine.plates.projection.fisheye_valid_pixels`): weights on invalid pixels
  (and off the image) are dropped and **the rest renormalised**, so a star whose centre is
  inside keeps its whole flux on the image; the part that would fall outside the circle is
  put back onto its pixels inside (the rim stays black outside and the star's energy stays
  whole, its shape is cut at the rim). Pass only stars whose centre is inside.

The work is vectorised: stars are grouped by footprint size, sorted by position (so the
scatter walks the image in order), processed in chunks of bounded memory, and added with one
``numpy.add.at`` per chunk over all channels; there is no per-star Python loop.
"""

from __future__ import annotations

import numpy as np
from scipy.special import erf

from starkiln.engine.errors import InputRangeError

#: Half-width of a footprint in sigmas (the footprint covers at least this on every side).
FOOTPRINT_SIGMAS = 4.0
#: Stars per chunk (bounds the temporary arrays to about 100 MB for a 7 x 7 footprint).
CHUNK_STARS = 1 << 17
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


def _axis_weights(pos, sigma, k):
    """Start pixel ``(n,)`` and normalised pixel-integrated Gaussian weights ``(n, 2k + 1)``."""
    start = np.floor(pos).astype(np.int64) - k
    edges = start[:, None] + np.arange(2 * k + 2)
    cdf = erf((edges - pos[:, None]) / (sigma[:, None] * _SQRT2))
    w = np.diff(cdf, axis=1)
    w /= cdf[:, -1:] - cdf[:, :1]
    return start, w


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
    vals = np.asarray(values, float)
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
        ``(N,)`` cube face of each star (0-5); the image is then ``(6, H, W, C)``.
    valid : numpy.ndarray of bool, optional
        ``(H, W)`` pixels that may receive light (the fisheye circle); the kept weights are
        renormalised so each star's flux stays whole on the image.

    Notes
    -----
    The pixel integral of the Gaussian is the difference of its distribution function at the
    pixel edges, ``(erf(b / (sigma sqrt 2)) - erf(a / (sigma sqrt 2))) / 2`` (Abramowitz &
    Stegun 1964, 26.2.29 and 7.1.1). Rows or values that are not finite are skipped. See the
    module notes for edges, the seam and the fisheye rim.
    """
    x, y, vals, sigma, f = _check(image, x_px, y_px, values, sigma_px, face)
    if x.size == 0:
        return
    height, width, channels = image.shape[-3:]
    flat = image.reshape(-1)
    if valid is not None:
        valid = np.asarray(valid, bool)
        if valid.shape != (height, width):
            raise InputRangeError(f"valid of shape {valid.shape} is not accepted; "
                                  f"({height}, {width})")
        valid_flat = valid.reshape(-1)
    k_all = footprint_half_width(sigma)
    channel_offsets = np.arange(channels)
    for k in np.unique(k_all):
        members = np.flatnonzero(k_all == k)
        # sort by face, row, column: the scatter then walks the image in order
        key = (f[members] * height + np.floor(y[members]).clip(-k, height + k)) * (width + 2 * k) \
            + np.floor(x[members]).clip(-k, width + k)
        members = members[np.argsort(key, kind="stable")]
        for lo in range(0, members.size, CHUNK_STARS):
            sel = members[lo:lo + CHUNK_STARS]
            _deposit_chunk(flat, x[sel], y[sel], vals[sel], sigma[sel], f[sel], int(k),
                           height, width, channels, channel_offsets, wrap_x,
                           None if valid is None else valid_flat, image.dtype)


def _deposit_chunk(flat, x, y, vals, sigma, f, k, height, width, channels, channel_offsets,
                   wrap_x, valid_flat, dtype):
    """One chunk of stars sharing the footprint half-width ``k`` (vectorised).

    The work on the ``(n, side, side, C)`` arrays is kept to one broadcast add for the flat
    indices and one broadcast multiply for the contributions; everything else is per axis.
    """
    side = 2 * k + 1
    col0, wx = _axis_weights(x, sigma, k)
    row0, wy = _axis_weights(y, sigma, k)
    cols = col0[:, None] + np.arange(side)               # (n, side)
    rows = row0[:, None] + np.arange(side)
    itype = np.intp                                      # numpy.add.at has its fast path for intp
    wtype = np.float32 if dtype == np.float32 else np.float64
    folded = None
    if wrap_x:
        over_top, over_bottom = rows < 0, rows >= height
        folded = over_top | over_bottom
        rows = np.where(over_top, -1 - rows, np.where(over_bottom, 2 * height - 1 - rows, rows))
        rows = rows.clip(0, height - 1)                  # a footprint taller than the image
        cols = np.mod(cols, width)
    else:
        # off the image: the per-axis weight is zero there (separable), the index clipped
        wx = np.where((cols >= 0) & (cols < width), wx, 0.0)
        wy = np.where((rows >= 0) & (rows < height), wy, 0.0)
        cols, rows = cols.clip(0, width - 1), rows.clip(0, height - 1)
    row_part = (((f[:, None] * height + rows) * width) * channels).astype(itype)
    col_part = (cols * channels).astype(itype)
    col_part = col_part[:, :, None] + channel_offsets.astype(itype)   # (n, side, C)
    index = row_part[:, :, None, None] + col_part[:, None, :, :]       # one pass, (n, side, side, C)
    if folded is not None and folded.any():
        # rows over a pole: half-way round in longitude (a few stars near the poles)
        few = np.flatnonzero(folded.any(axis=1))
        turned = (np.mod(cols[few] + width // 2, width) * channels).astype(itype)
        turned = turned[:, :, None] + channel_offsets.astype(itype)
        over = row_part[few][:, :, None, None] + turned[:, None, :, :]
        index[few] = np.where(folded[few][:, :, None, None], over, index[few])
    if valid_flat is not None:
        weight = wy[:, :, None] * wx[:, None, :]
        pixel = index[..., 0] // channels
        weight = weight * valid_flat[pixel % (height * width)]
        total = weight.sum(axis=(1, 2), keepdims=True)
        weight = np.divide(weight, total, out=np.zeros_like(weight), where=total > 0)
        contrib = weight[:, :, :, None].astype(wtype) * vals[:, None, None, :].astype(wtype)
    else:
        wxv = (wx[:, :, None] * vals[:, None, :]).astype(wtype)          # (n, side, C)
        contrib = wy.astype(wtype)[:, :, None, None] * wxv[:, None, :, :]
    np.add.at(flat, index.reshape(-1), contrib.reshape(-1).astype(dtype, copy=False))


def kept_fraction(x_px, y_px, sigma_px, width_px, height_px) -> np.ndarray:
    """Fraction of each star's (footprint-normalised) flux that lands on a ``W x H`` image.

    What :func:`deposit` keeps without ``wrap_x`` or ``valid`` (cube faces, clipped edges);
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
