"""The colour grid: the render path's outputs on a fine grid, interpolated, for catalogues.

Colouring a billion stars through the full spectral path costs a Planck spectrum
on 471 wavelengths per star. The colour of a blackbody is a smooth function of
temperature, so a catalogue is coloured from a grid of the render path's outputs
instead (a :class:`ColourGrid`; built by :mod:`starkiln.engine.catalogue.grid_build`,
kept by :mod:`starkiln.engine.catalogue.grid_cache`):

- **Without magnitudes**: :func:`starkiln.engine.pipeline.render.render` is called once on
  ``GRID_NODES`` temperatures evenly spaced in mired (10^6 / T,
  :mod:`starkiln.engine.colour.temperature_axis`) from 10 mired (100 000 K) to
  2000 mired (500 K), and each output channel (``rgb_encoded`` r, g, b and
  ``intensity``) is interpolated linearly in mired. Mired spacing is common
  practice for colour temperature because equal mired steps are close to equal
  steps of perceived colour.
- **With magnitudes** (night vision): the colour depends on temperature *and*
  magnitude, so the grid is two-dimensional: ``VISION_GRID_NODES``
  temperatures (mired) x magnitudes from -30 to 30 in steps of
  ``MAGNITUDE_STEP`` (shifted so that a node falls on the photopic limit,
  where the cone weight reaches 1: a kink at every temperature), filled by
  calling ``render(settings, T[None, :], magnitude[:, None])``, and
  interpolated bilinearly. Rows brighter or fainter than the magnitudes at which
  every output stops changing (full cone vision at intensity 1; rods only at
  intensity 0) are not stored: lookups clamp to the last changing row. A 2-D
  grid, rather than a temperature grid plus a separately vectorised vision
  model, keeps one render path: every number in the grid comes out of
  ``render`` and no step of the chain is repeated here.
- **With a dust column** (per-star E(B-V), no magnitudes): the colour depends on
  temperature and E(B-V), so the grid is two-dimensional the same way: ``DUST_GRID_NODES``
  temperatures (mired) x E(B-V) from 0 to ``EBV_GRID_MAX`` in steps of ``EBV_STEP``, filled
  by ``render(settings, T[None, :], dust_ebv=ebv[:, None])`` and interpolated bilinearly
  (the extinction curve is linear in E(B-V), [Cardelli1989] eq. 1, and the colour smooth
  along it). Its cells where interpolation misses render (found as for the other grids,
  1.3 % of them with the default settings) are not rendered per row but refined: each holds
  a ``DUST_FINE`` x ``DUST_FINE`` sub-grid rendered when the grid is built (about 9 s once,
  then read from disk), so a lookup never calls ``render``. Its error against
  ``render(dust_ebv=...)`` is measured in ``tests/test_path_outputs.py`` (CIEDE2000 at most
  0.1, measured 0.046; colour-science as the referee) and reported in docs/performance.md.
- **Cells rendered exactly**: where the render path is not smooth (the CIE 191
  mesopic step, kinks, dark channels at the gamut edge) a few per cent of the
  cells are marked when the grid is built; rows that fall into them are
  coloured by ``render`` itself (:mod:`starkiln.engine.catalogue.grid_build`).

Every grid belongs to one :class:`starkiln.engine.pipeline.settings.Settings` (cached per
settings object). The interpolation error against the exact path is proven
in ``tests/test_fastpath.py``: CIEDE2000 at most 0.2 over 500-100 000 K
(measured at most 0.01 without magnitudes, 0.07 with them), with colour-science
as the referee. In encoded values the grid is within 0.1/255 of ``render`` on
sRGB and Display P3; under gamma 2.6 and PQ a channel near zero at the gamut
edge (600-800 K) may differ by up to about 1.7/255 (0.007 % of temperatures),
invisibly (CIEDE2000 < 0.01 there).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from starkiln.engine.colour.temperature_axis import mired_to_temperature, temperature_to_mired
from starkiln.engine.eye.vision import MAGNITUDE_RANGE
from starkiln.engine.pipeline.settings import Settings
from starkiln.engine.stars.temperature import TEMPERATURE_MAX_K, TEMPERATURE_MIN_K

#: Mired range of the grids: 10^6 / 100 000 K .. 10^6 / 500 K.
MIRED_MIN = float(temperature_to_mired(TEMPERATURE_MAX_K))
MIRED_MAX = float(temperature_to_mired(TEMPERATURE_MIN_K))
#: Temperature nodes of the 1-D grid (measured CIEDE2000 <= 0.01, see module docstring).
GRID_NODES = 8192
#: Temperature nodes of the 2-D (vision) grid.
VISION_GRID_NODES = 2048
#: Magnitude range and step of the 2-D grid (render's accepted magnitude range).
MAGNITUDE_MIN, MAGNITUDE_MAX = MAGNITUDE_RANGE
MAGNITUDE_STEP = 0.1
#: Temperature nodes, E(B-V) step and largest E(B-V) of the dust grid (the render path's
#: accepted range, :data:`starkiln.engine.path.dust.EBV_RANGE`).
DUST_GRID_NODES = 2048
EBV_STEP = 0.05
EBV_GRID_MAX = 10.0
#: Sub-grid steps per side of a dust grid's refined cells.
DUST_FINE = 8
CHANNELS = ("r", "g", "b", "intensity")  # the four columns of a grid, in order


@dataclass(frozen=True, eq=False)
class ColourGrid:
    """A grid of the render path's outputs for one settings object, and its lookup.

    Attributes
    ----------
    settings : Settings
        The settings the grid was rendered with.
    mired_nodes : (N,) node positions in mired (10^6 / K), evenly spaced.
    magnitude_nodes : (M,) node magnitudes, or None for a 1-D grid.
    values : (N, 4) or (M * N, 4) float32: r, g, b (encoded) and intensity at the
        nodes, magnitude (or E(B-V)) rows one after the other (node ``(j, i)`` is row
        ``j * N + i``).
    slopes : float32 differences to the next temperature node, the shape of ``values``.
    exact_cells : bool array over cells (index ``j * N + i``), True where rows are
        rendered exactly (see the module docstring), or None when there is none.
    ebv_nodes : (M,) node E(B-V) values of a dust grid (rows of E(B-V) instead of
        magnitudes), or None.
    fine_cells : int32 array over cells (index ``j * N + i``): for a dust grid, the block of
        ``fine_values`` that refines the cell, -1 where none does; or None.
    fine_values : (B, FINE + 1, FINE + 1, 4) float32: render's outputs on a FINE x FINE
        sub-grid of each refined cell (E(B-V) rows, temperature columns), or None.
    """

    settings: Settings
    mired_nodes: np.ndarray
    magnitude_nodes: np.ndarray | None
    values: np.ndarray
    slopes: np.ndarray | None
    exact_cells: np.ndarray | None = None
    ebv_nodes: np.ndarray | None = None
    fine_cells: np.ndarray | None = None
    fine_values: np.ndarray | None = None

    @property
    def with_dust(self) -> bool:
        """True for the temperature x E(B-V) grid."""
        return self.ebv_nodes is not None

    @property
    def _rows(self) -> np.ndarray | None:
        """The nodes of the second axis (magnitudes or E(B-V)), or None for a 1-D grid."""
        return self.ebv_nodes if self.ebv_nodes is not None else self.magnitude_nodes

    @property
    def with_magnitude(self) -> bool:
        """True for the 2-D (temperature x magnitude) grid."""
        return self.magnitude_nodes is not None

    @property
    def nbytes(self) -> int:
        """Memory held by the grid's arrays."""
        arrays = (self.values, self.slopes, self.exact_cells, self.fine_cells,
                  self.fine_values)
        return int(sum(a.nbytes for a in arrays if a is not None))

    @property
    def exact_fraction(self) -> float:
        """Fraction of the grid's cells that are rendered exactly (for a dust grid: refined
        by its sub-grid)."""
        if self.fine_cells is not None:
            n_cells = (self.mired_nodes.size - 1) * (self._rows.size - 1)
            return float(np.count_nonzero(self.fine_cells >= 0)) / n_cells
        if self.exact_cells is None:
            return 0.0
        n_cells = (self.mired_nodes.size - 1) * (
            1 if self._rows is None else self._rows.size - 1)
        return float(np.count_nonzero(self.exact_cells)) / n_cells

    def lookup(self, temperature_K, magnitude=None, dust_ebv=None):
        """Interpolated r, g, b (encoded) and intensity for valid inputs.

        Parameters
        ----------
        temperature_K : array_like
            (n,) temperatures, already validated to 500-100 000 K.
        magnitude : array_like, optional
            (n,) apparent visual magnitudes, -30..30; required for (and only for)
            a 2-D grid over magnitudes.
        dust_ebv : array_like, optional
            (n,) E(B-V), 0-10 mag; required for (and only for) a dust grid.

        Returns
        -------
        tuple of numpy.ndarray
            Four float32 arrays ``(r, g, b, intensity)`` of shape (n,).

        References
        ----------
        Linear (1-D) and bilinear (2-D) interpolation on a uniform grid
        (common practice); the module docstring gives the grid.
        """
        if (magnitude is None) == self.with_magnitude or (dust_ebv is None) == self.with_dust:
            raise ValueError("a 2-D grid needs its second input (magnitudes or E(B-V)) and a "
                             "1-D grid takes none")
        t = np.asarray(temperature_K)
        n_t = self.mired_nodes.size
        # Position on the mired axis, in float32 (the grid index needs < 1e-4 cell).
        x = temperature_to_mired(t).astype(np.float32)
        x -= np.float32(self.mired_nodes[0])
        x *= np.float32((n_t - 1) / (self.mired_nodes[-1] - self.mired_nodes[0]))
        np.clip(x, 0.0, n_t - 1, out=x)
        i = x.astype(np.intp)
        np.minimum(i, n_t - 2, out=i)
        x -= i  # x is now the fraction within the cell
        # Each node's four float32 channels are gathered as one 16-byte item.
        packed = self.values.view(np.complex128).reshape(-1)
        second = dust_ebv if self.with_dust else magnitude
        if second is None:
            out = packed.take(i).view(np.float32).reshape(-1, 4)
            d = self.slopes.view(np.complex128).reshape(-1).take(i).view(np.float32)
            d = d.reshape(-1, 4)
            d *= x[:, None]
            out += d
            return self._exact_rows(out, i, t, None)
        rows = self._rows
        m = np.asarray(second).astype(np.float32)
        n_m = rows.size
        m -= np.float32(rows[0])
        m *= np.float32((n_m - 1) / (rows[-1] - rows[0]))
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
        if self.fine_cells is not None:
            k -= n_t
            return self._fine_rows(low, k, x, m)
        return self._exact_rows(low, k, t, magnitude, n_t, x, dust_ebv)

    def _fine_rows(self, out, cell, frac_t, frac_second):
        """Channels of ``out`` (n, 4) as four arrays, the rows in refined cells interpolated
        bilinearly on their cell's sub-grid instead (render's values at its nodes)."""
        channels = tuple(np.ascontiguousarray(out[:, c]) for c in range(4))
        block = self.fine_cells.take(cell)
        rows = np.flatnonzero(block >= 0)
        if rows.size == 0:
            return channels
        k = self.fine_values.shape[1] - 1
        b = block[rows]
        u = frac_t[rows].astype(np.float64) * k
        v = frac_second[rows].astype(np.float64) * k
        iu = np.minimum(u.astype(np.intp), k - 1)
        iv = np.minimum(v.astype(np.intp), k - 1)
        u = (u - iu)[:, None]
        v = (v - iv)[:, None]
        f = self.fine_values
        low = f[b, iv, iu] * (1 - u) + f[b, iv, iu + 1] * u
        high = f[b, iv + 1, iu] * (1 - u) + f[b, iv + 1, iu + 1] * u
        vals = low * (1 - v) + high * v
        for c in range(4):
            channels[c][rows] = vals[:, c]
        return channels

    def _exact_rows(self, out, cell, temperature_K, magnitude, shift=0, frac=None,
                    dust_ebv=None):
        """Channels of ``out`` (n, 4) as four arrays, with the rows that fall into marked
        cells overwritten by render's values.

        Without magnitudes those rows are rendered as they are. With magnitudes they are
        rendered at their own magnitude and at the two node temperatures of their cell,
        then interpolated in temperature (the colour is smooth along temperature; the
        render path then computes at most one spectrum per node temperature instead of
        one per row); where the two renders fall on either side of the mesopic step
        (cone weight 0 at one only), the row is rendered at its own temperature. A dust grid's
        rows are rendered at their own temperature and E(B-V).
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
        if dust_ebv is not None:
            r = render(self.settings, t, dust_ebv=np.asarray(dust_ebv, dtype=np.float64)[rows])
            vals = np.concatenate([r.rgb_encoded, r.intensity[:, None]], axis=1)
        elif magnitude is None:
            r = render(self.settings, t)
            vals = np.concatenate([r.rgb_encoded, r.intensity[:, None]], axis=1)
        else:
            mag = np.asarray(magnitude, dtype=np.float64)[rows]
            i = cell[rows] % self.mired_nodes.size
            f = frac[rows].astype(np.float64)[:, None]
            node_t = node_temperatures(self.mired_nodes)
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


def grid_mired_nodes(n: int) -> np.ndarray:
    """``n`` temperature nodes evenly spaced in mired over the grid's range.

    Parameters
    ----------
    n : int
        Number of nodes (at least 2).

    Returns
    -------
    numpy.ndarray
        (n,) mired values from :data:`MIRED_MIN` (100 000 K) to :data:`MIRED_MAX` (500 K).

    References
    ----------
    Mired scale: [WyszeckiStiles1982], section 3.11
    (:mod:`starkiln.engine.colour.temperature_axis`).
    """
    return np.linspace(MIRED_MIN, MIRED_MAX, n)


def node_temperatures(mired) -> np.ndarray:
    """Temperatures in kelvin of grid positions in mired, kept inside 500-100 000 K.

    Parameters
    ----------
    mired : array_like
        Positions in mired (nodes, cell centres, inner points).

    Returns
    -------
    numpy.ndarray
        Kelvin, same shape; ``1e6 / mired`` can land a hair outside the supported range
        at the ends, so the result is clipped to it.

    References
    ----------
    :func:`starkiln.engine.colour.temperature_axis.mired_to_temperature`.
    """
    return np.clip(mired_to_temperature(mired), TEMPERATURE_MIN_K, TEMPERATURE_MAX_K)
