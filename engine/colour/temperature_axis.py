"""The temperature axis: the mired scale and the mappings that spread temperatures along an axis.

One owner for every axis over temperature in Starkiln: the window's slider, the
lookup textures' u axis, the palettes' steps and the catalogue interpolation grid.

- ``mired`` (micro reciprocal degree, 10^6 / T): spaces visible colour steps of
  Planckian light far more evenly than kelvin (common practice in lighting and
  photography; [WyszeckiStiles1982] section 3.11; the isotemperature lines of
  [CIE15] section 9.5 crowd together in kelvin towards high temperatures).
  ``u = (10^6/A - 10^6/T) / (10^6/A - 10^6/B)``.
- ``log``: ``u = ln(T / A) / ln(B / A)``.
- ``linear``: ``u = (T - A) / (B - A)``.
"""

from __future__ import annotations

import numpy as np

from starkiln.engine.errors import StarkilnError

AXIS_MAPPINGS = ("mired", "log", "linear")


def temperature_to_mired(temperature_K) -> np.ndarray:
    """Mired (micro reciprocal degree) of a temperature, ``1e6 / T``.

    References
    ----------
    [WyszeckiStiles1982] section 3.11 (mired scale).

    Examples
    --------
    >>> float(temperature_to_mired(5000.0))
    200.0
    """
    return 1e6 / np.asarray(temperature_K, dtype=np.float64)


def mired_to_temperature(mired) -> np.ndarray:
    """Temperature in kelvin of a mired value, ``1e6 / mired`` ([WyszeckiStiles1982], 3.11).

    Examples
    --------
    >>> float(mired_to_temperature(250.0))
    4000.0
    """
    return 1e6 / np.asarray(mired, dtype=np.float64)


def check_axis(axis: str) -> str:
    """Validate an axis mapping name (``mired``, ``log``, ``linear``); returns it lower-cased."""
    name = str(axis).strip().lower()
    if name not in AXIS_MAPPINGS:
        raise StarkilnError(f"unknown temperature axis {axis!r}; accepted: {', '.join(AXIS_MAPPINGS)}")
    return name


def u_from_temperature(temperature_K, range_K, axis: str = "mired") -> np.ndarray:
    """Texture coordinate u (0 at ``range_K[0]``, 1 at ``range_K[1]``) of temperatures.

    Parameters
    ----------
    temperature_K : array_like
        Temperatures in kelvin.
    range_K : (float, float)
        ``(A, B)``, the temperatures at the left and right edges, ``A < B``.
    axis : {"mired", "log", "linear"}
        Mapping; formulas in the module docstring.

    Returns
    -------
    numpy.ndarray
        u, same shape as ``temperature_K`` (not clipped).

    References
    ----------
    Mired = 10^6 / T (common practice; [CIE15] section 9.5 discusses the
    reciprocal temperature scale).

    Examples
    --------
    >>> float(u_from_temperature(2000.0, (1000.0, 40000.0), "linear")) == 1000.0 / 39000.0
    True
    """
    t = np.asarray(temperature_K, dtype=np.float64)
    a, b = float(range_K[0]), float(range_K[1])
    axis = check_axis(axis)
    if axis == "mired":
        return (1e6 / a - 1e6 / t) / (1e6 / a - 1e6 / b)
    if axis == "log":
        return np.log(t / a) / np.log(b / a)
    return (t - a) / (b - a)


def temperature_from_u(u, range_K, axis: str = "mired") -> np.ndarray:
    """Temperatures (K) at texture coordinates u; inverse of :func:`u_from_temperature`.

    Parameters
    ----------
    u : array_like
        Coordinates, 0 = left edge (``range_K[0]``), 1 = right edge.
    range_K : (float, float)
        ``(A, B)`` kelvin, ``A < B``.
    axis : {"mired", "log", "linear"}
        Mapping; formulas in the module docstring.

    Returns
    -------
    numpy.ndarray
        Temperatures in kelvin, same shape as ``u``. Mired: the harmonic
        interpolation ``1 / ((1 - u)/A + u/B)``; log: ``A (B/A)^u``;
        linear: ``A + u (B - A)``.

    References
    ----------
    Mired = 10^6 / T (common practice).

    Examples
    --------
    >>> round(float(temperature_from_u(0.5, (2000.0, 8000.0), "mired")), 6)
    3200.0
    """
    uu = np.asarray(u, dtype=np.float64)
    a, b = float(range_K[0]), float(range_K[1])
    axis = check_axis(axis)
    if axis == "mired":
        mired = (1.0 - uu) * (1e6 / a) + uu * (1e6 / b)
        return 1e6 / mired
    if axis == "log":
        return a * np.exp(uu * np.log(b / a))
    return a + uu * (b - a)
