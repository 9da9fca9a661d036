"""Standard observers and luminous efficiency functions.

- ``cie1931``: CIE 1931 2 degree standard colorimetric observer (default).
- ``cie1964``: CIE 1964 10 degree standard colorimetric observer.
- Photopic V(lambda) (CIE 1924) with K_m = 683 lm/W and scotopic V'(lambda)
  (CIE 1951) with K'_m = 1700 lm/W.

References
----------
[CIE15] sections 3.1-3.2 and Tables T.4-T.5; [CIES010] (photometry); [SI2019]
Appendix 2 (K_cd = 683 lm/W at 540e12 Hz); [CIE018] / [WyszeckiStiles1982] for
K'_m = 1700 lm/W (1700.06 when referred to 555.016 nm).
"""

from __future__ import annotations

import numpy as np

from starkiln.engine.errors import SettingsError
from starkiln.engine.colour.cie_data import tables

OBSERVERS = ("cie1931", "cie1964")

#: Maximum photopic luminous efficacy, lm/W ([SI2019]; [CIES010]).
KM_PHOTOPIC_LM_W = 683.0
#: Maximum scotopic luminous efficacy, lm/W ([CIES010]; common rounded value 1700).
KM_SCOTOPIC_LM_W = 1700.0


def check_observer(name: str) -> str:
    """Return the canonical observer name or raise :class:`SettingsError`.

    Accepts ``cie1931`` / ``cie1964`` (case-insensitive; ``2`` and ``10`` as
    shorthands). Reference: [CIE15] section 3.
    """
    key = str(name).strip().lower().replace(" ", "").replace("_", "")
    key = {"2": "cie1931", "10": "cie1964", "1931": "cie1931", "1964": "cie1964"}.get(key, key)
    if key not in OBSERVERS:
        raise SettingsError(f"unknown observer {name!r}; accepted: cie1931, cie1964")
    return key


def cmfs(observer: str = "cie1931") -> np.ndarray:
    """Colour-matching functions (N, 3) of an observer on the engine grid ([CIE15] T.4/T.5).

    Examples
    --------
    The CIE 1931 functions at 555 nm, row 195 of the 360-830 nm grid; [CIE15] Table T.4
    lists 0.512050, 1.000000, 0.005750:

    >>> np.round(cmfs("cie1931")[555 - 360], 5).tolist()
    [0.51205, 1.0, 0.00575]
    """
    return tables()[f"cmf_{check_observer(observer)}"]


def v_photopic() -> np.ndarray:
    """CIE 1924 photopic luminous efficiency V(lambda) on the engine grid ([CIES010]).

    Examples
    --------
    V(lambda) is 1 at 555 nm and 0.5 near 510 nm ([CIES010] table: 0.503 at 510 nm):

    >>> v = v_photopic()
    >>> float(v[555 - 360]), round(float(v[510 - 360]), 3)
    (1.0, 0.503)
    """
    return tables()["v_photopic"]


def v_scotopic() -> np.ndarray:
    """CIE 1951 scotopic luminous efficiency V'(lambda) on the engine grid ([CIES010]).

    Examples
    --------
    V'(lambda) peaks at 507 nm, where [CIES010] tabulates 1.000; at 555 nm it is 0.402:

    >>> v = v_scotopic()
    >>> round(float(v[507 - 360]), 3), round(float(v[555 - 360]), 3)
    (1.0, 0.402)
    """
    return tables()["v_scotopic"]


def XYZ_to_xy(XYZ) -> np.ndarray:
    """CIE 1931 chromaticity coordinates x, y from tristimulus values ([CIE15] eq. 7.3).

    Examples
    --------
    The D65 white of [IEC61966-2-1] (XYZ 0.9505, 1, 1.0890) has x = 0.3127, y = 0.3290:

    >>> np.round(XYZ_to_xy([0.95047, 1.0, 1.08883]), 4).tolist()
    [0.3127, 0.329]
    """
    XYZ = np.asarray(XYZ, dtype=np.float64)
    return XYZ[..., :2] / np.sum(XYZ, axis=-1, keepdims=True)


def xy_to_XYZ(xy, Y=1.0) -> np.ndarray:
    """Tristimulus values with luminance ``Y`` from chromaticity x, y ([CIE15] eq. 7.3).

    Examples
    --------
    The inverse for D65 ([IEC61966-2-1]: XYZ 0.9505, 1.0000, 1.0890), and for luminance 100:

    >>> np.round(xy_to_XYZ([0.3127, 0.3290]), 4).tolist()
    [0.9505, 1.0, 1.0891]
    >>> np.round(xy_to_XYZ([0.3127, 0.3290], Y=100.0), 2).tolist()
    [95.05, 100.0, 108.91]
    """
    xy = np.asarray(xy, dtype=np.float64)
    x, y = xy[..., 0], xy[..., 1]
    Y = np.broadcast_to(np.asarray(Y, dtype=np.float64), x.shape)
    return np.stack([x * Y / y, Y, (1.0 - x - y) * Y / y], axis=-1)


def xy_to_uv1976(xy) -> np.ndarray:
    """CIE 1976 UCS u', v' from x, y ([CIE15] eq. 8.1).

    Examples
    --------
    D65 lies at u' = 0.1978, v' = 0.4683 (as colour-science's ``xy_to_Luv_uv`` gives it); the
    equal-energy white E (x = y = 1/3) at u' = 4/19, v' = 9/19 ([CIE15] eq. 8.1 by hand):

    >>> np.round(xy_to_uv1976([0.3127, 0.3290]), 4).tolist()
    [0.1978, 0.4683]
    >>> bool(np.allclose(xy_to_uv1976([1 / 3, 1 / 3]), [4 / 19, 9 / 19]))
    True
    """
    xy = np.asarray(xy, dtype=np.float64)
    x, y = xy[..., 0], xy[..., 1]
    d = -2.0 * x + 12.0 * y + 3.0
    return np.stack([4.0 * x / d, 9.0 * y / d], axis=-1)


def spectral_locus_xy(observer: str = "cie1931") -> np.ndarray:
    """Chromaticities (N, 2) of the monochromatic stimuli 360-830 nm ([CIE15] section 7.3).

    The ends, where the functions are nearly zero and the locus folds back on
    itself, are trimmed to 380-700 nm for the 2 degree and 380-720 nm for the
    10 degree observer (the locus is monotone there, common practice).

    Examples
    --------
    Row 0 is 380 nm; at 520 nm, near the top of the horseshoe, [CIE15] Table T.4 gives
    x = 0.0743, y = 0.8338:

    >>> locus = spectral_locus_xy()
    >>> locus.shape
    (321, 2)
    >>> np.round(locus[520 - 380], 4).tolist()
    [0.0743, 0.8338]
    """
    wl = tables()["wavelength_nm"]
    hi = 700.0 if check_observer(observer) == "cie1931" else 720.0
    keep = (wl >= 380.0) & (wl <= hi)
    return XYZ_to_xy(cmfs(observer)[keep])


def inside_spectral_locus(xy, observer: str = "cie1931") -> np.ndarray:
    """Whether chromaticities lie strictly inside the spectral locus and purple line.

    Ray-casting point-in-polygon test, vectorised (common practice).
    References: [CIE15] section 7.3 (the locus and the purple boundary).

    Examples
    --------
    The D65 white is inside; x = y = 0.8 (x + y > 1) cannot be a colour at all:

    >>> inside_spectral_locus([[0.3127, 0.3290], [0.8, 0.8]]).tolist()
    [True, False]
    """
    pts = np.asarray(xy, dtype=np.float64)
    poly = spectral_locus_xy(observer)
    x, y = pts[..., 0][..., None], pts[..., 1][..., None]
    x1, y1 = poly[:, 0], poly[:, 1]
    x2, y2 = np.roll(x1, -1), np.roll(y1, -1)
    crosses = (y1 > y) != (y2 > y)
    with np.errstate(divide="ignore", invalid="ignore"):
        x_at = x1 + (y - y1) * (x2 - x1) / (y2 - y1)
    inside = np.sum(crosses & (x < x_at), axis=-1) % 2 == 1
    return inside & np.isfinite(pts).all(axis=-1)
