"""Planck's law for blackbody radiators and its integrals.

Implements the spectral radiance of a blackbody ([Planck1901]) with the exact
SI values of h, c and k ([CODATA2018], [SI2019]), Wien's
displacement law for the peak wavelength, and the radiometric and photometric
integrals used by the rest of the engine.

References
----------
[Planck1901] (the law, with the constants as used here); [CODATA2018] and [SI2019]
(h, c, k, c2, Wien's b); [CIE15] section 7 (summation at 1 nm steps).
"""

from __future__ import annotations

import math

import numpy as np

from starkiln.engine.colour.cie_data import wavelengths_nm

#: Planck constant, J s (SI 2019, exact).
PLANCK_J_S = 6.62607015e-34
#: Speed of light in vacuum, m/s (exact).
LIGHT_SPEED_M_S = 299792458.0
#: Boltzmann constant, J/K (SI 2019, exact).
BOLTZMANN_J_K = 1.380649e-23
#: First radiation constant for spectral radiance, 2 h c^2, W m^2 sr^-1.
C1L_W_M2_SR = 2.0 * PLANCK_J_S * LIGHT_SPEED_M_S**2
#: Second radiation constant h c / k, m K ([CODATA2018]: 1.438776877e-2).
C2_M_K = PLANCK_J_S * LIGHT_SPEED_M_S / BOLTZMANN_J_K

#: Root of x = 5 (1 - exp(-x)), the dimensionless Wien peak (x = h c / (lambda_max k T)).
_WIEN_X = 5.0
for _ in range(50):  # Newton iteration; converges to 4.965114231744276 in a few steps
    _f = _WIEN_X - 5.0 * (1.0 - math.exp(-_WIEN_X))
    _WIEN_X -= _f / (1.0 - 5.0 * math.exp(-_WIEN_X))
#: Wien's displacement constant b = lambda_max T, m K ([CODATA2018]: 2.897771955e-3).
WIEN_B_M_K = C2_M_K / _WIEN_X


def planck_radiance(temperature_K, wavelength_nm=None) -> np.ndarray:
    """Spectral radiance of a blackbody, W sr^-1 m^-2 per metre of wavelength.

    Vectorised over temperatures x wavelengths: the result has shape
    ``temperature_K.shape + wavelength_nm.shape``. Uses ``expm1`` so that the
    Rayleigh-Jeans end (small ``c2 / (lambda T)``) keeps full precision.

    Parameters
    ----------
    temperature_K : array_like
        Temperatures in kelvin, > 0.
    wavelength_nm : array_like, optional
        Wavelengths in nanometres (vacuum); default 360-830 nm at 1 nm.

    Returns
    -------
    numpy.ndarray
        ``L(lambda, T) = 2 h c^2 / lambda^5 / (exp(h c / (lambda k T)) - 1)``.

    References
    ----------
    [Planck1901]; [CIE15] section 3.1 (Planckian radiator); [CODATA2018].

    Examples
    --------
    >>> float(planck_radiance(5778.0, 500.0) / 1e13)  # doctest: +ELLIPSIS
    2.63...

    The same law in colour-science (``colour.colorimetry.planck_law``, wavelength in metres)
    gives the same radiance at 5772 K and 500 nm, to the 1e-4 that its rounded default
    c2 = 1.4388e-2 m K moves it:

    >>> import colour
    >>> ref = float(colour.colorimetry.planck_law(500e-9, 5772.0))
    >>> abs(float(planck_radiance(5772.0, 500.0)) / ref - 1.0) < 2e-4
    True
    """
    t = np.asarray(temperature_K, dtype=np.float64)
    wl_m = (wavelengths_nm() if wavelength_nm is None
            else np.asarray(wavelength_nm, dtype=np.float64)) * 1e-9
    return _planck_m(t[..., None] if wl_m.ndim else t, wl_m)


def _planck_factors(wavelength_m):
    """The two wavelength factors of Planck's law: ``2 h c^2 / lambda^5`` and ``h c / (k lambda)``.

    Planck's law is ``L = first / expm1(second / T)``; :func:`_planck_m` and
    :func:`planck_weighted_sums` both take these factors from here ([Planck1901]).
    """
    return C1L_W_M2_SR / wavelength_m**5, C2_M_K / wavelength_m


def _planck_m(temperature_K, wavelength_m) -> np.ndarray:
    """Planck's law ([Planck1901]) on broadcast arrays of temperatures and wavelengths in metres."""
    first, second = _planck_factors(wavelength_m)
    with np.errstate(over="ignore"):
        return first / np.expm1(second / temperature_K)


def peak_wavelength_nm(temperature_K) -> np.ndarray:
    """Wavelength of peak spectral radiance per unit wavelength (Wien's displacement law).

    Parameters
    ----------
    temperature_K : array_like
        Temperatures in kelvin.

    Returns
    -------
    numpy.ndarray
        ``b / T`` in nanometres, with ``b = c2 / x`` and ``x`` the root of
        ``x = 5 (1 - e^-x)`` ([CODATA2018] gives b = 2.897771955e-3 m K).

    References
    ----------
    [CODATA2018] (Tiesinga et al. 2021), Wien wavelength displacement law constant.

    Examples
    --------
    >>> round(float(peak_wavelength_nm(5800.0)), 1)
    499.6

    The Sun's nominal 5772 K ([IAU2015B3]): b / T = 2.897771955e-3 m K / 5772 K = 502.04 nm:

    >>> round(float(peak_wavelength_nm(5772.0)), 2)
    502.04
    """
    return WIEN_B_M_K / np.asarray(temperature_K, dtype=np.float64) * 1e9


def _wide_grid_m(temperature_K: np.ndarray, samples: int) -> np.ndarray:
    """A log-spaced wavelength grid per temperature covering 0.02-2000 times the peak."""
    peak_m = WIEN_B_M_K / temperature_K
    u = np.linspace(np.log(0.02), np.log(2000.0), samples)
    return peak_m[..., None] * np.exp(u)


def radiant_exitance_W_m2(temperature_K, samples: int = 20001) -> np.ndarray:
    """Radiant exitance of a blackbody, W/m^2, by numerical integration over all wavelengths.

    ``M = pi * integral L(lambda, T) d lambda``, integrated with the trapezoid
    rule on a log-spaced grid from 0.02 to 2000 times the peak wavelength (the
    tails beyond hold less than 1e-9 of the total). Divided by ``T^4`` it
    recovers the Stefan-Boltzmann constant.

    Parameters
    ----------
    temperature_K : array_like
        Temperatures in kelvin.
    samples : int
        Number of grid points per temperature.

    Returns
    -------
    numpy.ndarray
        Exitance in W/m^2, same shape as ``temperature_K``.

    References
    ----------
    Stefan-Boltzmann law; [CODATA2018] sigma = 5.670374419e-8 W m^-2 K^-4.

    Examples
    --------
    ``sigma T^4`` with the [CODATA2018] sigma, for 5772 K: 6.2939e7 W/m^2:

    >>> round(float(radiant_exitance_W_m2(5772.0)) / 1e7, 4)
    6.2939
    >>> sigma = 5.670374419e-8
    >>> abs(float(radiant_exitance_W_m2(1000.0)) / (sigma * 1000.0 ** 4) - 1.0) < 1e-6
    True
    """
    t = np.atleast_1d(np.asarray(temperature_K, dtype=np.float64))
    wl_m = _wide_grid_m(t, samples)
    radiance = _planck_m(t[:, None], wl_m)
    exitance = math.pi * np.trapezoid(radiance, wl_m, axis=-1)
    return exitance.reshape(np.shape(temperature_K))


def luminous_exitance_lm_m2(temperature_K, scotopic: bool = False) -> np.ndarray:
    """Luminous exitance of a blackbody, ``M_v = K_m pi sum L(lambda, T) V(lambda) d_lambda``.

    Parameters
    ----------
    temperature_K : array_like
        Temperatures in kelvin.
    scotopic : bool
        Use V'(lambda) with K'_m = 1700 lm/W instead of V(lambda) with K_m = 683 lm/W.

    Returns
    -------
    numpy.ndarray
        lm/m^2 (photopic or scotopic), summed on the 360-830 nm grid at 1 nm.

    References
    ----------
    [CIES010] (V, V', K_m, K'_m); [CIE15] section 7.1 (summation).

    Examples
    --------
    For CIE illuminant A's 2856 K, against colour-science's luminous flux of the same
    blackbody (``colour.luminous_flux``, K_m = 683 lm/W, radiance times pi):

    >>> import colour
    >>> sd = colour.sd_blackbody(2856.0, colour.SpectralShape(360, 830, 1))
    >>> ref = float(colour.luminous_flux(sd)) * np.pi
    >>> abs(float(luminous_exitance_lm_m2(2856.0)) / ref - 1.0) < 1e-3
    True
    """
    from starkiln.engine.colour.observers import KM_PHOTOPIC_LM_W, KM_SCOTOPIC_LM_W, v_photopic, v_scotopic

    weights = v_scotopic() if scotopic else v_photopic()
    km = KM_SCOTOPIC_LM_W if scotopic else KM_PHOTOPIC_LM_W
    return km * math.pi * planck_weighted_sums(temperature_K, weights)


def luminous_efficacy_lm_W(temperature_K) -> np.ndarray:
    """Photopic luminous efficacy of blackbody radiation, ``M_v / M_e`` in lm/W.

    ``M_e`` is the full radiant exitance over all wavelengths
    (:func:`radiant_exitance_W_m2`), so this is the efficacy of the whole radiation,
    which peaks near 95 lm/W around 6600 K (computed here; ``tests/test_spectrum.py``
    checks the peak against the handbook figure).

    References
    ----------
    [CIES010]; Stefan-Boltzmann law ([CODATA2018]).

    Examples
    --------
    About 95 lm/W at 6600 K and about 15 lm/W for a 2856 K radiator (CIE illuminant A),
    the handbook figures (from memory):

    >>> round(float(luminous_efficacy_lm_W(6600.0)))
    95
    >>> 13.0 < float(luminous_efficacy_lm_W(2856.0)) < 17.0
    True
    """
    return luminous_exitance_lm_m2(temperature_K) / radiant_exitance_W_m2(temperature_K)


_CHUNK = 512  # temperatures per block: 512 x 471 doubles = 1.9 MB, stays in cache


def planck_weighted_sums(temperature_K, weights, wavelength_nm=None,
                         transmission=None) -> np.ndarray:
    """Sums of Planck spectra against weighting functions, without storing the spectra.

    Computes ``sum_lambda L(lambda, T) t(lambda) w_k(lambda) * d_lambda`` for every
    temperature, in cache-sized blocks, with the ``2 h c^2 / lambda^5`` factor
    folded into the weights so that each sample costs one ``expm1`` and one
    reciprocal. Blocks are shared between two threads (numpy releases the GIL
    inside its kernels).

    Parameters
    ----------
    temperature_K : array_like
        (...,) temperatures in kelvin, > 0.
    weights : array_like
        (N, K) weighting functions on the wavelength grid (e.g. CMFs, V, V').
    wavelength_nm : array_like, optional
        (N,) uniform grid in nm; default 360-830 nm at 1 nm.
    transmission : array_like, optional
        A transmission ``t`` on the grid (the path of the light): (N,) for every temperature
        (folded into the weights: no extra cost per temperature), or (M, N) with one row per
        temperature (M = ``temperature_K.size``, in flat order). None: ``t = 1``.

    Returns
    -------
    numpy.ndarray
        (..., K) integrals in W sr^-1 m^-2 (times the weights' units).

    References
    ----------
    [Planck1901]; [CIE15] section 7.1 (summation at the grid step).
    """
    t = np.asarray(temperature_K, dtype=np.float64)
    wl_nm = wavelengths_nm() if wavelength_nm is None else np.asarray(wavelength_nm, np.float64)
    step_m = float(wl_nm[1] - wl_nm[0]) * 1e-9 if wl_nm.size > 1 else 1e-9
    wl_m = wl_nm * 1e-9
    w = np.asarray(weights, dtype=np.float64)
    w2 = w if w.ndim == 2 else w[:, None]
    first, a = _planck_factors(wl_m)  # L = first / expm1(a / T): fold first into the weights
    folded = w2 * (first * step_m)[:, None]
    rows = None
    if transmission is not None:
        tr = np.asarray(transmission, dtype=np.float64)
        if tr.ndim == 1:
            folded = folded * tr[:, None]
        else:
            rows = tr.reshape(-1, wl_nm.size)
    inv_t = 1.0 / t.reshape(-1)
    out = np.empty((inv_t.size, w2.shape[1]))

    def block(start: int) -> None:
        x = np.multiply.outer(inv_t[start:start + _CHUNK], a)
        with np.errstate(over="ignore"):
            np.expm1(x, out=x)
        np.reciprocal(x, out=x)
        if rows is not None:
            x *= rows[start:start + _CHUNK]
        out[start:start + _CHUNK] = x @ folded

    starts = range(0, inv_t.size, _CHUNK)
    if inv_t.size >= 8 * _CHUNK:
        from concurrent.futures import ThreadPoolExecutor

        from threadpoolctl import threadpool_limits

        # Two Python threads share the blocks; BLAS must not start threads of its own inside
        # them (OpenBLAS does for the 5-column product and then the cores thrash: 4x slower).
        with threadpool_limits(limits=1, user_api="blas"), ThreadPoolExecutor(2) as pool:
            list(pool.map(block, starts))
    else:
        for start in starts:
            block(start)
    shape = t.shape + ((w2.shape[1],) if w.ndim == 2 else ())
    return out.reshape(shape)


def band_integral(spectrum, weights, step_nm: float = 1.0) -> np.ndarray:
    """Integrate spectra against weighting functions by summation at a fixed step.

    Parameters
    ----------
    spectrum : array_like
        (..., N) spectral quantity per metre of wavelength on the grid.
    weights : array_like
        (N,) or (N, K) weighting functions on the same grid.
    step_nm : float
        Grid step in nanometres.

    Returns
    -------
    numpy.ndarray
        (...,) or (..., K): ``sum spectrum * weights * step`` (per metre -> per nm handled).

    References
    ----------
    [CIE15] section 7.1 (tristimulus values by summation at 1 nm intervals).
    """
    return np.asarray(spectrum) @ np.asarray(weights) * (step_nm * 1e-9)
