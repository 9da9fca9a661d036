"""CIE 1976 L*a*b* (CIELAB) and the CIE 1976 colour difference Delta E*ab.

One owner for CIELAB in Starkiln (the colour grid of the catalogues measures its
interpolation error with it). The method is [CIE15] section 8.2.1:

- ``L* = 116 f(Y/Yn) - 16``, ``a* = 500 [f(X/Xn) - f(Y/Yn)]``,
  ``b* = 200 [f(Y/Yn) - f(Z/Zn)]``;
- ``f(t) = t^(1/3)`` for ``t > (6/29)^3``, else ``f(t) = (841/108) t + 4/29``
  (written here with the exact rationals ``(6/29)^3 = 216/24389`` and
  ``841/108 = (24389/27)/116``);
- ``Delta E*ab`` is the Euclidean distance in L*a*b* (same section).

The CIEDE2000 difference ([CIE142]) is not written here: Starkiln's tests take
it from colour-science (``colour.difference.delta_E_CIE2000``), the reference.
"""

from __future__ import annotations

import numpy as np

#: (6/29)^3, below which f(t) is linear ([CIE15] section 8.2.1).
CIELAB_EPSILON = 216.0 / 24389.0
#: (29/3)^3, the slope of 116 f(t) - 16 on the linear part ([CIE15] section 8.2.1).
CIELAB_KAPPA = 24389.0 / 27.0


def XYZ_to_CIELAB(XYZ, white_XYZ) -> np.ndarray:
    """CIE 1976 L*a*b* of tristimulus values, relative to a reference white.

    Parameters
    ----------
    XYZ : array_like
        (..., 3) CIE XYZ tristimulus values, on the scale of ``white_XYZ``.
    white_XYZ : array_like
        (3,) or broadcastable (..., 3) XYZ of the reference white (Xn, Yn, Zn).

    Returns
    -------
    numpy.ndarray
        (..., 3) float64 ``L*, a*, b*``; the reference white gives (100, 0, 0).

    References
    ----------
    [CIE15] section 8.2.1 (CIE 1976 L*a*b* colour space).

    Examples
    --------
    >>> XYZ_to_CIELAB([0.9505, 1.0, 1.089], [0.9505, 1.0, 1.089]).round(6).tolist()
    [100.0, 0.0, 0.0]
    """
    t = np.asarray(XYZ, dtype=np.float64) / np.asarray(white_XYZ, dtype=np.float64)
    f = np.where(t > CIELAB_EPSILON, np.cbrt(t), (CIELAB_KAPPA * t + 16.0) / 116.0)
    return np.stack([116.0 * f[..., 1] - 16.0, 500.0 * (f[..., 0] - f[..., 1]),
                     200.0 * (f[..., 1] - f[..., 2])], axis=-1)


def delta_E_CIE1976(Lab_a, Lab_b) -> np.ndarray:
    """CIE 1976 colour difference Delta E*ab: the Euclidean distance in L*a*b*.

    Parameters
    ----------
    Lab_a, Lab_b : array_like
        (..., 3) CIE L*a*b* values (broadcastable against each other).

    Returns
    -------
    numpy.ndarray
        (...) float64 differences.

    References
    ----------
    [CIE15] section 8.2.1 (CIE 1976 colour difference).

    Examples
    --------
    >>> float(delta_E_CIE1976([50.0, 0.0, 0.0], [50.0, 3.0, 4.0]))
    5.0
    """
    return np.linalg.norm(np.asarray(Lab_a, dtype=np.float64)
                          - np.asarray(Lab_b, dtype=np.float64), axis=-1)
