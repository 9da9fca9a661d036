"""Dereddening observed colour indices: the intrinsic B-V or BP-RP behind a dust column.

Method. Dust reddens a colour index by the colour excess ``E(X-Y) = (X-Y)_observed -
(X-Y)_intrinsic``. Through finite passbands the excess depends on the spectrum as well as on
the dust column (a cool star's B flux sits redder in the band than a hot star's, so the same
dust reddens it less: [BessellMurphy2012] section 2 on effective wavelengths; common
practice). So the excess is not a fixed coefficient times E(B-V) here; it is computed by
synthetic photometry ([BessellMurphy2012] eq. 1; [Riello2021] section 5.4) for the spectrum
the rest of Starkiln uses for a colour index, a blackbody ([Planck1901]):

1. find the blackbody temperature T whose spectrum seen through the dust,
   ``Planck(T) x dust_transmission(E(B-V))`` ([Cardelli1989] eq. 1, with the law of
   [Gordon2023], [Fitzpatrick1999] or [Cardelli1989] through [DustExtinction]), has the
   observed synthetic index;
2. the intrinsic index is the synthetic index of ``Planck(T)`` without the dust (equally,
   the observed index minus the excess of that spectrum).

Here "E(B-V)" is the dust column's nominal colour excess as the laws use it, ``A_V / R_V``
([Cardelli1989] section I); the synthetic excess of a given star's B-V differs from it by a
few per cent (smallest for hot stars, which define it: common practice).

Speed. For each (index, law, R_V) one table is built on first use (under a second with the
dust law's import; cached in memory): the synthetic index of blackbodies on
:data:`MIRED_NODES` nodes evenly spaced from 0 mired (T -> infinity, the Rayleigh-Jeans
limit) to 2000 mired (500 K), without dust and through dust columns on :data:`EBV_NODES`
nodes evenly spaced over 0-10 mag. The reddened index grows
with mired at every E(B-V), so each row is inverted once onto :data:`LOOKUP_NODES` observed
values evenly spaced over the row's range (the intrinsic index and mired there, linear in
mired between the nodes). A star's lookup is then arithmetic: the two rows about its E(B-V),
linear within each row and linear in E(B-V) between them (no search, no per-star Python
loop); one dust column for every star (a scalar E(B-V), as a catalogue's) has its own
inverse, built once. Interpolation keeps within 1e-4 mag of the direct synthetic photometry
(``tests/test_deredden.py`` compares with speclite and dust-extinction).

Out of range. An observed index bluer than the Rayleigh-Jeans blackbody seen through the same
dust (bluer than any reddened blackbody can be), or redder than the 500 K blackbody through
it, has no blackbody behind it: :func:`intrinsic_index` raises a one-line
:class:`starkiln.engine.errors.InputRangeError` naming the first such value and the accepted
range, as :func:`starkiln.engine.stars.temperature.temperature_from_index` does; :func:`deredden`
returns NaN there with a status code per star (:data:`DEREDDEN_STATUSES`).

References
----------
[BessellMurphy2012]; [Riello2021]; [Planck1901]; [Cardelli1989]; [Gordon2023];
[Fitzpatrick1999]; [DustExtinction].
"""

from __future__ import annotations

from functools import lru_cache
from typing import NamedTuple

import numpy as np

from starkiln.engine.errors import InputRangeError

#: Mired nodes of the table, evenly spaced from 0 (T -> infinity) to 2000 (500 K).
MIRED_NODES = 2049
MIRED_MAX = 2000.0
#: E(B-V) nodes of the table, evenly spaced over the accepted 0-10 mag.
EBV_NODES = 401
#: Per-star statuses of :func:`deredden`, in the order of their codes.
DEREDDEN_STATUSES = ("ok", "bluer-than-reddened-blackbody", "redder-than-reddened-blackbody",
                     "not-a-number")
OK, TOO_BLUE, TOO_RED, NOT_A_NUMBER = range(len(DEREDDEN_STATUSES))
#: Observed-index nodes of each E(B-V) row's inverse, evenly spaced over the row's range.
LOOKUP_NODES = 4097


class Dereddened(NamedTuple):
    """The result of :func:`deredden`, one value per star (NaN where the status is not ok).

    Attributes
    ----------
    intrinsic_mag : numpy.ndarray
        The dust-free synthetic index of the matched blackbody.
    excess_mag : numpy.ndarray
        ``observed - intrinsic``: the colour excess of that spectrum.
    temperature_K : numpy.ndarray
        The matched blackbody's temperature (``inf`` at the Rayleigh-Jeans limit; within
        0.5 %, interpolated in mired).
    status : numpy.ndarray
        uint8 codes into :data:`DEREDDEN_STATUSES`.
    """

    intrinsic_mag: np.ndarray
    excess_mag: np.ndarray
    temperature_K: np.ndarray
    status: np.ndarray


class _Table(NamedTuple):
    mired: np.ndarray      # (M,)
    intrinsic: np.ndarray  # (M,) dust-free index at the nodes
    reddened: np.ndarray   # (E, M) index through the dust of each E(B-V) node
    ebv_step: float
    first: np.ndarray      # (E,) each row's bluest observed index (the lookup's first node)
    per_mag: np.ndarray    # (E,) lookup nodes per mag of each row
    lookup_intrinsic: np.ndarray  # (E * K,) intrinsic index at the rows' observed nodes
    lookup_mired: np.ndarray      # (E * K,) mired there


def _check_law(law, rv) -> tuple[str, float]:
    from starkiln.engine.path.dust import check_dust_law, check_rv

    name = check_dust_law(law)
    return name, check_rv(rv, name)


@lru_cache(maxsize=16)
def _table(index: str, law: str, rv: float) -> _Table:
    """The blackbody index table of one (index, law, R_V) (module docstring)."""
    from starkiln.engine.colour import photometry as ph
    from starkiln.engine.path.dust import EBV_RANGE, dust_transmission

    blue, red = ph.INDICES[index]
    mired = np.linspace(0.0, MIRED_MAX, MIRED_NODES)
    with np.errstate(divide="ignore"):
        spectra = ph._planck_on_grid(1e6 / mired)  # mired 0 -> T = inf -> lambda^-4
    spectra /= spectra.max(axis=1, keepdims=True)  # any scale: indices are ratios
    ebv = np.linspace(EBV_RANGE[0], EBV_RANGE[1], EBV_NODES)
    trans = dust_transmission(ph.PHOTOMETRY_GRID_NM, ebv, law, rv)  # (E, 801)
    zero = (2.5 * np.log10(ph.vega_band_flux(blue) / ph.vega_band_flux(red))
            + ph.VEGA_MAGNITUDES[blue] - ph.VEGA_MAGNITUDES[red])
    # Band flux through dust: sum P T w = P @ (T w).T, one matrix product per band.
    with np.errstate(divide="ignore", invalid="ignore"):
        reddened = -2.5 * np.log10((trans * ph.band_weights(blue)) @ spectra.T
                                   / ((trans * ph.band_weights(red)) @ spectra.T)) + zero
    intrinsic = reddened[0].copy()  # E(B-V) = 0: transmission exactly 1
    if not (np.isfinite(reddened).all() and np.all(np.diff(reddened, axis=1) > 0)):
        raise RuntimeError(f"the reddened blackbody {index} table is not monotonic in mired"
                           )  # pragma: no cover - physics says it cannot happen
    first, last = reddened[:, 0].copy(), reddened[:, -1].copy()
    per_mag = (LOOKUP_NODES - 1) / (last - first)
    lookup_intrinsic = np.empty((EBV_NODES, LOOKUP_NODES))
    lookup_mired = np.empty((EBV_NODES, LOOKUP_NODES))
    for j in range(EBV_NODES):  # 401 rows, once per table: the inverse of each row
        nodes = np.linspace(first[j], last[j], LOOKUP_NODES)
        lookup_intrinsic[j] = np.interp(nodes, reddened[j], intrinsic)
        lookup_mired[j] = np.interp(nodes, reddened[j], mired)
    arrays = (mired, intrinsic, reddened, first, per_mag,
              lookup_intrinsic.ravel(), lookup_mired.ravel())
    for a in arrays:
        a.setflags(write=False)
    return _Table(mired, intrinsic, reddened, float(ebv[1] - ebv[0]), *arrays[3:])


def _rows(table: _Table, ebv: np.ndarray):
    """Lower row and fraction in E(B-V) (clipped to the table)."""
    x = np.clip(ebv / table.ebv_step, 0.0, EBV_NODES - 1.0)
    j = np.minimum(x.astype(np.intp), EBV_NODES - 2)
    return j, x - j


def _reddened_at(table: _Table, j, f, i) -> np.ndarray:
    r = table.reddened
    return r[j, i] + f * (r[j + 1, i] - r[j, i])


def _lookup(table: _Table, observed, j, f) -> tuple[np.ndarray, np.ndarray]:
    """(intrinsic index, mired) of observed indices already checked, rows ``j`` and fractions
    ``f`` in E(B-V): linear in each row's inverse, then linear in E(B-V)."""
    intrinsic = np.zeros(observed.shape)
    mired = np.zeros(observed.shape)
    for row, weight in ((j, 1.0 - f), (j + 1, f)):  # the two E(B-V) rows about each star
        x = observed - table.first[row]
        x *= table.per_mag[row]
        i = np.clip(x.astype(np.intp), 0, LOOKUP_NODES - 2)
        x -= i  # in [0, 1) inside the row; a little beyond at its ends (linear extension)
        i += row * LOOKUP_NODES
        for values, out in ((table.lookup_intrinsic, intrinsic), (table.lookup_mired, mired)):
            v0 = values.take(i)
            out += weight * (v0 + x * (values.take(i + 1) - v0))
    return intrinsic, mired


@lru_cache(maxsize=64)
def _column_lookup(index: str, law: str, rv: float, ebv: float):
    """One dust column's inverse on evenly spaced observed values (from :func:`_lookup`)."""
    table = _table(index, law, rv)
    j, f = _rows(table, np.array([ebv]))
    lo, hi = _reddened_at(table, j, f, 0)[0], _reddened_at(table, j, f, MIRED_NODES - 1)[0]
    nodes = np.linspace(lo, hi, LOOKUP_NODES)
    intrinsic, mired = _lookup(table, nodes, np.repeat(j, LOOKUP_NODES),
                               np.repeat(f, LOOKUP_NODES))
    intrinsic, mired = np.append(intrinsic, intrinsic[-1]), np.append(mired, mired[-1])
    slopes = np.append(np.diff(intrinsic), 0.0), np.append(np.diff(mired), 0.0)
    return float(lo), (LOOKUP_NODES - 1) / float(hi - lo), (intrinsic, mired), slopes


def _one_column(index: str, law: str, rv: float, ebv: float, observed):
    """(intrinsic index, mired) of checked observed indices behind one dust column."""
    lo, per_mag, values, slopes = _column_lookup(index, law, rv, ebv)
    x = observed - lo
    x *= per_mag
    np.clip(x, 0.0, LOOKUP_NODES - 1.0, out=x)
    i = x.astype(np.intp)
    x -= i
    return tuple(v.take(i) + x * s.take(i) for v, s in zip(values, slopes))


def deredden(index_name: str, observed_index_mag, ebv_mag, *, law: str = "G23",
             rv: float = 3.1) -> Dereddened:
    """Intrinsic colour indices of many stars, with a status per star (never raises on a star).

    Parameters
    ----------
    index_name : {"B-V", "BP-RP"}
    observed_index_mag : array_like
        Observed (reddened) indices, mag.
    ebv_mag : array_like
        The dust columns' E(B-V), mag, 0-10 (broadcast against the indices; checked: a bad
        value raises, since it is one setting or one checked column).
    law : {"G23", "F99", "CCM89"}
    rv : float
        R_V within the law's range.

    Returns
    -------
    Dereddened
        ``intrinsic_mag``, ``excess_mag``, ``temperature_K`` (NaN where not ok) and
        ``status`` (:data:`DEREDDEN_STATUSES`), each of the broadcast shape.

    References
    ----------
    [BessellMurphy2012] eq. 1; [Riello2021] section 5.4; [Planck1901]; [Cardelli1989] eq. 1;
    [Gordon2023]; [Fitzpatrick1999]; [DustExtinction]. Method: the module docstring.

    Examples
    --------
    A hot star behind E(B-V) = 0.5 has a B-V excess close to 0.5 (hot stars define
    E(B-V): common practice):

    >>> out = deredden("B-V", [0.2, 0.8], 0.5)
    >>> [round(float(x), 1) for x in out.excess_mag], [int(s) for s in out.status]
    ([0.5, 0.5], [0, 0])
    """
    from starkiln.engine.colour.photometry import check_index
    from starkiln.engine.path.dust import check_ebv

    index = check_index(index_name)
    law, rv = _check_law(law, rv)
    obs = np.asarray(observed_index_mag, dtype=np.float64)
    ebv = check_ebv(ebv_mag, "E(B-V)", error=InputRangeError)
    obs, ebv = np.broadcast_arrays(obs, np.asarray(ebv, dtype=np.float64))
    shape = obs.shape
    o, e = obs.ravel(), ebv.ravel()
    table = _table(index, law, rv)
    j, f = _rows(table, e)
    status = np.zeros(o.shape, dtype=np.uint8)
    finite = np.isfinite(o)
    status[~finite] = NOT_A_NUMBER
    last = MIRED_NODES - 1
    with np.errstate(invalid="ignore"):
        status[finite & (o < _reddened_at(table, j, f, 0))] = TOO_BLUE
        status[finite & (o > _reddened_at(table, j, f, last))] = TOO_RED
    ov = np.where(status == OK, o, table.first[0])
    if np.ndim(ebv_mag) == 0:  # one dust column for every star (a catalogue's --ebv)
        intrinsic, mired = _one_column(index, law, rv, float(e[0]) if e.size else 0.0, ov)
    else:
        intrinsic, mired = _lookup(table, ov, j, f)
    with np.errstate(divide="ignore"):
        temperature = 1e6 / np.maximum(mired, 0.0)
    bad = status != OK
    intrinsic[bad] = np.nan
    temperature[bad] = np.nan
    excess = o - intrinsic
    return Dereddened(intrinsic.reshape(shape), excess.reshape(shape),
                      temperature.reshape(shape), status.reshape(shape))


def reddened_range(index_name: str, ebv_mag: float, *, law: str = "G23",
                   rv: float = 3.1) -> tuple[float, float]:
    """The observed indices a blackbody behind this dust can have: ``(bluest, reddest)``.

    The bluest is the Rayleigh-Jeans limit (T -> infinity) seen through the dust, the reddest
    the 500 K blackbody through it.

    References
    ----------
    [Planck1901] (the Rayleigh-Jeans limit); [BessellMurphy2012] eq. 1; [Cardelli1989] eq. 1.
    """
    from starkiln.engine.colour.photometry import check_index
    from starkiln.engine.path.dust import check_ebv

    table = _table(check_index(index_name), *_check_law(law, rv))
    e = check_ebv(float(ebv_mag), "E(B-V)", error=InputRangeError)
    j, f = _rows(table, np.atleast_1d(e))
    return (float(_reddened_at(table, j, f, 0)[0]),
            float(_reddened_at(table, j, f, MIRED_NODES - 1)[0]))


def intrinsic_index(index_name: str, observed_index_mag, ebv_mag, *, law: str = "G23",
                    rv: float = 3.1) -> np.ndarray:
    """The intrinsic (dust-free) colour index behind an observed, reddened one.

    Parameters
    ----------
    index_name : {"B-V", "BP-RP"}
    observed_index_mag : array_like
        Observed indices, mag.
    ebv_mag : array_like
        E(B-V) of the dust in front of each star, mag, 0-10 (broadcast).
    law : {"G23", "F99", "CCM89"}
        The dust law ([Gordon2023] default, [Fitzpatrick1999], [Cardelli1989]).
    rv : float
        R_V within the law's range (default 3.1).

    Returns
    -------
    numpy.ndarray
        The synthetic index of the blackbody whose reddened synthetic index is the observed
        one (module docstring), the broadcast shape.

    Raises
    ------
    starkiln.engine.errors.InputRangeError
        An index that no blackbody behind this dust can show (named, with the range), or not
        finite; a bad E(B-V), law or R_V.

    References
    ----------
    [BessellMurphy2012] eq. 1; [Riello2021] section 5.4; [Planck1901]; [Cardelli1989] eq. 1;
    [Gordon2023]; [Fitzpatrick1999]; [DustExtinction].

    Examples
    --------
    No dust, no change:

    >>> round(float(intrinsic_index("B-V", 0.65, 0.0)), 6)
    0.65
    """
    from starkiln.engine.colour.photometry import check_index

    index = check_index(index_name)
    out = deredden(index, observed_index_mag, ebv_mag, law=law, rv=rv)
    bad = out.status != OK
    if np.any(bad):
        first = np.flatnonzero(bad.ravel())[0]
        x = float(np.broadcast_to(np.asarray(observed_index_mag, dtype=np.float64),
                                  bad.shape).ravel()[first])
        e = float(np.broadcast_to(np.asarray(ebv_mag, dtype=np.float64), bad.shape).ravel()[first])
        if not np.isfinite(x):
            raise InputRangeError(f"observed {index} {x:g} is not finite; accepted: a finite "
                                  "number")
        lo, hi = reddened_range(index, e, law=law, rv=rv)
        side = "bluer" if x < lo else "redder"
        raise InputRangeError(f"observed {index} {x:g} is {side} than any blackbody behind "
                              f"E(B-V) {e:g} ({law}, R_V {float(rv):g}) can be; accepted: "
                              f"{lo:.3f} to {hi:.2f}")
    return out.intrinsic_mag


def colour_excess(index_name: str, temperature_K, ebv_mag, law: str = "G23",
                  rv: float = 3.1) -> np.ndarray:
    """The colour excess of a blackbody behind a dust column, by synthetic photometry.

    ``index(Planck(T) x dust_transmission(E(B-V))) - index(Planck(T))``, computed directly
    (no table): the spectrum-dependent excess that :func:`intrinsic_index` removes.

    Parameters
    ----------
    index_name : {"B-V", "BP-RP"}
    temperature_K : array_like
        Blackbody temperatures, K (> 0; ``inf`` for the Rayleigh-Jeans limit).
    ebv_mag : array_like
        E(B-V) of the dust, mag, 0-10 (broadcast against the temperatures).
    law, rv : str, float
        As :func:`intrinsic_index`.

    Returns
    -------
    numpy.ndarray
        Excess in mag, the broadcast shape.

    References
    ----------
    The synthetic photometry of [BessellMurphy2012] and [Riello2021] through the dust of
    [Cardelli1989] eq. 1 with the laws of :func:`intrinsic_index`.

    Examples
    --------
    Through the Gaia bands the same dust reddens BP-RP more than B-V (the bands lie further
    apart; E(BP-RP) / E(B-V) is about 1.3-1.4, from memory):

    >>> bool(colour_excess("BP-RP", 10000.0, 0.3) > colour_excess("B-V", 10000.0, 0.3))
    True
    """
    from starkiln.engine.colour.photometry import PHOTOMETRY_GRID_NM, check_index
    from starkiln.engine.colour.photometry import planck_colour_index
    from starkiln.engine.path.dust import check_ebv, dust_transmission

    index = check_index(index_name)
    law, rv = _check_law(law, rv)
    t = np.asarray(temperature_K, dtype=np.float64)
    if np.any(~(t > 0)):
        raise InputRangeError(f"temperature {t[~(t > 0)].flat[0] if t.ndim else float(t):g} K "
                              "is not positive; accepted: T > 0")
    e = check_ebv(ebv_mag, "E(B-V)", error=InputRangeError)
    t, e = np.broadcast_arrays(t, np.asarray(e, dtype=np.float64))
    trans = dust_transmission(PHOTOMETRY_GRID_NM, e, law, rv)
    return planck_colour_index(t, index, trans) - planck_colour_index(t, index)
