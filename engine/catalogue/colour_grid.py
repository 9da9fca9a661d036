"""Fast path for catalogues: a fine table of the render path's outputs, interpolated.

Colouring a billion stars through the full spectral path costs a Planck spectrum
on 471 wavelengths per star. The colour of a blackbody is a smooth function of
temperature, so a catalogue is coloured from a table instead:

- **Without magnitudes**: :func:`starkiln.engine.pipeline.render.render` is called once on
  ``TABLE_NODES`` temperatures evenly spaced in mired (10^6 / T) from
  10 mired (100 000 K) to 2000 mired (500 K), and each output channel
  (``rgb_encoded`` r, g, b and ``intensity``) is interpolated linearly in mired.
  Mired spacing is common practice for colour temperature because equal mired
  steps are close to equal steps of perceived colour.
- **With magnitudes** (night vision): the colour depends on temperature *and*
  magnitude, so the table is two-dimensional: ``VISION_TABLE_NODES``
  temperatures (mired) x magnitudes from -30 to 30 in steps of
  ``MAGNITUDE_STEP`` (shifted so that a node falls on the photopic limit,
  where the cone weight reaches 1: a kink at every temperature), filled by
  calling ``render(settings, T[None, :], magnitude[:, None])``, and
  interpolated bilinearly. Rows brighter or fainter than the magnitudes at which
  every output stops changing (full cone vision at intensity 1; rods only at
  intensity 0) are not stored: lookups clamp to the last changing row. A 2-D
  table, rather than a temperature table plus a separately vectorised vision
  model, keeps one render path: every number in the table comes out of
  ``render`` and no step of the chain is repeated here.

**Cells rendered exactly.** The render path is not smooth everywhere: the CIE
191 mesopic fixed point drops to m = 0 for red stars near the scotopic limit (a
step in colour and intensity along a curve in the temperature-magnitude plane),
the cone weight and the tone curve have kinks, and dark channels under PQ bend
sharply at the gamut edge. So when a table is built, ``render`` is also called
at the centre of every cell, and again at inner points of suspect cells (those
next to a node where the values bend sharply); a cell where interpolation
misses the rendered value by more than ``CELL_TOLERANCE_DE`` (CIE 1976 colour
difference of the decoded colours, CIE 15:2004) or the intensity by more than
``CELL_TOLERANCE_INTENSITY`` is marked, with its suspect neighbours, and rows that fall into a marked cell are coloured by
``render`` itself (details in :func:`_exact_cells`). A few per cent of the
cells near those curves are marked (see the benchmark).

Every table belongs to one :class:`starkiln.engine.pipeline.settings.Settings` (cached per
settings object). The interpolation error against the exact path is proven
in ``tests/test_fastpath.py``: CIEDE2000 at most 0.2 over 500-100 000 K
(measured at most 0.01 without magnitudes, 0.07 with them), with colour-science
as the referee. In encoded values the table is within 0.1/255 of ``render`` on
sRGB and Display P3; under gamma 2.6 and PQ a channel near zero at the gamut
edge (600-800 K) may differ by up to about 1.7/255 (0.007 % of temperatures),
invisibly (CIEDE2000 < 0.01 there).
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache
from pathlib import Path

import numpy as np

from starkiln.engine.pipeline.settings import Settings
from starkiln.engine.stars.temperature import TEMPERATURE_MAX_K, TEMPERATURE_MIN_K
from starkiln.engine.eye.vision import MAGNITUDE_RANGE

#: Mired range of the tables: 10^6 / 100 000 K .. 10^6 / 500 K.
MIRED_MIN = 1e6 / TEMPERATURE_MAX_K
MIRED_MAX = 1e6 / TEMPERATURE_MIN_K
#: Temperature nodes of the 1-D table (measured CIEDE2000 <= 0.01, see module docstring).
TABLE_NODES = 8192
#: Temperature nodes of the 2-D (vision) table.
VISION_TABLE_NODES = 2048
#: Magnitude range and step of the 2-D table (render's accepted magnitude range).
MAGNITUDE_MIN, MAGNITUDE_MAX = MAGNITUDE_RANGE
MAGNITUDE_STEP = 0.1
#: Magnitude rows rendered per call while building the 2-D table (bounds memory).
_BUILD_ROWS = 32
#: A cell where interpolation misses the rendered colour by more than this CIE 1976
#: colour difference (Delta E*ab, CIE 15:2004 section 8.2.1; CIEDE2000 is smaller for
#: all but a few colours), or the intensity by more than CELL_TOLERANCE_INTENSITY, is
#: rendered exactly.
CELL_TOLERANCE_DE = 0.1
CELL_TOLERANCE_INTENSITY = 0.5 / 255.0
#: A node whose second difference exceeds this (Delta E*ab, or intensity) makes the
#: cells around it suspects, checked again at inner points (a kink or step is near).
BEND_TOLERANCE_DE = 0.2
BEND_TOLERANCE_INTENSITY = 1.0 / 255.0

CHANNELS = ("r", "g", "b", "intensity")  # the four columns of a table, in order
#: Version of the on-disk table format (part of the cache key).
TABLE_CACHE_FORMAT = 2


@dataclass(frozen=True, eq=False)
class ColourTable:
    """A table of the render path's outputs for one settings object.

    Attributes
    ----------
    settings : Settings
        The settings the table was rendered with.
    mired_nodes : (N,) node positions in mired (10^6 / K), evenly spaced.
    magnitude_nodes : (M,) node magnitudes, or None for a 1-D table.
    values : (N, 4) or (M * N, 4) float32: r, g, b (encoded) and intensity at the
        nodes, magnitude rows one after the other (node ``(j, i)`` is row ``j * N + i``).
    slopes : float32 differences to the next temperature node, the shape of ``values``.
    exact_cells : bool array over cells (index ``j * N + i``), True where rows are
        rendered exactly (see the module docstring), or None when there is none.
    """

    settings: Settings
    mired_nodes: np.ndarray
    magnitude_nodes: np.ndarray | None
    values: np.ndarray
    slopes: np.ndarray | None
    exact_cells: np.ndarray | None = None

    @property
    def with_magnitude(self) -> bool:
        """True for the 2-D (temperature x magnitude) table."""
        return self.magnitude_nodes is not None

    @property
    def nbytes(self) -> int:
        """Memory held by the table's arrays."""
        arrays = (self.values, self.slopes, self.exact_cells)
        return int(sum(a.nbytes for a in arrays if a is not None))

    @property
    def exact_fraction(self) -> float:
        """Fraction of the table's cells that are rendered exactly."""
        if self.exact_cells is None:
            return 0.0
        n_cells = (self.mired_nodes.size - 1) * (
            1 if self.magnitude_nodes is None else self.magnitude_nodes.size - 1)
        return float(np.count_nonzero(self.exact_cells)) / n_cells

    def lookup(self, temperature_K, magnitude=None):
        """Interpolated r, g, b (encoded) and intensity for valid inputs.

        Parameters
        ----------
        temperature_K : array_like
            (n,) temperatures, already validated to 500-100 000 K.
        magnitude : array_like, optional
            (n,) apparent visual magnitudes, -30..30; required for (and only for)
            a 2-D table.

        Returns
        -------
        tuple of numpy.ndarray
            Four float32 arrays ``(r, g, b, intensity)`` of shape (n,).

        References
        ----------
        Linear (1-D) and bilinear (2-D) interpolation on a uniform grid
        (common practice); the module docstring gives the grid.
        """
        if (magnitude is None) == self.with_magnitude:
            raise ValueError("a 2-D table needs magnitudes and a 1-D table takes none")
        t = np.asarray(temperature_K)
        n_t = self.mired_nodes.size
        # Position on the mired axis, in float32 (the grid index needs < 1e-4 cell).
        x = t.astype(np.float32)
        np.divide(np.float32(1e6), x, out=x)
        x -= np.float32(self.mired_nodes[0])
        x *= np.float32((n_t - 1) / (self.mired_nodes[-1] - self.mired_nodes[0]))
        np.clip(x, 0.0, n_t - 1, out=x)
        i = x.astype(np.intp)
        np.minimum(i, n_t - 2, out=i)
        x -= i  # x is now the fraction within the cell
        # Each node's four float32 channels are gathered as one 16-byte item.
        packed = self.values.view(np.complex128).reshape(-1)
        if not self.with_magnitude:
            out = packed.take(i).view(np.float32).reshape(-1, 4)
            d = self.slopes.view(np.complex128).reshape(-1).take(i).view(np.float32)
            d = d.reshape(-1, 4)
            d *= x[:, None]
            out += d
            return self._exact_rows(out, i, t, None)
        m = np.asarray(magnitude).astype(np.float32)
        n_m = self.magnitude_nodes.size
        m -= np.float32(self.magnitude_nodes[0])
        m *= np.float32((n_m - 1) / (self.magnitude_nodes[-1] - self.magnitude_nodes[0]))
        np.clip(m, 0.0, n_m - 1, out=m)
        j = m.astype(np.intp)
        np.minimum(j, n_m - 2, out=j)
        m -= j
        k = j * n_t
        k += i
        slopes = self.slopes.view(np.complex128).reshape(-1)  # to the next temperature node
        xs = x[:, None]
        low = packed.take(k).view(np.float32).reshape(-1, 4)
        d = slopes.take(k).view(np.float32).reshape(-1, 4)
        d *= xs
        low += d  # lower magnitude row, interpolated in temperature
        k += n_t
        high = packed.take(k).view(np.float32).reshape(-1, 4)
        d = slopes.take(k).view(np.float32).reshape(-1, 4)
        d *= xs
        high += d  # upper magnitude row
        high -= low
        high *= m[:, None]
        low += high
        return self._exact_rows(low, k, t, magnitude, n_t, x)

    def _exact_rows(self, out, cell, temperature_K, magnitude, shift=0, frac=None):
        """Channels of ``out`` (n, 4) as four arrays, with the rows that fall into marked
        cells overwritten by render's values.

        Without magnitudes those rows are rendered as they are. With magnitudes they are
        rendered at their own magnitude and at the two node temperatures of their cell,
        then interpolated in temperature (the colour is smooth along temperature; the
        render path then computes at most one spectrum per node temperature instead of
        one per row); where the two renders fall on either side of the mesopic step
        (cone weight 0 at one only), the row is rendered at its own temperature.
        """
        channels = tuple(np.ascontiguousarray(out[:, c]) for c in range(4))
        if self.exact_cells is None:
            return channels
        if shift:
            cell -= shift
        rows = np.flatnonzero(self.exact_cells.take(cell))
        if rows.size == 0:
            return channels
        from starkiln.engine.pipeline.render import render

        t = np.asarray(temperature_K, dtype=np.float64)[rows]
        if magnitude is None:
            r = render(self.settings, t)
            vals = np.concatenate([r.rgb_encoded, r.intensity[:, None]], axis=1)
        else:
            mag = np.asarray(magnitude, dtype=np.float64)[rows]
            i = cell[rows] % self.mired_nodes.size
            f = frac[rows].astype(np.float64)[:, None]
            node_t = _node_temperatures(self.mired_nodes)
            lo = render(self.settings, node_t[i], mag)
            hi = render(self.settings, node_t[i + 1], mag)
            vals = np.concatenate([lo.rgb_encoded, lo.intensity[:, None]], axis=1)
            vals += f * (np.concatenate([hi.rgb_encoded, hi.intensity[:, None]], axis=1) - vals)
            split = np.flatnonzero((lo.cone_weight <= 0.0) != (hi.cone_weight <= 0.0))
            if split.size:
                r = render(self.settings, t[split], mag[split])
                vals[split, :3] = r.rgb_encoded
                vals[split, 3] = r.intensity
        for c in range(4):
            channels[c][rows] = vals[:, c]
        return channels


def _mired_nodes(n: int) -> np.ndarray:
    return np.linspace(MIRED_MIN, MIRED_MAX, n)


def _node_temperatures(mired: np.ndarray) -> np.ndarray:
    # 1e6 / mired can land a hair outside the supported range at the ends.
    return np.clip(1e6 / mired, TEMPERATURE_MIN_K, TEMPERATURE_MAX_K)


def _lab(settings: Settings, encoded: np.ndarray) -> np.ndarray:
    """CIE 1976 L*a*b* of encoded display RGB, relative to the display white (for the
    tolerances only): CIE 15:2004 section 8.2.1, with the display's own decoding and
    primaries (:mod:`starkiln.engine.colour.displays`)."""
    d = settings.display
    XYZ = d.decode(encoded) @ d.rgb_to_XYZ.T / d.white_XYZ
    e = 216.0 / 24389.0
    k = 24389.0 / 27.0
    f = np.where(XYZ > e, np.cbrt(XYZ), (k * XYZ + 16.0) / 116.0)
    return np.stack([116.0 * f[..., 1] - 16.0, 500.0 * (f[..., 0] - f[..., 1]),
                     200.0 * (f[..., 1] - f[..., 2])], axis=-1)


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
    colour = np.linalg.norm(_lab(settings, exact[..., :3]) - _lab(settings, interp[..., :3]),
                            axis=-1)
    return (colour > CELL_TOLERANCE_DE) | \
        (np.abs(exact[..., 3] - interp[..., 3]) > CELL_TOLERANCE_INTENSITY)


def _confirm(settings, suspects: np.ndarray, nodes: np.ndarray, mired, mags) -> np.ndarray:
    """Suspect cells where interpolation misses render at one of 4 (or 4 x 4) inner points."""
    idx = np.nonzero(suspects)
    out = np.zeros_like(suspects)
    if idx[0].size == 0:
        return out
    f = np.array(_CONFIRM_FRACTIONS)
    h_t = mired[1] - mired[0]
    if mags is None:
        i = idx[0][:, None]
        exact = _rendered(settings, _node_temperatures(mired[i] + f * h_t))
        interp = nodes[i] * (1 - f[None, :, None]) + nodes[i + 1] * f[None, :, None]
        out[idx] = _misses(settings, exact, interp).any(axis=1)
        return out
    fx, fy = (g.reshape(-1) for g in np.meshgrid(f, f))
    h_m = mags[1] - mags[0]
    bad = np.zeros(idx[0].size, dtype=bool)
    for s0 in range(0, idx[0].size, 2048):
        j, i = idx[0][s0:s0 + 2048, None], idx[1][s0:s0 + 2048, None]
        exact = _rendered(settings, _node_temperatures(mired[i] + fx * h_t),
                          np.clip(mags[j] + fy * h_m, MAGNITUDE_MIN, MAGNITUDE_MAX))
        x, y = fx[None, :, None], fy[None, :, None]
        interp = ((nodes[j, i] * (1 - x) + nodes[j, i + 1] * x) * (1 - y)
                  + (nodes[j + 1, i] * (1 - x) + nodes[j + 1, i + 1] * x) * y)
        bad[s0:s0 + 2048] = _misses(settings, exact, interp).any(axis=1)
    out[idx] = bad
    return out


def _exact_cells(settings, nodes, centre_exact, centre_interp, mired, mags=None, known=None):
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
    lab = _lab(settings, nodes[..., :3])
    bend = np.zeros_like(bad)
    for axis in range(nodes.ndim - 1):
        bend |= _bend_cells(lab, axis, BEND_TOLERANCE_DE)
        bend |= _bend_cells(nodes[..., 3:], axis, BEND_TOLERANCE_INTENSITY)
    suspects = _grow(bad | bend)
    marked = bad | _confirm(settings, suspects & ~bad, nodes, mired, mags)
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
    luminance is the photopic one: CIE 191:2010), so it is found at 5772 K.
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


def _rendered(settings, temperature_K, magnitude=None, cone_weight=None) -> np.ndarray:
    """(..., 4) encoded r, g, b and intensity from the render path (and, into
    ``cone_weight`` when given, render's cone weight)."""
    from starkiln.engine.pipeline.render import render

    r = render(settings, temperature_K, magnitude)
    out = np.empty(r.rgb_encoded.shape[:-1] + (4,))
    out[..., :3] = r.rgb_encoded
    out[..., 3] = r.intensity
    if cone_weight is not None:
        cone_weight[...] = r.cone_weight
    return out


def _cache_key(settings: Settings, with_magnitude: bool) -> str:
    """Hash of everything a table depends on: settings, grid constants, the engine's code
    (every ``engine/*.py``) and the versions of numpy and colour-science (CIE tables)."""
    import hashlib
    import json
    from importlib import metadata

    h = hashlib.sha256()
    h.update(json.dumps(settings.to_dict(), sort_keys=True, default=str).encode())
    h.update(repr((with_magnitude, TABLE_NODES, VISION_TABLE_NODES, MAGNITUDE_MIN,
                   MAGNITUDE_MAX, MAGNITUDE_STEP, CELL_TOLERANCE_DE,
                   CELL_TOLERANCE_INTENSITY, BEND_TOLERANCE_DE,
                   BEND_TOLERANCE_INTENSITY, TABLE_CACHE_FORMAT)).encode())
    for path in sorted(Path(__file__).parent.glob("*.py")):
        h.update(path.name.encode())
        h.update(path.read_bytes())
    for package in ("numpy", "colour-science"):
        try:
            h.update(metadata.version(package).encode())
        except metadata.PackageNotFoundError:
            pass
    return h.hexdigest()[:32]


def _cache_file(settings: Settings, with_magnitude: bool) -> Path:
    from starkiln.engine.colour.cie_data import cache_dir

    return cache_dir() / f"colour-table-{_cache_key(settings, with_magnitude)}.npz"


def _load_cached(settings: Settings, path: Path) -> ColourTable | None:
    try:
        with np.load(path) as data:
            mags = data["magnitude_nodes"] if "magnitude_nodes" in data else None
            slopes = data["slopes"] if "slopes" in data else None
            cells = data["exact_cells"] if "exact_cells" in data else None
            return ColourTable(settings, data["mired_nodes"], mags, data["values"], slopes,
                               cells)
    except (OSError, KeyError, ValueError):
        return None


#: How many table files the cache folder keeps (older ones, e.g. from an earlier engine
#: version, are removed when a new one is saved).
CACHE_KEEP = 16


def _save_cached(table: ColourTable, path: Path) -> None:
    from starkiln.engine.colour.cie_data import write_npz_atomic

    arrays = {"mired_nodes": table.mired_nodes, "values": table.values}
    for name in ("magnitude_nodes", "slopes", "exact_cells"):
        if getattr(table, name) is not None:
            arrays[name] = getattr(table, name)
    try:
        write_npz_atomic(path, arrays)
        old = sorted(path.parent.glob("colour-table-*.npz"), key=lambda p: p.stat().st_mtime)
        for stale in old[:-CACHE_KEEP]:
            stale.unlink(missing_ok=True)
    except OSError:
        pass  # read-only cache folder: the table lives in this process only


@lru_cache(maxsize=8)
def colour_table(settings: Settings, with_magnitude: bool = False) -> ColourTable:
    """The (cached) interpolation table of the render path for ``settings``.

    Tables are kept in memory per process and on disk in the engine's cache folder
    (:func:`starkiln.engine.colour.cie_data.cache_dir`), keyed by a hash of the settings, the grid and
    the engine's source code, so a changed engine never reuses an old table.

    Parameters
    ----------
    settings : Settings
        Settings to render the table with.
    with_magnitude : bool
        False: 1-D table over temperature (no magnitudes). True: 2-D table over
        temperature and magnitude (night-vision model).

    Returns
    -------
    ColourTable

    References
    ----------
    Built by :func:`starkiln.engine.pipeline.render.render` only (see the module docstring).
    """
    path = _cache_file(settings, with_magnitude)
    table = _load_cached(settings, path)
    if table is None:
        table = build_colour_table(settings, with_magnitude)
        _save_cached(table, path)
    return table


def build_colour_table(settings: Settings, with_magnitude: bool = False) -> ColourTable:
    """Build the interpolation table of the render path for ``settings`` (no caching).

    Parameters
    ----------
    settings : Settings
        Settings to render the table with.
    with_magnitude : bool
        False: 1-D table over temperature (no magnitudes). True: 2-D table over
        temperature and magnitude (night-vision model).

    Returns
    -------
    ColourTable

    References
    ----------
    Built by :func:`starkiln.engine.pipeline.render.render` only (see the module docstring).
    """
    if not with_magnitude:
        mired = _mired_nodes(TABLE_NODES)
        nodes = _rendered(settings, _node_temperatures(mired))
        centres = _rendered(settings, _node_temperatures(0.5 * (mired[:-1] + mired[1:])))
        values = nodes.astype(np.float32)
        slopes = np.zeros_like(values)
        slopes[:-1] = values[1:] - values[:-1]
        flags = _exact_cells(settings, values.astype(np.float64), centres,
                             0.5 * (values[:-1] + values[1:]), mired)
        if flags is not None:
            flags = np.concatenate([flags, [False]])
        return ColourTable(settings, mired, None, values, slopes, flags)
    mired = _mired_nodes(VISION_TABLE_NODES)
    n_t = mired.size
    # The grid is shifted so that a node falls on the photopic limit (a kink for every
    # temperature at once); nodes just beyond -30 / +30 are rendered at -30 / +30.
    kink = _photopic_limit_magnitude(settings)
    first = kink - MAGNITUDE_STEP * np.ceil((kink - MAGNITUDE_MIN) / MAGNITUDE_STEP - 1e-9)
    n_m = int(np.ceil((MAGNITUDE_MAX - first) / MAGNITUDE_STEP - 1e-9)) + 1
    mags = first + MAGNITUDE_STEP * np.arange(n_m)
    temps = _node_temperatures(mired)[None, :]
    # Brighter than some magnitude every output is constant (full cone vision, intensity
    # 1), and fainter than another too (rods only, intensity 0): keep only the rows in
    # between, plus one constant row at each end; lookups clamp to the kept rows.
    lo, hi = _changing_rows(settings, temps[0], np.clip(mags, MAGNITUDE_MIN, MAGNITUDE_MAX))
    mags = mags[lo:hi + 1]
    n_m = mags.size
    temps_mid = _node_temperatures(0.5 * (mired[:-1] + mired[1:]))[None, :]
    mags_mid = np.clip(0.5 * (mags[:-1] + mags[1:]), MAGNITUDE_MIN, MAGNITUDE_MAX)
    render_mags = np.clip(mags, MAGNITUDE_MIN, MAGNITUDE_MAX)
    out = np.empty((n_m, n_t, 4), dtype=np.float32)
    cone = np.empty((n_m, n_t))
    for j0 in range(0, n_m, _BUILD_ROWS):
        j1 = min(j0 + _BUILD_ROWS, n_m)
        out[j0:j1] = _rendered(settings, temps, render_mags[j0:j1, None], cone[j0:j1])
    miss = np.zeros((n_m - 1, n_t - 1, 4), dtype=np.float32)
    centre_exact = np.empty_like(miss)
    for j0 in range(0, n_m - 1, _BUILD_ROWS):
        j1 = min(j0 + _BUILD_ROWS, n_m - 1)
        centre_exact[j0:j1] = _rendered(settings, temps_mid, mags_mid[j0:j1, None])
        c = out[j0:j1 + 1]
        miss[j0:j1] = 0.25 * (c[:-1, :-1] + c[:-1, 1:] + c[1:, :-1] + c[1:, 1:])
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
    return ColourTable(settings, mired, mags, out.reshape(-1, 4), slopes.reshape(-1, 4), flags)
