"""Whites and chromatic adaptation.

The *scene white* is the stimulus that should look neutral on the display; the
*display white* is the display's own white (its RGB = 1, 1, 1). The engine
adapts every star's tristimulus values from the scene white to the display
white with a von Kries-type transform in a cone-like space.

Scene white specifications (strings, case-insensitive):

- ``D50``, ``D55``, ``D65``, ``D75``: CIE daylight illuminants, computed from
  the daylight basis functions at the nominal CCT times 1.4388/1.4380, which
  is how CIE defines them ([CIE15] section 3.1 and note 2 of Table T.1).
- ``E``: the equal-energy stimulus ([CIE15] section 3.1), x = y = 1/3.
- ``DCI``: the digital-cinema projector white x = 0.314, y = 0.351
  ([RP431-2]).
- ``daylight:<CCT>``: a point of the CIE daylight locus, 4000-25 000 K
  ([CIE15] eq. 3.3-3.5).
- ``blackbody:<K>``: a Planckian radiator at that temperature (500-100 000 K).
- ``xy:<x>,<y>``: a chromaticity, which must lie inside the spectral locus.

``daylight:<CCT>`` is the locus point itself for the 2 degree observer; for
the 10 degree observer, and for the D presets always, the daylight spectrum
(S0 + M1 S1 + M2 S2) is integrated with the chosen observer, as CIE tabulates
them. ``DCI`` and ``xy:`` are chromaticities in the chosen observer's diagram.

Adaptation transforms (the 3 x 3 "sharpened" cone matrices):

- ``bradford`` (default): [Lam1985], as given by [Lindbloom] and in
  [CIE159] Annex; the linear form without the blue non-linearity.
- ``cat02``: [CIE159] (CIECAM02), M_CAT02.
- ``cat16``: [Li2017], M_16.
- ``von-kries``: Hunt-Pointer-Estevez cone space normalised to D65
  ([Fairchild2013] chapter 9, "Chromatic Adaptation Models", the von Kries model;
  chapter from memory, equation number not checked).
- ``none``: no adaptation (XYZ scaling is not applied either).
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache

import numpy as np

from starkiln.engine.errors import SettingsError, finite_number
from starkiln.engine.colour.observers import XYZ_to_xy, check_observer, cmfs, inside_spectral_locus, xy_to_XYZ
from starkiln.engine.colour.cie_data import tables

#: Sharpened cone matrices, XYZ -> LMS. Sources in the module docstring.
CAT_MATRICES = {
    "bradford": np.array([[0.8951, 0.2664, -0.1614],
                          [-0.7502, 1.7135, 0.0367],
                          [0.0389, -0.0685, 1.0296]]),
    "cat02": np.array([[0.7328, 0.4296, -0.1624],
                       [-0.7036, 1.6975, 0.0061],
                       [0.0030, 0.0136, 0.9834]]),
    "cat16": np.array([[0.401288, 0.650173, -0.051461],
                       [-0.250268, 1.204414, 0.045854],
                       [-0.002079, 0.048952, 0.953127]]),
    "von-kries": np.array([[0.40024, 0.70760, -0.08081],
                           [-0.22630, 1.16532, 0.04570],
                           [0.00000, 0.00000, 0.91822]]),
}
ADAPTATIONS = ("bradford", "cat16", "cat02", "von-kries", "none")

#: Nominal CCTs of the CIE D illuminants ([CIE15] Table T.1).
_D_NOMINAL_K = {"D50": 5000.0, "D55": 5500.0, "D65": 6500.0, "D75": 7500.0}
#: c2 correction of the D-illuminant CCTs: 1.4388 / 1.4380 ([CIE15] Table T.1, note).
_C2_RATIO = 1.4388 / 1.4380
#: DCI projector white ([RP431-2], section 7.8).
DCI_WHITE_XY = (0.314, 0.351)
#: ACES white, x = 0.32168, y = 0.33767 ([ST2065-1]; about D60, not a CIE daylight).
ACES_WHITE_XY = (0.32168, 0.33767)
WHITE_PRESETS = ("D50", "D55", "D65", "D75", "E", "DCI", "ACES")
DAYLIGHT_RANGE_K = (4000.0, 25000.0)


def check_adaptation(name: str) -> str:
    """Canonical adaptation name or :class:`SettingsError` (accepted: see ``ADAPTATIONS``)."""
    key = str(name).strip().lower().replace("_", "-").replace(" ", "-")
    key = {"vonkries": "von-kries", "von-kries-hpe": "von-kries", "ciecat02": "cat02",
           "ciecat16": "cat16"}.get(key, key)
    if key not in ADAPTATIONS:
        raise SettingsError(f"unknown adaptation {name!r}; accepted: {', '.join(ADAPTATIONS)}")
    return key


def daylight_xy(cct_K) -> np.ndarray:
    """Chromaticity of CIE daylight at a correlated colour temperature.

    Parameters
    ----------
    cct_K : array_like
        CCT in kelvin, 4000-25 000 K.

    Returns
    -------
    numpy.ndarray
        (..., 2) x_D, y_D from [CIE15] equations 3.3 (4000-7000 K),
        3.4 (7000-25 000 K) and 3.5 (y_D = -3 x_D^2 + 2.87 x_D - 0.275).

    References
    ----------
    [CIE15] section 3.1.

    Examples
    --------
    >>> [round(float(v), 4) for v in daylight_xy(6504.0)]
    [0.3127, 0.3291]
    """
    t = np.asarray(cct_K, dtype=np.float64)
    low = -4.6070e9 / t**3 + 2.9678e6 / t**2 + 0.09911e3 / t + 0.244063
    high = -2.0064e9 / t**3 + 1.9018e6 / t**2 + 0.24748e3 / t + 0.237040
    x = np.where(t <= 7000.0, low, high)
    y = -3.000 * x**2 + 2.870 * x - 0.275
    return np.stack([x, y], axis=-1)


def daylight_spectrum(cct_K: float) -> np.ndarray:
    """Relative spectral power of CIE daylight on the engine grid ([CIE15] eq. 3.6-3.7).

    M1 and M2 are rounded to three decimals, as [CIE15] section 3.1 directs.

    Examples
    --------
    Integrated with the CIE 1931 observer, the 6504 K daylight spectrum is D65, which
    [CIE15] Table T.3 places at x = 0.31272, y = 0.32903:

    >>> from starkiln.engine.colour.observers import XYZ_to_xy, cmfs
    >>> np.round(XYZ_to_xy(daylight_spectrum(6504.0) @ cmfs("cie1931")), 4).tolist()
    [0.3127, 0.329]
    """
    x, y = daylight_xy(cct_K)
    m = 0.0241 + 0.2562 * x - 0.7341 * y
    m1 = round((-1.3515 - 1.7703 * x + 5.9114 * y) / m, 3)
    m2 = round((0.0300 - 31.4424 * x + 30.0717 * y) / m, 3)
    tab = tables()
    return tab["daylight_s0"] + m1 * tab["daylight_s1"] + m2 * tab["daylight_s2"]


@dataclass(frozen=True)
class White:
    """A resolved white: its specification, chromaticity and tristimulus values (Y = 1)."""

    spec: str
    xy: tuple[float, float]

    @property
    def XYZ(self) -> np.ndarray:
        """Tristimulus values with Y = 1 ([CIE15] eq. 7.3)."""
        return xy_to_XYZ(np.array(self.xy))


def _number(text: str, what: str, spec: str) -> float:
    """A finite number in a white specification (:func:`starkiln.engine.errors.finite_number`)."""
    return finite_number(text, f"white {spec!r}: {what}")


def normalise_white_spec(spec: str) -> str:
    """Canonical spelling of a white specification, validated (see the module docstring)."""
    resolve_white(spec, "cie1931")
    text = str(spec).strip()
    head, _, rest = text.partition(":")
    if not rest:
        return head.upper()
    return f"{head.lower()}:{rest.replace(' ', '')}"


@lru_cache(maxsize=256)
def resolve_white(spec: str, observer: str = "cie1931") -> White:
    """Resolve a scene-white specification to a chromaticity for an observer.

    Parameters
    ----------
    spec : str
        A preset (``D50 D55 D65 D75 E DCI``), ``daylight:<CCT>``,
        ``blackbody:<K>`` or ``xy:<x>,<y>``.
    observer : str
        ``cie1931`` or ``cie1964``; spectral whites are integrated with it.

    Returns
    -------
    White

    Raises
    ------
    SettingsError
        Unknown preset, number out of range, or xy outside the spectral locus.

    References
    ----------
    [CIE15] sections 3.1 and 7.3; [RP431-2] (DCI white).

    Examples
    --------
    D65 and D50 as [CIE15] Table T.3 gives them for the 2 degree observer (0.31272, 0.32903;
    0.34567, 0.35851; X, Y, Z = 95.04, 100, 108.88 for D65), the DCI white of [RP431-2]
    (0.314, 0.351) and the equal-energy E:

    >>> [round(v, 4) for v in resolve_white("D65").xy]
    [0.3127, 0.329]
    >>> [round(v, 4) for v in resolve_white("D50").xy]
    [0.3457, 0.3585]
    >>> resolve_white("DCI").xy, resolve_white("E").xy == (1 / 3, 1 / 3)
    ((0.314, 0.351), True)
    >>> bool(np.allclose(resolve_white("D65").XYZ, [0.9504, 1.0, 1.0888], atol=1e-4))
    True
    """
    from starkiln.engine.colour.spectrum import planck_radiance  # local: spectrum imports nothing of ours

    observer = check_observer(observer)
    text = str(spec).strip()
    head, sep, rest = text.partition(":")
    key = head.strip().upper()
    accepted = ("accepted: D50, D55, D65, D75, E, DCI, ACES, daylight:<4000-25000 K>, "
                "blackbody:<500-100000 K>, xy:<x>,<y>")
    if not sep:
        if key in _D_NOMINAL_K:
            return White(key, _spectrum_xy(daylight_spectrum(_D_NOMINAL_K[key] * _C2_RATIO),
                                           observer))
        if key == "E":
            return White("E", (1.0 / 3.0, 1.0 / 3.0))
        if key == "DCI":
            return White("DCI", DCI_WHITE_XY)
        if key == "ACES":
            return White("ACES", ACES_WHITE_XY)
        raise SettingsError(f"unknown white {text!r}; {accepted}")
    kind = head.strip().lower()
    if kind == "daylight":
        cct = _number(rest, "CCT", text)
        lo, hi = DAYLIGHT_RANGE_K
        if not lo <= cct <= hi:
            raise SettingsError(f"white {text!r}: daylight CCT {cct:g} K is outside {lo:g}-{hi:g} K")
        if observer == "cie1931":  # the locus is defined in the 2 degree diagram
            x, y = daylight_xy(cct)
            return White(f"daylight:{cct:g}", (float(x), float(y)))
        return White(f"daylight:{cct:g}", _spectrum_xy(daylight_spectrum(cct), observer))
    if kind == "blackbody":
        t = _number(rest, "temperature", text)
        from starkiln.engine.stars.temperature import TEMPERATURE_MAX_K, TEMPERATURE_MIN_K

        if not TEMPERATURE_MIN_K <= t <= TEMPERATURE_MAX_K:
            raise SettingsError(f"white {text!r}: blackbody temperature {t:g} K is outside "
                                f"{TEMPERATURE_MIN_K:g}-{TEMPERATURE_MAX_K:g} K")
        return White(f"blackbody:{t:g}", _spectrum_xy(planck_radiance(t), observer))
    if kind == "xy":
        parts = rest.split(",")
        if len(parts) != 2:
            raise SettingsError(f"white {text!r}: expected xy:<x>,<y>, e.g. xy:0.3127,0.3290")
        xy = (_number(parts[0], "x", text), _number(parts[1], "y", text))
        if not inside_spectral_locus(np.array(xy), observer):
            raise SettingsError(f"white {text!r}: chromaticity ({xy[0]:g}, {xy[1]:g}) lies outside "
                                "the spectral locus; accepted: a point inside it")
        return White(f"xy:{xy[0]:g},{xy[1]:g}", xy)
    raise SettingsError(f"unknown white {text!r}; {accepted}")


def _spectrum_xy(spectrum: np.ndarray, observer: str) -> tuple[float, float]:
    xy = XYZ_to_xy(spectrum @ cmfs(observer))
    return (float(xy[0]), float(xy[1]))


def adaptation_matrix(source_XYZ, target_XYZ, method: str = "bradford") -> np.ndarray:
    """3 x 3 matrix adapting tristimulus values from one white to another.

    ``M = A^-1 diag(A target / A source) A`` with ``A`` the method's cone
    matrix ([vonKries1902] scaling in a sharpened space). ``none`` returns
    the identity.

    Parameters
    ----------
    source_XYZ, target_XYZ : array_like
        Tristimulus values of the source (scene) and target (display) whites.
    method : str
        One of ``bradford``, ``cat16``, ``cat02``, ``von-kries``, ``none``.

    Returns
    -------
    numpy.ndarray
        (3, 3), to be applied as ``XYZ_target = M @ XYZ_source``.

    References
    ----------
    [vonKries1902]; [Lam1985]; [CIE159]; [Li2017]; [Fairchild2013] chapter 9 (from
    memory).

    Examples
    --------
    Bradford from D65 (0.95047, 1, 1.08883) to D50 (0.96422, 1, 0.82521), the matrix
    [Lindbloom] tabulates (1.0478112 0.0228866 -0.0501270 / 0.0295424 0.9904844 -0.0170491 /
    -0.0092345 0.0150436 0.7521316), and the source white lands on the target white:

    >>> d65, d50 = [0.95047, 1.0, 1.08883], [0.96422, 1.0, 0.82521]
    >>> M = adaptation_matrix(d65, d50, "bradford")
    >>> np.round(M, 4).tolist()
    [[1.0478, 0.0229, -0.0501], [0.0295, 0.9905, -0.017], [-0.0092, 0.015, 0.7521]]
    >>> bool(np.allclose(M @ d65, d50))
    True
    >>> adaptation_matrix(d65, d50, "none").tolist()
    [[1.0, 0.0, 0.0], [0.0, 1.0, 0.0], [0.0, 0.0, 1.0]]
    """
    method = check_adaptation(method)
    if method == "none":
        return np.eye(3)
    a = CAT_MATRICES[method]
    gain = (a @ np.asarray(target_XYZ, dtype=np.float64)) / (a @ np.asarray(source_XYZ,
                                                                              dtype=np.float64))
    return np.linalg.inv(a) @ np.diag(gain) @ a
