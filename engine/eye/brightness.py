"""Brightness from the spectrum: the illuminance at the eye from a star's magnitude and its own
spectrum, in place of one zero point for every colour.

A star of magnitude m in band X (``V``, or Gaia ``G``) has the spectrum ``k F(lambda)`` with
``F`` its shape (the emitted spectrum, before the path of the light) and ``k`` the factor that
gives it magnitude m by synthetic photometry on the Vega system
(:mod:`starkiln.engine.colour.photometry`, photon counting)::

    k sum F S_X lambda dlambda = 10^(-0.4 (m - m_X(Vega))) sum F_Vega S_X lambda dlambda

What reaches the eye is ``k F(lambda) t(lambda)`` (``t`` the path's transmission, 1 without
one), so the photopic illuminance is ``E_v = K_m sum k F t V dlambda`` and the scotopic one
``E_s = K'_m sum k F t V' dlambda`` ([CIES010]: K_m = 683 lm/W, K'_m = 1700 lm/W). Written
with a zero point per spectrum::

    E_v = 10^(-0.4 m) E_0(F),   E_0(F) = K_m Z_X sum F t V dlambda / sum F S_X lambda dlambda
    Z_X = 10^(0.4 m_X(Vega)) sum F_Vega S_X lambda dlambda     (erg s^-1 cm^-2 A^-1 nm^2)

with 1 erg s^-1 cm^-2 A^-1 = 0.01 W m^-2 nm^-1. The V band and V(lambda) differ, so a red star
of V = 0 is brighter to the eye than a blue one; the single E0 of the earlier model
(:data:`starkiln.engine.eye.vision.E0_LUX`, [Schlyter]) is kept for reference only.

References
----------
[CIES010] (V, V', K_m, K'_m); [BessellMurphy2012] eq. 1 (photon-counting magnitudes);
[Bohlin2020] (the CALSPEC Vega spectrum behind the zero point); [Riello2021] (the G band).
"""

from __future__ import annotations

from functools import lru_cache

import numpy as np

from starkiln.engine.colour.observers import KM_PHOTOPIC_LM_W, KM_SCOTOPIC_LM_W
from starkiln.engine.errors import InputRangeError

#: The magnitude bands a brightness can be given in.
MAGNITUDE_BANDS = ("V", "G")
#: 1 erg s^-1 cm^-2 A^-1 in W m^-2 nm^-1 (1e-7 J / 1e-4 m^2 / 0.1 nm).
_ERG_CM2_A_IN_W_M2_NM = 1e-2


def check_magnitude_band(name) -> str:
    """``V`` or ``G`` (any case), else a one-line :class:`InputRangeError`.

    References
    ----------
    [Bessell1990] (Johnson-Cousins V); [Riello2021] (Gaia G).
    """
    text = str(name).strip().upper()
    if text not in MAGNITUDE_BANDS:
        raise InputRangeError(f"magnitude band {name!r} unknown; accepted: "
                              f"{', '.join(MAGNITUDE_BANDS)}")
    return text


@lru_cache(maxsize=None)
def band_zero_point(band: str = "V") -> float:
    """``Z_X = 10^(0.4 m_X(Vega)) sum F_Vega S_X lambda dlambda``: the band integral of a
    magnitude-0 spectrum (erg s^-1 cm^-2 A^-1 nm^2; module docstring).

    References
    ----------
    [BessellMurphy2012] eq. 1; [Bohlin2020].
    """
    from starkiln.engine.colour import photometry as ph

    name = check_magnitude_band(band)
    return float(ph.vega_band_flux(name) * 10.0 ** (0.4 * ph.VEGA_MAGNITUDES[name]))


@lru_cache(maxsize=None)
def band_support(band: str = "V") -> tuple[np.ndarray, np.ndarray, slice]:
    """The part of the photometry grid where the band responds: (wavelength_nm, weights, slice).

    ``weights`` are the photon-counting ``S lambda dlambda`` (dlambda = 1 nm) there; summing a
    spectrum on that part against them is its whole band integral.

    References
    ----------
    [BessellMurphy2012] eq. 1.
    """
    from starkiln.engine.colour import photometry as ph

    wl, s = ph.band(check_magnitude_band(band))
    nz = np.flatnonzero(s > 0.0)
    sl = slice(int(nz[0]), int(nz[-1]) + 1)
    w = np.array(s[sl] * wl[sl], dtype=np.float64)
    w.setflags(write=False)
    return np.array(wl[sl]), w, sl


def zero_point_lux(photopic_sum, band_sum, band: str = "V", scotopic: bool = False):
    """``E_0 = K_m Z_X sum F t V dlambda / sum F S_X lambda dlambda``: the illuminance at the
    eye, lux, of a star of magnitude 0 whose spectrum gives these two sums.

    Parameters
    ----------
    photopic_sum : array_like
        ``sum F t V dlambda`` (or with V' for ``scotopic``), dlambda in nm, any unit of F.
    band_sum : array_like
        ``sum F S_X lambda dlambda`` of the emitted spectrum (same unit of F, dlambda in nm).
    band : ``V`` or ``G``
        The band the magnitudes are given in.
    scotopic : bool
        Use K'_m (the sums with V').

    Returns
    -------
    numpy.ndarray
        Lux (scotopic lux with ``scotopic``).

    References
    ----------
    [CIES010]; [BessellMurphy2012] eq. 1; module docstring.
    """
    km = KM_SCOTOPIC_LM_W if scotopic else KM_PHOTOPIC_LM_W
    return (km * _ERG_CM2_A_IN_W_M2_NM * band_zero_point(band)
            * np.asarray(photopic_sum, dtype=np.float64) / np.asarray(band_sum, dtype=np.float64))


def illuminance_lux(wavelength_nm, flux_lambda, magnitude, band: str = "V",
                    scotopic: bool = False) -> np.ndarray:
    """Illuminance at the eye of a spectrum given the shape, scaled to a magnitude.

    Parameters
    ----------
    wavelength_nm : array_like
        (n,) increasing wavelengths, nm, 1 nm steps, covering the band and 360-830 nm.
    flux_lambda : array_like
        (..., n) spectral shape (any unit; only its shape matters).
    magnitude : array_like
        Magnitudes in ``band`` (broadcast against the leading shape).
    band : ``V`` or ``G``
    scotopic : bool
        Scotopic illuminance (V', K'_m) instead of photopic.

    Returns
    -------
    numpy.ndarray
        Lux.

    References
    ----------
    [CIES010]; [BessellMurphy2012] eq. 1; module docstring.
    """
    from starkiln.engine.colour import photometry as ph
    from starkiln.engine.colour.cie_data import wavelengths_nm
    from starkiln.engine.colour.observers import v_photopic, v_scotopic

    wl = np.asarray(wavelength_nm, dtype=np.float64)
    f = np.asarray(flux_lambda, dtype=np.float64)
    colour_wl = wavelengths_nm()
    v = v_scotopic() if scotopic else v_photopic()
    v_on = np.interp(wl, colour_wl, v, left=0.0, right=0.0)
    n = ph.band_flux(wl, f, check_magnitude_band(band))
    step = np.gradient(wl)
    e0 = zero_point_lux(f @ (v_on * step), n, band, scotopic)
    return e0 * 10.0 ** (-0.4 * np.asarray(magnitude, dtype=np.float64))


def band_on_colour_grid(band: str):
    """The band of the magnitudes as weights on the colour grid (360-830 nm at 1 nm) when its
    response lies inside it (V: one more column of the colour pass, no second spectral pass),
    else None.

    References
    ----------
    :func:`band_support` ([BessellMurphy2012] eq. 1).
    """
    from starkiln.engine.colour.cie_data import wavelengths_nm

    wl_b, w_b, _ = band_support(band)
    colour_wl = wavelengths_nm()
    if wl_b[0] < colour_wl[0] or wl_b[-1] > colour_wl[-1]:
        return None
    out = np.zeros(colour_wl.size)
    lo = int(round(wl_b[0] - colour_wl[0]))
    out[lo:lo + w_b.size] = w_b
    return out
