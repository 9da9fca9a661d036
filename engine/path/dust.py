"""Interstellar dust: the extinction law A(lambda)/A(V) and the transmission of a dust column.

The laws are those of the ``dust-extinction`` package [DustExtinction], evaluated through its
own classes (never re-typed coefficients):

- ``G23``: Gordon et al. 2023, the average Milky Way law, valid R_V 2.3-5.6 [Gordon2023]
  (the default);
- ``F99``: Fitzpatrick 1999, R_V 2.0-6.0 [Fitzpatrick1999];
- ``CCM89``: Cardelli, Clayton & Mathis 1989, R_V 2.0-6.0 [Cardelli1989].

The accepted R_V range of each law is the class's own ``Rv_range`` (a copy is kept for
validation without importing astropy; a test checks it against the installed package). A dust column of colour
excess E(B-V) and ratio R_V has ``A_V = R_V E(B-V)`` and transmits
``T(lambda) = 10^(-0.4 A_V A(lambda)/A(V))`` [Cardelli1989] eq. 1 (the definition of A(lambda)
in magnitudes).

Wavelength coverage: each class has an ``x_range`` in inverse microns (G23 0.03125-10.96,
i.e. 91-32 000 nm; F99 and CCM89 0.3-10, i.e. 100-3333 nm). Starkiln's colour grid
(360-830 nm) and photometry grid (300-1100 nm) are inside all three, so the law is used as
published everywhere Starkiln integrates. A wavelength outside a law's range is refused
with :class:`starkiln.engine.errors.InputRangeError` naming the range (no extrapolation).

The curves are evaluated once per (law, R_V, grid) and cached; the transmission for many
E(B-V) values is one exponential per sample: ``exp(-0.4 ln(10) R_V E(B-V) k(lambda))``.

References
----------
[DustExtinction]; [Gordon2023]; [Fitzpatrick1999]; [Cardelli1989].
"""

from __future__ import annotations

from functools import lru_cache

import numpy as np

from starkiln.engine.errors import InputRangeError, SettingsError, finite_number, values_in_range

#: The laws offered, by their dust-extinction class names (default first).
DUST_LAWS = ("G23", "F99", "CCM89")
#: Accepted E(B-V) in magnitudes (10 mag hides any star: A_V ~ 31 mag).
EBV_RANGE = (0.0, 10.0)
_LN10_04 = 0.4 * np.log(10.0)


def _law_class(name: str):
    """The dust-extinction class of a law name (imported on first use)."""
    from starkiln.engine.catalogue.formats import astropy_guard

    with astropy_guard():  # dust-extinction imports astropy.table: hide colour's stand-in
        from dust_extinction import parameter_averages as pa

    return getattr(pa, name)


def check_dust_law(name) -> str:
    """The law's canonical name (case-insensitive), or a one-line :class:`SettingsError`.

    Parameters
    ----------
    name : str
        ``G23``, ``F99`` or ``CCM89`` (any case).

    Returns
    -------
    str

    References
    ----------
    [DustExtinction] (the class names).

    Examples
    --------
    >>> check_dust_law("ccm89")
    'CCM89'
    """
    text = str(name).strip().upper()
    if text not in DUST_LAWS:
        raise SettingsError(f"unknown dust_law {name!r}; accepted: {', '.join(DUST_LAWS)}")
    return text


#: Each law's valid R_V, as its dust-extinction class's ``Rv_range`` holds it (kept here so
#: that validating settings does not import astropy; ``tests/test_path.py`` checks the two
#: agree for the installed package).
_RV_RANGES = {"G23": (2.3, 5.6), "F99": (2.0, 6.0), "CCM89": (2.0, 6.0)}


def rv_range(law: str = "G23") -> tuple[float, float]:
    """The R_V range a law is valid for: the dust-extinction class's ``Rv_range``.

    References
    ----------
    [DustExtinction]; [Gordon2023] (2.3-5.6); [Fitzpatrick1999], [Cardelli1989] (2.0-6.0).

    Examples
    --------
    >>> rv_range("G23")
    (2.3, 5.6)
    """
    return _RV_RANGES[check_dust_law(law)]


def check_rv(rv, law: str = "G23", what: str = "dust_rv") -> float:
    """R_V as a float inside the law's range, else a one-line :class:`SettingsError` saying it.

    References
    ----------
    [DustExtinction] (``Rv_range`` of each class).
    """
    v = finite_number(rv, what)
    lo, hi = rv_range(law)
    if not lo <= v <= hi:
        raise SettingsError(f"{what} {v:g} is outside the range of dust law {law}: "
                            f"accepted {lo:g} <= R_V <= {hi:g}")
    return v


def check_ebv(ebv, what: str = "dust_ebv", error=SettingsError) -> np.ndarray:
    """E(B-V) values, finite and within 0-10 mag, else a one-line error naming the first bad one.

    References
    ----------
    Colour excess E(B-V) >= 0 by definition ([Cardelli1989] section I; common practice).
    """
    lo, hi = EBV_RANGE
    return values_in_range(ebv, lo, hi, lambda v: f"{what} {v:g} is outside the accepted "
                                                  f"range {lo:g} <= E(B-V) <= {hi:g} mag", error)


#: Version of the on-disk A(lambda)/A_V files (part of their name's hash).
LAW_CACHE_FORMAT = 1


def _law_cache_file(law: str, rv: float, wl_key: bytes):
    """Where the law's A(lambda)/A_V on this grid is kept: a hash of the law, R_V, the grid and
    dust-extinction's version, in the engine's cache folder."""
    import hashlib
    from importlib import metadata

    from starkiln.engine.colour.cie_data import cache_dir

    try:
        version = metadata.version("dust-extinction")
    except metadata.PackageNotFoundError:  # pragma: no cover - a required dependency
        version = "?"
    h = hashlib.sha256(repr((law, float(rv), version, LAW_CACHE_FORMAT)).encode() + wl_key)
    return cache_dir() / f"dust-law-{h.hexdigest()[:24]}.npz"


@lru_cache(maxsize=64)
def _a_over_av_cached(law: str, rv: float, wl_key: bytes) -> np.ndarray:
    """A(lambda)/A_V on a grid: from this process's memory, else the cache folder (a few KB:
    later runs need not import dust-extinction and astropy, about 0.6 s), else evaluated by
    dust-extinction and saved."""
    from starkiln.engine.atomic import write_npz_atomic
    from starkiln.engine.colour.cie_data import NPZ_READ_ERRORS

    wl_nm = np.frombuffer(wl_key, dtype=np.float64)
    path = _law_cache_file(law, rv, wl_key)
    try:
        with np.load(path) as data:
            out = np.array(data["a_over_av"], dtype=np.float64)
        if out.shape == wl_nm.shape and np.all(np.isfinite(out)):
            out.setflags(write=False)
            return out
    except (*NPZ_READ_ERRORS, KeyError):
        pass  # none yet, or unreadable: evaluated again below
    out = _evaluate_law(law, rv, wl_nm)
    try:
        write_npz_atomic(path, {"a_over_av": out})
    except OSError:
        pass  # read-only cache folder: kept in this process only
    out.setflags(write=False)
    return out


def _evaluate_law(law: str, rv: float, wl_nm: np.ndarray) -> np.ndarray:
    """dust-extinction's A(lambda)/A_V of the law on ``wl_nm`` (range checked)."""
    import astropy.units as u

    from starkiln.engine.catalogue.formats import astropy_guard

    model = _law_class(law)(Rv=rv)
    x = 1e3 / wl_nm  # inverse microns
    lo, hi = model.x_range
    outside = (x < lo) | (x > hi)
    if np.any(outside):
        w = wl_nm[outside][0]
        raise InputRangeError(f"wavelength {w:g} nm is outside the range of dust law {law}: "
                              f"accepted {1e3 / hi:.0f}-{1e3 / lo:.0f} nm")
    with astropy_guard():
        return np.array(model(wl_nm * u.nm), dtype=np.float64)


def dust_a_over_av(wavelength_nm, law: str = "G23", rv: float = 3.1) -> np.ndarray:
    """The extinction law A(lambda)/A(V) on a wavelength grid, through dust-extinction.

    Parameters
    ----------
    wavelength_nm : array_like
        (n,) wavelengths in nm, inside the law's range (module docstring).
    law : str
        ``G23`` (default), ``F99`` or ``CCM89``.
    rv : float
        R_V, within :func:`rv_range` of the law.

    Returns
    -------
    numpy.ndarray
        (n,) A(lambda)/A(V) (read-only, cached per law, R_V and grid).

    Raises
    ------
    SettingsError
        Unknown law or R_V outside its range.
    InputRangeError
        A wavelength outside the law's range.

    References
    ----------
    [DustExtinction]; [Gordon2023]; [Fitzpatrick1999]; [Cardelli1989].

    Examples
    --------
    Near 1 at 550 nm by construction of the laws (normalised at V):

    >>> round(float(dust_a_over_av([550.0], "CCM89", 3.1)[0]), 2)
    1.0
    """
    name = check_dust_law(law)
    r = check_rv(rv, name)
    wl = np.ascontiguousarray(np.atleast_1d(np.asarray(wavelength_nm, dtype=np.float64)))
    return _a_over_av_cached(name, r, wl.tobytes())


def dust_transmission(wavelength_nm, ebv, law: str = "G23", rv: float = 3.1) -> np.ndarray:
    """Transmission of a dust column: ``10^(-0.4 R_V E(B-V) A(lambda)/A(V))``.

    Parameters
    ----------
    wavelength_nm : array_like
        (n,) wavelengths in nm.
    ebv : array_like
        (...,) colour excesses E(B-V) in mag, 0-10.
    law, rv : str, float
        As :func:`dust_a_over_av`.

    Returns
    -------
    numpy.ndarray
        (..., n) transmissions 0-1 (exactly 1 where E(B-V) = 0).

    References
    ----------
    [Cardelli1989] eq. 1 (A(lambda) in magnitudes); [DustExtinction].

    Examples
    --------
    A_V = 3.1 x 0.1 = 0.31 mag at 550 nm (CCM89, where A/A_V is 1.0 within 0.3 %):

    >>> t = dust_transmission([550.0], 0.1, "CCM89", 3.1)
    >>> round(float(-2.5 * np.log10(t[0])), 2)
    0.31
    """
    return np.exp(-dust_optical_depth(wavelength_nm, ebv, law, rv))


def dust_optical_depth(wavelength_nm, ebv, law: str = "G23", rv: float = 3.1) -> np.ndarray:
    """``0.4 ln(10) R_V E(B-V) A(lambda)/A(V)``: minus the natural logarithm of
    :func:`dust_transmission` (same parameters, (..., n)).

    References
    ----------
    [Cardelli1989] eq. 1; [DustExtinction].
    """
    k = dust_a_over_av(wavelength_nm, law, rv)
    e = check_ebv(ebv, error=InputRangeError)
    return np.multiply.outer(_LN10_04 * rv * e, k)
