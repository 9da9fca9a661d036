"""The path of the light as one transmission: interstellar dust times the atmosphere.

The spectrum that reaches the eye is ``Planck(T) x T_dust x T_air`` ([Planck1901];
:mod:`starkiln.engine.path.dust`; :mod:`starkiln.engine.path.atmosphere`). Both factors
default to none (``dust_ebv = 0``, ``altitude_deg = None``): then :func:`has_path` is False and
the render path takes exactly the route it takes without this module.

Per-star values (``dust_ebv``, ``altitude_deg`` arrays) override the settings' values and
broadcast against each other; the transmission then has one row per star.

References
----------
[Cardelli1989] eq. 1 (dust in magnitudes); [KastenYoung1989]; [Bucholtz1995];
[Angstrom1929]; [Serdyuchenko2014].
"""

from __future__ import annotations

from functools import lru_cache

import numpy as np

from starkiln.engine.errors import InputRangeError
from starkiln.engine.path import atmosphere as atm
from starkiln.engine.path import dust


def has_path(settings, dust_ebv=None, altitude_deg=None) -> bool:
    """Whether the settings (or per-star overrides) put anything between the star and the eye.

    Parameters
    ----------
    settings : Settings
    dust_ebv, altitude_deg : array_like, optional
        Per-star overrides (any value given counts as a path, even E(B-V) = 0).

    Returns
    -------
    bool
        False for the defaults (no dust, no atmosphere).

    References
    ----------
    Module docstring.

    Examples
    --------
    >>> from starkiln.engine.pipeline.settings import Settings
    >>> has_path(Settings()), has_path(Settings(altitude_deg=30.0))
    (False, True)
    """
    return (dust_ebv is not None or altitude_deg is not None or settings.dust_ebv > 0.0
            or settings.altitude_deg is not None)


@lru_cache(maxsize=64)
def _fixed(settings, wl_key: bytes) -> np.ndarray:
    wl = np.frombuffer(wl_key, dtype=np.float64)
    out = _transmission(settings, wl, settings.dust_ebv, settings.altitude_deg)
    out.setflags(write=False)
    return out


def _transmission(settings, wl, ebv, alt) -> np.ndarray:
    """Dust x air on grid ``wl`` for E(B-V) ``ebv`` and altitude ``alt`` (None: no air)."""
    ebv = np.asarray(ebv, dtype=np.float64)
    air = None if alt is None else atm.slant_optical_depth(
        wl, alt, settings.site_height_m, settings.aerosol_tau550, settings.angstrom_exponent,
        settings.ozone_du)
    if air is not None and air.shape[:-1] == ebv.shape and not np.any(ebv):
        tau = air  # no dust on any line of sight (per-star air alone): nothing to add
    else:
        tau = dust.dust_optical_depth(wl, ebv, settings.dust_law, settings.dust_rv)
        if air is not None:
            tau = tau + air
    if tau.flags.writeable and tau.ndim:
        np.negative(tau, out=tau)
        return np.exp(tau, out=tau)
    return np.exp(-tau)


def path_transmission(settings, wavelength_nm, dust_ebv=None, altitude_deg=None) -> np.ndarray:
    """The transmission of the whole path, dust times air, on a wavelength grid.

    Parameters
    ----------
    settings : Settings
        Dust law, R_V, E(B-V), altitude, site and air.
    wavelength_nm : array_like
        (n,) wavelengths, nm.
    dust_ebv : array_like, optional
        Per-star E(B-V) (mag, 0-10), overriding ``settings.dust_ebv``.
    altitude_deg : array_like, optional
        Per-star apparent altitudes (0-90 degrees), overriding ``settings.altitude_deg``.

    Returns
    -------
    numpy.ndarray
        (n,) with no per-star values (cached per settings and grid, read-only); else
        (..., n) with ``...`` the broadcast shape of the per-star values.

    References
    ----------
    [Cardelli1989] eq. 1; [KastenYoung1989]; [Bucholtz1995]; [Angstrom1929];
    [Serdyuchenko2014].

    Examples
    --------
    No path, no change:

    >>> from starkiln.engine.pipeline.settings import Settings
    >>> float(path_transmission(Settings(), [550.0])[0])
    1.0
    """
    wl = np.ascontiguousarray(np.atleast_1d(np.asarray(wavelength_nm, dtype=np.float64)))
    if dust_ebv is None and altitude_deg is None:
        return _fixed(settings, wl.tobytes())
    ebv = settings.dust_ebv if dust_ebv is None else dust.check_ebv(
        dust_ebv, "dust_ebv", error=InputRangeError)
    alt = settings.altitude_deg if altitude_deg is None else atm.check_altitude(
        altitude_deg, error=InputRangeError)
    if alt is not None:
        ebv, alt = np.broadcast_arrays(np.asarray(ebv, dtype=np.float64),
                                       np.asarray(alt, dtype=np.float64))
    return _transmission(settings, wl, ebv, alt)


def arriving_spectrum(settings, temperature_K, wavelength_nm=None, dust_ebv=None,
                      altitude_deg=None) -> np.ndarray:
    """Planck spectral radiance of a star as it arrives at the eye (W sr^-1 m^-3).

    Parameters
    ----------
    settings : Settings
    temperature_K : array_like
        (...,) temperatures, K.
    wavelength_nm : array_like, optional
        (n,) grid; default the colour grid 360-830 nm at 1 nm.
    dust_ebv, altitude_deg : array_like, optional
        Per-star overrides as in :func:`path_transmission` (broadcast against the
        temperatures).

    Returns
    -------
    numpy.ndarray
        (..., n) ``Planck(T) x transmission``.

    References
    ----------
    [Planck1901]; :func:`path_transmission`.

    Examples
    --------
    Dust takes more from the blue end than from the red:

    >>> from starkiln.engine.pipeline.settings import Settings
    >>> s = Settings(dust_ebv=0.5)
    >>> out = arriving_spectrum(s, 6000.0, [450.0, 650.0])
    >>> from starkiln.engine.colour.spectrum import planck_radiance
    >>> kept = out / planck_radiance(6000.0, [450.0, 650.0])
    >>> bool(kept[0] < kept[1])
    True
    """
    from starkiln.engine.colour.cie_data import wavelengths_nm
    from starkiln.engine.colour.spectrum import planck_radiance

    wl = wavelengths_nm() if wavelength_nm is None else np.asarray(wavelength_nm, np.float64)
    t = np.asarray(temperature_K, dtype=np.float64)
    trans = path_transmission(settings, wl, dust_ebv, altitude_deg)
    return planck_radiance(t, wl) * trans
