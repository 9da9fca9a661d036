"""Tabulated light paths: the arriving light's spectral sums on a lattice, for many stars.

With per-star E(B-V) or altitudes the exact render path (:func:`starkiln.engine.pipeline.render.render`)
makes one spectral pass per distinct (temperature, E(B-V), altitude) star: about 4 us a star,
the cost of a catalogue with a dust column or a plate through the air. Everything after the
spectral pass (adaptation, display matrix, gamut, night vision) is cheap per star. This module
replaces only that pass, when asked (``render(..., path_sums="table")``): the sums the chain
needs (the colour-matching functions, V, V' and the magnitude band, of the arriving spectrum,
and the band integral of the emitted one) are computed on a lattice of nodes and interpolated,
and the rest of the chain runs on them unchanged.

The lattice
-----------
- **Temperature**: :data:`TEMPERATURE_NODES` nodes even in ``u = ln(mired + 30)`` over
  500-100 000 K. A log sum is close to linear in mired where Wien's law holds (cool stars)
  and in ``ln T`` where the Rayleigh-Jeans tail does (hot stars); ``ln(mired + 30)`` is both
  at once (mired = 1e6 / T; [WyszeckiStiles1982] 3.11).
- **E(B-V)** (a per-star dust column): nodes every :data:`EBV_STEP_MAG` from 0 up to the
  largest value asked for so far (the lattice grows on demand, up to 10 mag). Each
  wavelength's transmission is exponential in E(B-V), so the log sums are nearly linear.
- **Air** (per-star altitudes): nodes every :data:`AIRMASS_STEP` in the Kasten & Young (1989)
  airmass X from the zenith's 0.9997 to the horizon's 37.92; the slant optical depth is close
  to linear in X.
- A path quantity that is the same for every star (the settings' fixed E(B-V) or altitude)
  is a single node, computed exactly. Which quantities are axes follows from what the caller
  gave per star, never from the values of a chunk, so a star's colour does not depend on its
  neighbours.

The logarithms of the sums are interpolated multi-linearly. Measured against the exact pass
over 20 000 random stars (500-100 000 K; E(B-V) 0-10 mag, or altitudes 0-90 degrees): the sums
within 8.3e-5 relative (below 1e-4 mag in brightness), the chromaticity xy within 6.5e-6, the
extinction within 2.3e-5 mag; on the display that is CIEDE2000 below 0.007 (with dust and
air both per star, on the coarser three-axis lattice: CIEDE2000 below 0.009, intensity within
2.1e-4, extinction within 2.9e-5 mag; tests/test_path_table.py holds the bounds). The
lattice is built once per process and path
(:func:`planck_weighted_sums` with one column per path node: one Planck pass per temperature
node), about 0.05 s for 80 dust nodes, and kept in memory (:data:`TABLE_BYTES_MAX` bounds it:
with a per-star dust column *and* per-star altitudes the lattice has three axes, on
:data:`TEMPERATURE_NODES_3D` temperatures and every :data:`AIRMASS_STEP_3D` in airmass, which
fits for E(B-V) up to 1.2 mag; a lattice that would not fit returns None and the caller
renders exactly).

References
----------
[KastenYoung1989] (airmass); [CIE15] section 7.1 (summation); module
:mod:`starkiln.engine.pipeline.render` for the chain.
"""

from __future__ import annotations

import threading
from dataclasses import dataclass

import numpy as np

from starkiln.engine.errors import InputRangeError

#: Temperature nodes (even in ln(mired + MIRED_OFFSET)).
TEMPERATURE_NODES = 1024
#: The offset of the temperature axis, mired.
MIRED_OFFSET = 30.0
#: Spacing of the E(B-V) nodes, mag.
EBV_STEP_MAG = 0.025
#: Spacing of the airmass nodes.
AIRMASS_STEP = 0.25
#: With E(B-V) *and* altitude per star the lattice has three axes: these coarser steps keep it
#: inside :data:`TABLE_BYTES_MAX` for E(B-V) up to 1.2 mag (about 1.5 s to build).
TEMPERATURE_NODES_3D = 512
AIRMASS_STEP_3D = 0.25
#: The largest lattice kept, bytes (beyond it the caller renders exactly).
TABLE_BYTES_MAX = 96 * 2 ** 20
#: The E(B-V) lattice grows in steps of this many nodes (so a catalogue's chunks share it).
EBV_GROW_NODES = 40

#: Nodes from 0 to the largest E(B-V) accepted (10 mag).
_EBV_NODES_MAX = int(round(10.0 / EBV_STEP_MAG)) + 1
_U_MIN = np.log(1e6 / 100_000.0 + MIRED_OFFSET)
_U_MAX = np.log(1e6 / 500.0 + MIRED_OFFSET)


def _u(temperature_K) -> np.ndarray:
    return np.log(1e6 / temperature_K + MIRED_OFFSET)


def temperature_nodes_K(n: int = TEMPERATURE_NODES) -> np.ndarray:
    """The lattice's temperature nodes, kelvin (hot to cool).

    Returns
    -------
    numpy.ndarray
        (``n``,) temperatures even in ``ln(mired + 30)``, clipped to
        500-100 000 K.

    References
    ----------
    Module docstring; [WyszeckiStiles1982] 3.11 (mired).
    """
    u = np.linspace(_U_MIN, _U_MAX, n)
    return np.clip(1e6 / (np.exp(u) - MIRED_OFFSET), 500.0, 100_000.0)


def airmass_nodes(step: float = AIRMASS_STEP) -> np.ndarray:
    """The lattice's airmass nodes: even from the zenith's Kasten & Young airmass (0.9997) to
    the horizon's (37.92).

    Returns
    -------
    numpy.ndarray
        (n,) airmasses, spacing at most ``step``.

    References
    ----------
    [KastenYoung1989] eq. 3 (37.92 at altitude 0).
    """
    from starkiln.engine.path.atmosphere import airmass_kasten_young

    zenith, horizon = (float(x) for x in airmass_kasten_young(np.array([90.0, 0.0])))
    return np.linspace(zenith, horizon, int(np.ceil((horizon - zenith) / step)) + 1)


def altitude_at_airmass_deg(airmass) -> np.ndarray:
    """The apparent altitude whose Kasten & Young (1989) airmass is ``airmass`` (1 to 37.92).

    The formula is inverted numerically (it is monotonic): linear interpolation in a table
    of the airmass every 0.001 degree, whose airmass is the asked one within 1e-6 relative.

    Parameters
    ----------
    airmass : array_like
        Relative optical airmass, 1 to the horizon's 37.92.

    Returns
    -------
    numpy.ndarray
        Degrees, 0-90.

    References
    ----------
    [KastenYoung1989] eq. 3.
    """
    from starkiln.engine.path.atmosphere import airmass_kasten_young

    h = np.linspace(0.0, 90.0, 90_001)
    x = airmass_kasten_young(h)
    return np.interp(np.asarray(airmass, dtype=np.float64), x[::-1], h[::-1])


@dataclass(frozen=True)
class PathTable:
    """The log spectral sums of arriving light on a lattice (module docstring).

    ``log_sums`` (float32: its rounding, 3e-6 relative at most, is far below the
    interpolation's) is (temperature nodes, E(B-V) nodes, air nodes, K + 1): the K weighting
    functions' sums, then the band integral of the arriving spectrum; ``log_emitted`` the band
    integral of the emitted one per temperature node. An axis of one node is fixed (no
    interpolation along it).
    """

    log_sums: np.ndarray
    log_emitted: np.ndarray
    ebv_step: float          # spacing of the E(B-V) nodes from 0 (one node: unused)
    airmass: np.ndarray | None  # the air nodes' airmasses (None: one node or no air)

    @property
    def ebv_nodes(self) -> int:
        """How many E(B-V) nodes the lattice has."""
        return self.log_sums.shape[1]

    def sums(self, temperature_K, ebv=None, altitude_deg=None):
        """Interpolated sums for stars: (sums (n, K), emitted (n,), arriving (n,)).

        Parameters
        ----------
        temperature_K : numpy.ndarray
            (n,) kelvin, 500-100 000 (checked by the caller).
        ebv : numpy.ndarray, optional
            (n,) E(B-V), mag, inside the lattice's range (per-star dust axis only).
        altitude_deg : numpy.ndarray, optional
            (n,) apparent altitudes, degrees (per-star air axis only).

        Returns
        -------
        tuple of numpy.ndarray
            As the render path's exact spectral pass gives per star.

        References
        ----------
        Module docstring (multi-linear interpolation of the logarithms).
        """
        from starkiln.engine.path.atmosphere import airmass_kasten_young

        n_u, n_e, n_x, c = self.log_sums.shape
        flat = self.log_sums.reshape(-1, c)
        n = temperature_K.size
        out = np.empty((n, c))
        emitted = np.empty(n)
        du = (_U_MAX - _U_MIN) / (n_u - 1)
        for lo in range(0, n, _BLOCK):
            sl = slice(lo, lo + _BLOCK)
            axes = []  # (index, weight, stride) per interpolated axis
            fu = (_u(temperature_K[sl]) - _U_MIN) / du
            iu = np.clip(fu.astype(np.intp), 0, n_u - 2)
            wu = fu - iu
            axes.append((iu, wu, n_e * n_x))
            if n_e > 1:
                fe = ebv[sl] / self.ebv_step
                ie = np.clip(fe.astype(np.intp), 0, n_e - 2)
                axes.append((ie, fe - ie, n_x))
            if n_x > 1:
                x_star = airmass_kasten_young(altitude_deg[sl])
                step = self.airmass[1] - self.airmass[0]
                fx = (x_star - self.airmass[0]) / step
                ix = np.clip(fx.astype(np.intp), 0, n_x - 2)
                axes.append((ix, fx - ix, 1))
            base = sum(i * stride for i, _, stride in axes)
            acc = np.zeros((base.size, c))
            for corner in range(1 << len(axes)):
                index = base.copy()
                weight = np.ones(base.size)
                for bit, (_, w, stride) in enumerate(axes):
                    if corner >> bit & 1:
                        index += stride
                        weight *= w
                    else:
                        weight *= 1.0 - w
                acc += flat[index] * weight[:, None]
            out[sl] = acc
            emitted[sl] = (1.0 - wu) * self.log_emitted[iu] + wu * self.log_emitted[iu + 1]
        np.exp(out, out=out)
        return out[:, :-1], np.exp(emitted), out[:, -1]


@dataclass(frozen=True)
class StarPath:
    """The path of the light for one render: fixed (settings) or per star (arrays).

    ``temperature_K`` is broadcast against the per-star arrays; ``ebv`` and ``alt`` are None
    for the settings' fixed path, else flat arrays of that shape (``alt`` None: no air).
    ``per_star_dust`` / ``per_star_air``: which of them came per star (the others are the
    settings' one value); ``tabulated``: their spectral sums may come from the lattice of
    :mod:`starkiln.engine.pipeline.path_table`.
    """

    temperature_K: np.ndarray
    ebv: np.ndarray | None
    alt: np.ndarray | None
    band: str
    per_star_dust: bool = False
    per_star_air: bool = False
    tabulated: bool = False

    @classmethod
    def of(cls, settings, t, dust_ebv, altitude_deg, band, tabulated=False):
        """The path of one render's stars: the settings' fixed one, or flat per-star arrays
        (E(B-V) and altitudes checked, broadcast against ``t``).

        References
        ----------
        :func:`starkiln.engine.path.dust.check_ebv`,
        :func:`starkiln.engine.path.atmosphere.check_altitude` (the accepted ranges).
        """
        from starkiln.engine.path import atmosphere as atm
        from starkiln.engine.path import dust

        if dust_ebv is None and altitude_deg is None:
            return cls(t, None, None, band)
        ebv = (np.asarray(settings.dust_ebv) if dust_ebv is None
               else dust.check_ebv(dust_ebv, "dust_ebv", error=InputRangeError))
        alt = (None if altitude_deg is None
               else atm.check_altitude(altitude_deg, error=InputRangeError))
        if alt is None and settings.altitude_deg is not None:
            alt = np.asarray(settings.altitude_deg)
        arrays = [t, ebv] + ([alt] if alt is not None else [])
        shape = np.broadcast_shapes(*(a.shape for a in arrays))
        flat = [np.ascontiguousarray(np.broadcast_to(a, shape), dtype=np.float64).reshape(-1)
                for a in arrays]
        return cls(flat[0].reshape(shape), flat[1], flat[2] if alt is not None else None, band,
                   dust_ebv is not None, altitude_deg is not None, tabulated)


def lattice_sums(settings, t_nodes: np.ndarray, weights: np.ndarray, band: str,
                  ebv_nodes: np.ndarray, alt_nodes: np.ndarray | None):
    """What the render path's spectral pass gives per star, on a lattice: every temperature node
    against every path node (E(B-V), altitude pairs; ``alt_nodes`` None: the settings' air).

    Returns (sums (T, P, K), emitted (T,), arriving (T, P)). The transmissions are computed
    once per path node and folded into the weighting functions, so the lattice costs one
    Planck pass per temperature node (:func:`planck_weighted_sums` with ``P x K`` columns)
    instead of one per (temperature, path) pair.

    References
    ----------
    [CIE15] section 7.1 (summation); [Planck1901]; :func:`starkiln.engine.path.chain.path_transmission`.
    """
    from starkiln.engine.colour import photometry as ph
    from starkiln.engine.colour.cie_data import wavelengths_nm
    from starkiln.engine.colour.spectrum import planck_weighted_sums
    from starkiln.engine.eye.brightness import band_on_colour_grid, band_support
    from starkiln.engine.path.chain import path_transmission

    n_t, k = t_nodes.size, weights.shape[1]
    on_colour = band_on_colour_grid(band)
    wl_b, w_b, sl_b = band_support(band)
    colour_wl = wavelengths_nm()
    if on_colour is None:
        grid = ph.PHOTOMETRY_GRID_NM
        lo = int(np.searchsorted(grid, colour_wl[0]))
        sl_c = slice(lo, lo + weights.shape[0])
        cols = weights
    else:  # V: the colour grid suffices, the band is one more column
        grid, sl_c = colour_wl, slice(0, colour_wl.size)
        cols = np.column_stack([weights, on_colour])
    tr = np.atleast_2d(path_transmission(settings, grid, ebv_nodes, alt_nodes))  # (P, N)
    p = tr.shape[0]
    folded = cols[:, None, :] * tr[:, sl_c].T[:, :, None]               # (N, P, K [+1])
    sums = planck_weighted_sums(t_nodes, folded.reshape(cols.shape[0], -1))
    sums = sums.reshape(n_t, p, cols.shape[1])
    if on_colour is None:
        emitted = planck_weighted_sums(t_nodes, w_b[:, None], wl_b)[:, 0]
        arriving = planck_weighted_sums(t_nodes, w_b[:, None] * tr[:, sl_b].T, wl_b)
    else:
        emitted = planck_weighted_sums(t_nodes, on_colour[:, None])[:, 0]
        arriving = sums[:, :, k]
    return sums[:, :, :k], emitted, arriving


#: Path nodes per slice of the lattice's build (the folded weights about 23 MB a slice).
_BUILD_NODES = 1024
#: Stars per block of the interpolation (the gathers stay in cache-sized pieces).
_BLOCK = 65536
_LOCK = threading.Lock()
_TABLES: dict = {}


def _key(settings, weights_key, band, stars):
    air = None
    if stars.alt is not None:
        air = (settings.site_height_m, settings.aerosol_tau550, settings.angstrom_exponent,
               settings.ozone_du, "axis" if stars.per_star_air else float(stars.alt[0]))
    dust = "axis" if stars.per_star_dust else float(stars.ebv[0])
    return (weights_key, band, settings.dust_law, settings.dust_rv, dust, air)


def _build(settings, weights, band, stars, n_e) -> PathTable | None:
    both = stars.per_star_dust and stars.per_star_air
    t_nodes = temperature_nodes_K(TEMPERATURE_NODES_3D if both else TEMPERATURE_NODES)
    ebv = (np.arange(n_e) * EBV_STEP_MAG if stars.per_star_dust
           else np.array([float(stars.ebv[0])]))
    airmass = None
    if stars.alt is None:
        alt = None
    elif stars.per_star_air:
        airmass = airmass_nodes(AIRMASS_STEP_3D if both else AIRMASS_STEP)
        alt = altitude_at_airmass_deg(airmass)
    else:
        alt = np.array([float(stars.alt[0])])
    n_x = 1 if alt is None else alt.size
    columns = weights.shape[1] + 1
    if t_nodes.size * ebv.size * n_x * columns * 4 > TABLE_BYTES_MAX:
        return None
    e_grid, a_grid = ebv, alt
    if alt is not None:
        e_grid, a_grid = (g.reshape(-1) for g in np.meshgrid(ebv, alt, indexing="ij"))
    log_sums = np.empty((t_nodes.size, e_grid.size, columns), dtype=np.float32)
    for lo in range(0, e_grid.size, _BUILD_NODES):  # path nodes in slices: bounded memory
        sl = slice(lo, lo + _BUILD_NODES)
        sums, emitted, arriving = lattice_sums(settings, t_nodes, weights, band, e_grid[sl],
                                               None if a_grid is None else a_grid[sl])
        with np.errstate(divide="ignore"):
            log_sums[:, sl, :-1] = np.log(sums)
            log_sums[:, sl, -1] = np.log(arriving)
    with np.errstate(divide="ignore"):
        log_emitted = np.log(emitted)
    log_sums = log_sums.reshape(t_nodes.size, ebv.size, n_x, columns)
    if not (np.all(np.isfinite(log_sums)) and np.all(np.isfinite(log_emitted))):
        return None  # a sum that underflows to 0: this path is rendered exactly
    return PathTable(log_sums, log_emitted, EBV_STEP_MAG, airmass)


def tabulated_sums(settings, weights: np.ndarray, weights_key, band: str, temperature_K,
                   stars):
    """The spectral sums of stars on per-star paths from the (cached) lattice, or None.

    Parameters
    ----------
    settings : Settings
        Dust law, R_V and the air (site height, aerosol, ozone) of the path.
    weights : numpy.ndarray
        (N, K) the weighting functions on the colour grid (as the render path passes them).
    weights_key : hashable
        What ``weights`` are (observer, with V and V' or not): part of the cache key.
    band : str
        The magnitudes' band (``V`` or ``G``).
    temperature_K : numpy.ndarray
        (n,) kelvin.
    stars : StarPath
        The per-star E(B-V) and altitudes (and whether each is an axis or one value).

    Returns
    -------
    tuple or None
        (sums (n, K), emitted (n,), arriving (n,)) as the exact pass gives them, or None
        when the lattice would exceed :data:`TABLE_BYTES_MAX` (the caller renders exactly).

    References
    ----------
    Module docstring.
    """
    key = _key(settings, weights_key, band, stars)
    n_e = 1
    if stars.per_star_dust:
        need = int(np.floor(float(stars.ebv.max()) / EBV_STEP_MAG)) + 2
        grow = 8 if stars.per_star_air else EBV_GROW_NODES  # three axes: grow finely
        n_e = min(-(-need // grow) * grow, _EBV_NODES_MAX)
    with _LOCK:
        table = _TABLES.get(key)
        if table is None or table.ebv_nodes < n_e:
            if table is not None:
                n_e = max(n_e, table.ebv_nodes)
            table = _build(settings, weights, band, stars, n_e)
            if table is None:
                return None
            if len(_TABLES) >= _TABLES_KEPT:
                _TABLES.pop(next(iter(_TABLES)))
            _TABLES[key] = table
    return table.sums(temperature_K, stars.ebv if stars.per_star_dust else None,
                      stars.alt if stars.per_star_air else None)


#: How many lattices a process keeps (the oldest goes first).
_TABLES_KEPT = 8

