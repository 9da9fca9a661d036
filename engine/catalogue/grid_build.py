"""Building a colour grid: rendering the nodes and marking the cells to render exactly.

:func:`build_colour_grid` fills a :class:`starkiln.engine.catalogue.colour_grid.ColourGrid`
by calling :func:`starkiln.engine.pipeline.render.render` on its nodes (the grid is
described in :mod:`starkiln.engine.catalogue.colour_grid`).

**Cells rendered exactly.** The render path is not smooth everywhere: the CIE
191 mesopic fixed point drops to m = 0 for red stars near the scotopic limit (a
step in colour and intensity along a curve in the temperature-magnitude plane),
the cone weight and the tone curve have kinks, and dark channels under PQ bend
sharply at the gamut edge. So when a grid is built, ``render`` is also called
at the centre of every cell, and again at inner points of suspect cells (those
next to a node where the values bend sharply); a cell where interpolation
misses the rendered value by more than ``CELL_TOLERANCE_DE`` (CIE 1976 colour
difference of the decoded colours, [CIE15] section 8.2.1,
:mod:`starkiln.engine.colour.cielab`) or the intensity by more than
``CELL_TOLERANCE_INTENSITY`` is marked, with its suspect neighbours, and rows
that fall into a marked cell are coloured by ``render`` itself (details in
:func:`_exact_cells`). A few per cent of the cells near those curves are marked
(see the benchmark).
"""

from __future__ import annotations

import numpy as np

from starkiln.engine.catalogue.colour_grid import (DUST_FINE, DUST_GRID_NODES, EBV_GRID_MAX,
                                                   EBV_STEP,
                                                   GRID_NODES, MAGNITUDE_MAX, MAGNITUDE_MIN,
                                                   MAGNITUDE_STEP, VISION_GRID_NODES, ColourGrid,
                                                   grid_mired_nodes, node_temperatures)
from starkiln.engine.colour.cielab import XYZ_to_CIELAB, delta_E_CIE1976
from starkiln.engine.pipeline.settings import Settings

#: Magnitude rows rendered per call while building the 2-D grid (bounds memory).
_BUILD_ROWS = 32
#: A cell where interpolation misses the rendered colour by more than this CIE 1976
#: colour difference (Delta E*ab, [CIE15] section 8.2.1; CIEDE2000 is smaller for
#: all but a few colours), or the intensity by more than CELL_TOLERANCE_INTENSITY, is
#: rendered exactly.
CELL_TOLERANCE_DE = 0.1
CELL_TOLERANCE_INTENSITY = 0.5 / 255.0
#: A node whose second difference exceeds this (Delta E*ab, or intensity) makes the
#: cells around it suspects, checked again at inner points (a kink or step is near).
BEND_TOLERANCE_DE = 0.2
BEND_TOLERANCE_INTENSITY = 1.0 / 255.0


def _display_lab(settings: Settings, encoded: np.ndarray) -> np.ndarray:
    """CIE 1976 L*a*b* of encoded display RGB, relative to the display white (for the
    tolerances only), with the display's own decoding and primaries
    (:mod:`starkiln.engine.colour.displays`)."""
    d = settings.display
    return XYZ_to_CIELAB(d.decode(encoded) @ d.rgb_to_XYZ.T, d.white_XYZ)


def _bend_cells(values: np.ndarray, axis: int, tolerance: float) -> np.ndarray:
    """Cells next to a node where the values bend by more than ``tolerance`` (the norm of
    the second difference along ``axis``): a kink or a step of the render path is near.
    ``values`` (..., K) node vectors; returns a cell mask (one less along every axis)."""
    a = np.moveaxis(values, axis, 0)
    d2 = np.linalg.norm(a[2:] - 2.0 * a[1:-1] + a[:-2], axis=-1) > tolerance
    node = np.zeros(a.shape[:-1], dtype=bool)
    node[1:-1] = d2
    node = np.moveaxis(node, 0, axis)
    cells = node
    for ax in range(node.ndim):  # a node touches the cells on both sides along every axis
        n = cells.shape[ax]
        cells = (np.take(cells, np.arange(0, n - 1), axis=ax)
                 | np.take(cells, np.arange(1, n), axis=ax))
    return cells


def _grow(mask: np.ndarray) -> np.ndarray:
    """``mask`` with every cell's neighbours (diagonals too) added."""
    out = mask.copy()
    for axis in range(mask.ndim):
        shifted = out.copy()
        lead = [slice(None)] * mask.ndim
        lag = [slice(None)] * mask.ndim
        lead[axis], lag[axis] = slice(1, None), slice(None, -1)
        shifted[tuple(lead)] |= out[tuple(lag)]
        shifted[tuple(lag)] |= out[tuple(lead)]
        out = shifted
    return out


#: Points per cell side at which a suspect cell is checked against render.
_CONFIRM_FRACTIONS = (0.125, 0.375, 0.625, 0.875)


def _misses(settings, exact: np.ndarray, interp: np.ndarray) -> np.ndarray:
    """Where interpolated values miss render's (the cell tolerances)."""
    colour = delta_E_CIE1976(_display_lab(settings, exact[..., :3]), _display_lab(settings, interp[..., :3]))
    return (colour > CELL_TOLERANCE_DE) | \
        (np.abs(exact[..., 3] - interp[..., 3]) > CELL_TOLERANCE_INTENSITY)


def _at_magnitudes(settings, temperature_K, magnitude):
    """(..., 4) render outputs at temperatures and magnitudes (the magnitude grid's rows)."""
    return _rendered(settings, temperature_K, np.clip(magnitude, MAGNITUDE_MIN, MAGNITUDE_MAX))


def _at_dust(settings, temperature_K, dust_ebv):
    """(..., 4) render outputs at temperatures and per-star E(B-V) (the dust grid's rows)."""
    return _rendered(settings, temperature_K, dust_ebv=np.clip(dust_ebv, 0.0, EBV_GRID_MAX))


def _confirm(settings, suspects: np.ndarray, nodes: np.ndarray, mired, mags,
             at_rows=_at_magnitudes) -> np.ndarray:
    """Suspect cells where interpolation misses render at one of 4 (or 4 x 4) inner points
    (``at_rows`` renders the 2-D grid's inner points: magnitudes or E(B-V))."""
    idx = np.nonzero(suspects)
    out = np.zeros_like(suspects)
    if idx[0].size == 0:
        return out
    f = np.array(_CONFIRM_FRACTIONS)
    h_t = mired[1] - mired[0]
    if mags is None:
        i = idx[0][:, None]
        exact = _rendered(settings, node_temperatures(mired[i] + f * h_t))
        interp = nodes[i] * (1 - f[None, :, None]) + nodes[i + 1] * f[None, :, None]
        out[idx] = _misses(settings, exact, interp).any(axis=1)
        return out
    fx, fy = (g.reshape(-1) for g in np.meshgrid(f, f))
    h_m = mags[1] - mags[0]
    bad = np.zeros(idx[0].size, dtype=bool)
    for s0 in range(0, idx[0].size, 2048):
        j, i = idx[0][s0:s0 + 2048, None], idx[1][s0:s0 + 2048, None]
        exact = at_rows(settings, node_temperatures(mired[i] + fx * h_t), mags[j] + fy * h_m)
        x, y = fx[None, :, None], fy[None, :, None]
        interp = ((nodes[j, i] * (1 - x) + nodes[j, i + 1] * x) * (1 - y)
                  + (nodes[j + 1, i] * (1 - x) + nodes[j + 1, i + 1] * x) * y)
        bad[s0:s0 + 2048] = _misses(settings, exact, interp).any(axis=1)
    out[idx] = bad
    return out


def _exact_cells(settings, nodes, centre_exact, centre_interp, mired, mags=None, known=None,
                 at_rows=_at_magnitudes):
    """Cells to render exactly, or None: (N - 1,) or (M - 1, N - 1) booleans.

    1. Cells whose centre misses render (:func:`_misses`) are marked, and so are the
       ``known`` ones (where a step of the render path is known to lie).
    2. Suspects: those, cells next to a node where the values bend sharply (a kink or a
       step of the render path, :func:`_bend_cells`), and all their neighbours.
    3. Each suspect is checked at 4 (1-D) or 16 (2-D) inner points; a miss marks it.
    4. Suspects next to a marked cell are marked too: a step can slip between the
       inner points of one cell, but not of every cell along its line.
    """
    bad = _misses(settings, centre_exact, centre_interp)
    if known is not None:
        bad |= known
    lab = _display_lab(settings, nodes[..., :3])
    bend = np.zeros_like(bad)
    for axis in range(nodes.ndim - 1):
        bend |= _bend_cells(lab, axis, BEND_TOLERANCE_DE)
        bend |= _bend_cells(nodes[..., 3:], axis, BEND_TOLERANCE_INTENSITY)
    suspects = _grow(bad | bend)
    marked = bad | _confirm(settings, suspects & ~bad, nodes, mired, mags, at_rows)
    marked |= _grow(marked) & suspects
    return marked if marked.any() else None


def _same_row(a: np.ndarray, b: np.ndarray) -> bool:
    return bool(np.all(np.abs(a - b) <= 1e-7))


def _changing_rows(settings, temps: np.ndarray, mags: np.ndarray) -> tuple[int, int]:
    """First and last magnitude rows to keep: outside them render's outputs equal the end
    rows. Found by bisection (each probe renders one row), then confirmed on 8 rows of
    each constant band."""
    n = mags.size

    def row(j):
        return _rendered(settings, temps, float(mags[j]))

    def edge(end: int, step: int) -> int:
        ref = row(end)
        far = end + step * (n - 1)
        if _same_row(row(far), ref):
            return end  # nothing changes at all: keep everything (degenerate, small)
        inside, outside = end, far  # row(inside) == ref, row(outside) != ref
        while abs(outside - inside) > 1:
            mid = (inside + outside) // 2
            if _same_row(row(mid), ref):
                inside = mid
            else:
                outside = mid
        probes = np.linspace(end, inside, 8).round().astype(int)
        if not all(_same_row(row(int(j)), ref) for j in probes):
            return end  # not one constant band: keep everything
        return inside

    lo = edge(0, 1)
    hi = edge(n - 1, -1)
    if hi <= lo + 1:
        return 0, n - 1
    return lo, hi


def _photopic_limit_magnitude(settings) -> float:
    """Faintest magnitude still seen with full cone vision (render's cone weight is 1),
    found by bisection on the render path; the middle of the range when there is none.

    The limit is the same for every temperature (at cone weight 1 the mesopic
    luminance is the photopic one: [CIE191]), so it is found at 5772 K.
    """
    from starkiln.engine.pipeline.render import render

    def full(m):
        return float(render(settings, 5772.0, m).cone_weight) >= 1.0

    lo, hi = MAGNITUDE_MIN, MAGNITUDE_MAX
    if not full(lo) or full(hi):
        return 0.0
    for _ in range(48):
        mid = 0.5 * (lo + hi)
        lo, hi = (mid, hi) if full(mid) else (lo, mid)
    return lo


def _rendered(settings, temperature_K, magnitude=None, cone_weight=None,
              dust_ebv=None) -> np.ndarray:
    """(..., 4) encoded r, g, b and intensity from the render path (and, into
    ``cone_weight`` when given, render's cone weight)."""
    from starkiln.engine.pipeline.render import render

    r = render(settings, temperature_K, magnitude, dust_ebv=dust_ebv)
    out = np.empty(r.rgb_encoded.shape[:-1] + (4,))
    out[..., :3] = r.rgb_encoded
    out[..., 3] = r.intensity
    if cone_weight is not None:
        cone_weight[...] = r.cone_weight
    return out


def _nodes_and_centres(render_at, temps, temps_mid, rows, rows_mid):
    """A 2-D grid's render outputs at its nodes (M, N, 4), at its cell centres and the centres'
    bilinear interpolation from the nodes (M - 1, N - 1, 4), float32, rendered
    :data:`_BUILD_ROWS` rows a call (bounded memory). ``render_at(temps, second, node_rows)``
    renders temperatures against the second axis (magnitudes or E(B-V)); ``node_rows`` is the
    slice of node rows being rendered, or None for cell centres."""
    n_m, n_t = rows.size, temps.shape[-1]
    out = np.empty((n_m, n_t, 4), dtype=np.float32)
    for j0 in range(0, n_m, _BUILD_ROWS):
        j1 = min(j0 + _BUILD_ROWS, n_m)
        out[j0:j1] = render_at(temps, rows[j0:j1, None], slice(j0, j1))
    centre_exact = np.empty((n_m - 1, n_t - 1, 4), dtype=np.float32)
    centre_interp = np.empty_like(centre_exact)
    for j0 in range(0, n_m - 1, _BUILD_ROWS):
        j1 = min(j0 + _BUILD_ROWS, n_m - 1)
        centre_exact[j0:j1] = render_at(temps_mid, rows_mid[j0:j1, None], None)
        c = out[j0:j1 + 1]
        centre_interp[j0:j1] = 0.25 * (c[:-1, :-1] + c[:-1, 1:] + c[1:, :-1] + c[1:, 1:])
    return out, centre_exact, centre_interp


def build_colour_grid(settings: Settings, with_magnitude: bool = False) -> ColourGrid:
    """Build the colour grid of the render path for ``settings`` (no caching).

    Parameters
    ----------
    settings : Settings
        Settings to render the grid with.
    with_magnitude : bool
        False: 1-D grid over temperature (no magnitudes). True: 2-D grid over
        temperature and magnitude (night-vision model).

    Returns
    -------
    ColourGrid

    References
    ----------
    Built by :func:`starkiln.engine.pipeline.render.render` only (see the module docstring).
    """
    if not with_magnitude:
        mired = grid_mired_nodes(GRID_NODES)
        nodes = _rendered(settings, node_temperatures(mired))
        centres = _rendered(settings, node_temperatures(0.5 * (mired[:-1] + mired[1:])))
        values = nodes.astype(np.float32)
        slopes = np.zeros_like(values)
        slopes[:-1] = values[1:] - values[:-1]
        flags = _exact_cells(settings, values.astype(np.float64), centres,
                             0.5 * (values[:-1] + values[1:]), mired)
        if flags is not None:
            flags = np.concatenate([flags, [False]])
        return ColourGrid(settings, mired, None, values, slopes, flags)
    mired = grid_mired_nodes(VISION_GRID_NODES)
    n_t = mired.size
    # The grid is shifted so that a node falls on the photopic limit (a kink for every
    # temperature at once); nodes just beyond -30 / +30 are rendered at -30 / +30.
    kink = _photopic_limit_magnitude(settings)
    first = kink - MAGNITUDE_STEP * np.ceil((kink - MAGNITUDE_MIN) / MAGNITUDE_STEP - 1e-9)
    n_m = int(np.ceil((MAGNITUDE_MAX - first) / MAGNITUDE_STEP - 1e-9)) + 1
    mags = first + MAGNITUDE_STEP * np.arange(n_m)
    temps = node_temperatures(mired)[None, :]
    # Brighter than some magnitude every output is constant (full cone vision, intensity
    # 1), and fainter than another too (rods only, intensity 0): keep only the rows in
    # between, plus one constant row at each end; lookups clamp to the kept rows.
    lo, hi = _changing_rows(settings, temps[0], np.clip(mags, MAGNITUDE_MIN, MAGNITUDE_MAX))
    mags = mags[lo:hi + 1]
    n_m = mags.size
    temps_mid = node_temperatures(0.5 * (mired[:-1] + mired[1:]))[None, :]
    mags_mid = np.clip(0.5 * (mags[:-1] + mags[1:]), MAGNITUDE_MIN, MAGNITUDE_MAX)
    render_mags = np.clip(mags, MAGNITUDE_MIN, MAGNITUDE_MAX)
    cone = np.empty((n_m, n_t))
    out, centre_exact, miss = _nodes_and_centres(
        lambda t, m, rows: _rendered(settings, t, m, None if rows is None else cone[rows]),
        temps, temps_mid, render_mags, mags_mid)
    # The mesopic fixed point drops to m = 0 (a step): cells whose corners have m = 0
    # and m > 0 hold the step.
    zero = cone <= 0.0
    mixed = zero[:-1, :-1] | zero[:-1, 1:] | zero[1:, :-1] | zero[1:, 1:]
    mixed &= ~(zero[:-1, :-1] & zero[:-1, 1:] & zero[1:, :-1] & zero[1:, 1:])
    cells = _exact_cells(settings, out, centre_exact, miss, mired, mags, known=mixed)
    flags = None
    if cells is not None:
        flags = np.zeros((n_m, n_t), dtype=bool)
        flags[:-1, :-1] = cells
        flags = flags.reshape(-1)
    slopes = np.zeros_like(out)
    slopes[:, :-1] = out[:, 1:] - out[:, :-1]
    return ColourGrid(settings, mired, mags, out.reshape(-1, 4), slopes.reshape(-1, 4), flags)


def build_dust_grid(settings: Settings) -> ColourGrid:
    """Build the temperature x E(B-V) colour grid of the render path (no magnitudes).

    Parameters
    ----------
    settings : Settings
        Settings to render the grid with (their own E(B-V) is replaced by each row's).

    Returns
    -------
    ColourGrid
        ``ebv_nodes`` from 0 to :data:`EBV_GRID_MAX` in steps of :data:`EBV_STEP`; rows of
        :data:`DUST_GRID_NODES` temperatures; the cells the other grids would render exactly
        (:func:`_exact_cells`) refined by a :data:`DUST_FINE` x :data:`DUST_FINE` sub-grid
        of render's values instead.

    References
    ----------
    Built by :func:`starkiln.engine.pipeline.render.render` only, with per-star
    ``dust_ebv`` (the module docstring of :mod:`starkiln.engine.catalogue.colour_grid`).
    """
    mired = grid_mired_nodes(DUST_GRID_NODES)
    ebv = np.linspace(0.0, EBV_GRID_MAX, int(round(EBV_GRID_MAX / EBV_STEP)) + 1)
    n_e, n_t = ebv.size, mired.size
    temps = node_temperatures(mired)[None, :]
    temps_mid = node_temperatures(0.5 * (mired[:-1] + mired[1:]))[None, :]
    ebv_mid = 0.5 * (ebv[:-1] + ebv[1:])
    out, centre_exact, centre_interp = _nodes_and_centres(
        lambda t, e, rows: _at_dust(settings, t, e), temps, temps_mid, ebv, ebv_mid)
    cells = _exact_cells(settings, out, centre_exact, centre_interp, mired, ebv,
                         at_rows=_at_dust)
    fine_cells = np.full((n_e, n_t), -1, dtype=np.int32)
    fine_values = np.zeros((0, DUST_FINE + 1, DUST_FINE + 1, 4), dtype=np.float32)
    if cells is not None:
        j, i = np.nonzero(cells)
        fine_cells[j, i] = np.arange(j.size, dtype=np.int32)
        fine_values = _fine_blocks(settings, mired, ebv, j, i)
    slopes = np.zeros_like(out)
    slopes[:, :-1] = out[:, 1:] - out[:, :-1]
    return ColourGrid(settings, mired, None, out.reshape(-1, 4), slopes.reshape(-1, 4), None,
                      ebv_nodes=ebv, fine_cells=fine_cells.reshape(-1),
                      fine_values=fine_values)


def _fine_blocks(settings, mired, ebv, j, i, per_call: int = 256) -> np.ndarray:
    """render's outputs on the DUST_FINE x DUST_FINE sub-grid of cells ``(j, i)``:
    (cells, DUST_FINE + 1, DUST_FINE + 1, 4), E(B-V) rows, temperature columns."""
    f = np.linspace(0.0, 1.0, DUST_FINE + 1)
    h_t, h_e = mired[1] - mired[0], ebv[1] - ebv[0]
    out = np.empty((j.size, DUST_FINE + 1, DUST_FINE + 1, 4), dtype=np.float32)
    for s0 in range(0, j.size, per_call):
        jj, ii = j[s0:s0 + per_call], i[s0:s0 + per_call]
        t = node_temperatures(mired[ii][:, None, None] + f[None, None, :] * h_t)
        e = ebv[jj][:, None, None] + f[None, :, None] * h_e
        t, e = np.broadcast_arrays(t, e)
        out[s0:s0 + per_call] = _at_dust(settings, t, e)
    return out
