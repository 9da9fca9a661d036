"""Where a star's temperature comes from: kelvin, a B-V colour index, or a spectral class.

- Effective temperature in kelvin, supported range 500-100 000 K.
- B-V (Johnson) through [Ballesteros2012], EPL 97, 34008, eq. 14:
  ``T = 4600 K * (1 / (0.92 (B-V) + 1.7) + 1 / (0.92 (B-V) + 0.62))``,
  accepted for -0.40 <= B-V <= 2.00 (the range of normal stars; the formula
  diverges at B-V = -0.674).
- Main-sequence spectral classes O5V-M8V through [Mamajek2024], "A Modern Mean
  Dwarf Stellar Color and Effective Temperature Sequence", version 2024.05.15
  (the maintained form of [PecautMamajek2013] Table 5), column
  Teff, copied from the table file as its author publishes it. Decimal
  subclasses interpolate linearly in temperature between the tabulated
  neighbours, which include the half subclasses the table lists (O5.5, B0.5,
  F9.5, M0.5 ...).
- Colour indices (B-V, Gaia BP-RP) by one of two models (:data:`INDEX_MODELS`, chosen with
  ``--index-model`` and the like; :func:`temperature_from_index`):

  - ``synthetic`` (the default): the blackbody whose synthetic colour index, through the
    published passbands with Vega's zero point, equals the given index
    (:func:`starkiln.engine.colour.photometry.temperature_from_colour_index`). This is the
    blackbody of the star's *colour*, which is what a display shows; it is not the star's
    effective temperature (hot stars' Balmer jump and lines, cool stars' molecular bands
    move their colours away from a blackbody's of the same Teff).
  - ``relation``: the published temperature relations, which give an effective
    temperature: [Ballesteros2012] for B-V, [Mucciarelli2021] for BP-RP
    (:mod:`starkiln.engine.stars.gaia`).

  The synthetic model accepts B-V from -0.40 and BP-RP from -0.60 (observed colours reach
  about -0.35 and -0.55, common practice, plus a margin for errors of measurement) up to the
  colour of a 500 K blackbody (B-V 10.66, BP-RP 14.82: the render path's coolest). Colours
  bluer than the 100 000 K blackbody's (B-V -0.339, BP-RP -0.553; no blackbody is bluer than
  the Rayleigh-Jeans limits B-V -0.379, BP-RP -0.620) are shown as 100 000 K, and marked
  (:data:`BLUER_THAN_BLACKBODY`).
- Spectral classes: the effective temperature (the readouts) from the table's Teff column,
  and the rendered colour (:func:`temperature_for_spectral_class`) from the class's mean
  intrinsic B-V, the table's B-V column ([Mamajek2018], version 2018.08.02 of the same
  table, the copy at hand) through the synthetic model; with the ``relation`` model the
  class is rendered at its Teff as before.
"""

from __future__ import annotations

import re

import numpy as np

from starkiln.engine.errors import InputRangeError

TEMPERATURE_MIN_K = 500.0
TEMPERATURE_MAX_K = 100000.0
BV_MIN = -0.40
BV_MAX = 2.00
#: How a colour index becomes the temperature that is rendered (module docstring).
INDEX_MODELS = ("synthetic", "relation")
DEFAULT_INDEX_MODEL = "synthetic"
#: The bluest colours the synthetic model accepts (module docstring: common practice).
SYNTHETIC_INDEX_MIN = {"B-V": -0.40, "BP-RP": -0.60}
#: The status of a colour bluer than any blackbody of the render range (shown at 100 000 K).
BLUER_THAN_BLACKBODY = "bluer-than-blackbody"

#: Main-sequence effective temperatures (K) of the whole subclasses, [Mamajek2024].
SPECTRAL_CLASS_TEFF_K = {
    "O5": 41400, "O6": 39800, "O7": 37900, "O8": 35100, "O9": 33300,
    "B0": 31400, "B1": 26000, "B2": 20600, "B3": 17000, "B4": 16400,
    "B5": 15700, "B6": 14500, "B7": 14000, "B8": 12300, "B9": 10700,
    "A0": 9700, "A1": 9300, "A2": 8840, "A3": 8600, "A4": 8250,
    "A5": 8100, "A6": 7910, "A7": 7760, "A8": 7590, "A9": 7400,
    "F0": 7220, "F1": 7020, "F2": 6820, "F3": 6750, "F4": 6670,
    "F5": 6550, "F6": 6350, "F7": 6280, "F8": 6180, "F9": 6050,
    "G0": 5930, "G1": 5860, "G2": 5770, "G3": 5720, "G4": 5680,
    "G5": 5660, "G6": 5600, "G7": 5550, "G8": 5480, "G9": 5380,
    "K0": 5290, "K1": 5170, "K2": 5100, "K3": 4870, "K4": 4600,
    "K5": 4440, "K6": 4300, "K7": 4090, "K8": 3990, "K9": 3930,
    "M0": 3850, "M1": 3660, "M2": 3560, "M3": 3430, "M4": 3210,
    "M5": 3060, "M6": 2810, "M7": 2680, "M8": 2570,
}
#: The half subclasses the same table lists (used as interpolation nodes too).
HALF_SUBCLASS_TEFF_K = {
    "O5.5": 40400, "O6.5": 38000, "O7.5": 36100, "O8.5": 34300, "O9.5": 31900,
    "B0.5": 29000, "B1.5": 24500, "B2.5": 18500, "B9.5": 10400, "F9.5": 5990,
    "M0.5": 3770, "M1.5": 3620, "M2.5": 3470, "M3.5": 3270, "M4.5": 3110,
    "M5.5": 2930, "M6.5": 2740, "M7.5": 2630,
}
#: Mean intrinsic B-V of main-sequence classes, [Mamajek2018] (version 2018.08.02, column
#: B-V, copied from the table file; O5-O8.5 are given there to two decimals).
SPECTRAL_CLASS_BV = {
    "O5": -0.32, "O5.5": -0.32, "O6": -0.32, "O6.5": -0.32, "O7": -0.32, "O7.5": -0.32,
    "O8": -0.32, "O8.5": -0.32, "O9": -0.318, "O9.5": -0.312,
    "B0": -0.307, "B0.5": -0.295, "B1": -0.278, "B1.5": -0.252, "B2": -0.210, "B2.5": -0.198,
    "B3": -0.178, "B4": -0.165, "B5": -0.156, "B6": -0.140, "B7": -0.128, "B8": -0.109,
    "B9": -0.070, "B9.5": -0.050,
    "A0": 0.000, "A1": 0.043, "A2": 0.074, "A3": 0.090, "A4": 0.140, "A5": 0.160,
    "A6": 0.170, "A7": 0.210, "A8": 0.250, "A9": 0.255,
    "F0": 0.294, "F1": 0.334, "F2": 0.374, "F3": 0.389, "F4": 0.412, "F5": 0.438,
    "F6": 0.484, "F7": 0.510, "F8": 0.530, "F9": 0.552,
    "G0": 0.596, "G1": 0.604, "G2": 0.650, "G3": 0.661, "G4": 0.674, "G5": 0.680,
    "G6": 0.704, "G7": 0.713, "G8": 0.737, "G9": 0.777,
    "K0": 0.816, "K0.5": 0.828, "K1": 0.847, "K1.5": 0.859, "K2": 0.884, "K2.5": 0.938,
    "K3": 0.980, "K3.5": 1.050, "K4": 1.100, "K4.5": 1.116, "K5": 1.150, "K5.5": 1.200,
    "K6": 1.240, "K6.5": 1.310, "K7": 1.330, "K8": 1.356, "K9": 1.382,
    "M0": 1.408, "M0.5": 1.441, "M1": 1.475, "M1.5": 1.486, "M2": 1.500, "M2.5": 1.522,
    "M3": 1.544, "M3.5": 1.602, "M4": 1.661, "M4.5": 1.72, "M5": 1.874, "M5.5": 1.91,
    "M6": 2.00, "M6.5": 2.06, "M7": 2.06, "M7.5": 2.17, "M8": 2.20,
}
_LETTERS = "OBAFGKM"


def _class_code(key: str) -> float:
    """Position on one numeric scale: O0 = 0, B0 = 10, ... with the subclass added."""
    return 10.0 * _LETTERS.index(key[0]) + float(key[1:])


_NODES = sorted((_class_code(k), float(v)) for k, v in
                {**SPECTRAL_CLASS_TEFF_K, **HALF_SUBCLASS_TEFF_K}.items())
_NODE_CODES = np.array([c for c, _ in _NODES])
_NODE_TEFF = np.array([t for _, t in _NODES])
_BV_NODES = sorted((_class_code(k), float(v)) for k, v in SPECTRAL_CLASS_BV.items())
_BV_NODE_CODES = np.array([c for c, _ in _BV_NODES])
_BV_NODE_VALUES = np.array([v for _, v in _BV_NODES])
_CLASS_RE = re.compile(r"^\s*([OBAFGKM])\s*(\d(?:\.\d+)?)\s*(V|IV|III|II|I|IA|IB|IAB)?\s*$",
                       re.IGNORECASE)


def check_temperature(temperature_K, what: str = "temperature") -> np.ndarray:
    """Validate temperatures: finite, > 0 and within 500-100 000 K.

    Returns the input as a float64 array; raises :class:`InputRangeError`
    naming the first bad value. Range: this project's supported range.
    """
    t = np.asarray(temperature_K, dtype=np.float64)
    bad = ~np.isfinite(t) | (t < TEMPERATURE_MIN_K) | (t > TEMPERATURE_MAX_K)
    if np.any(bad):
        v = t[bad].flat[0]
        raise InputRangeError(f"{what} {v:g} K is outside the supported range "
                              f"{TEMPERATURE_MIN_K:g}-{TEMPERATURE_MAX_K:g} K")
    return t


def temperature_from_bv(bv) -> np.ndarray:
    """Effective temperature from the Johnson B-V colour index.

    Parameters
    ----------
    bv : array_like
        B-V in magnitudes, -0.40 to 2.00.

    Returns
    -------
    numpy.ndarray
        Temperature in kelvin.

    References
    ----------
    [Ballesteros2012], "New insights into black bodies", EPL 97, 34008, eq. 14.

    Examples
    --------
    >>> round(float(temperature_from_bv(0.65)))
    5778
    """
    b = np.asarray(bv, dtype=np.float64)
    bad = ~np.isfinite(b) | (b < BV_MIN) | (b > BV_MAX)
    if np.any(bad):
        v = b[bad].flat[0]
        raise InputRangeError(f"B-V {v:g} is outside the accepted range {BV_MIN:g} to {BV_MAX:g}")
    return 4600.0 * (1.0 / (0.92 * b + 1.7) + 1.0 / (0.92 * b + 0.62))


def check_index_model(name: str) -> str:
    """The canonical colour-index model (``synthetic`` or ``relation``) or an error.

    References
    ----------
    The module docstring (the two models).
    """
    key = str(name).strip().lower()
    if key not in INDEX_MODELS:
        raise InputRangeError(f"unknown colour-index model {name!r}; accepted: "
                              f"{', '.join(INDEX_MODELS)}")
    return key


def index_range(index: str, model: str = DEFAULT_INDEX_MODEL,
                extrapolate: bool = False) -> tuple[float, float]:
    """The colours a model accepts: ``(lo, hi)`` in magnitudes.

    Parameters
    ----------
    index : {"B-V", "BP-RP"}
    model : {"synthetic", "relation"}
    extrapolate : bool
        Relation model, BP-RP only: the wider range of appearance-only extrapolation.

    Returns
    -------
    tuple of float

    References
    ----------
    [Ballesteros2012], [Mucciarelli2021] (relations); the module docstring (synthetic).
    """
    from starkiln.engine.colour.photometry import check_index, colour_index_range

    index, model = check_index(index), check_index_model(model)
    if model == "synthetic":
        return SYNTHETIC_INDEX_MIN[index], colour_index_range(index)[1]
    if index == "B-V":
        return BV_MIN, BV_MAX
    from starkiln.engine.stars import gaia

    if extrapolate:
        return gaia.BP_RP_EXTRAPOLATED_MIN, gaia.BP_RP_EXTRAPOLATED_MAX
    return gaia.BP_RP_CALIBRATED_MIN, gaia.BP_RP_CALIBRATED_MAX


def blackbody_blue_limit(index: str) -> float:
    """The colour of the 100 000 K blackbody: bluer colours are shown at 100 000 K (synthetic).

    References
    ----------
    :func:`starkiln.engine.colour.photometry.colour_index_range` ([Planck1901]).
    """
    from starkiln.engine.colour.photometry import colour_index_range

    return colour_index_range(index)[0]


def temperature_from_index(value, index: str, model: str = DEFAULT_INDEX_MODEL, *,
                           extrapolate: bool = False) -> np.ndarray:
    """The temperature to render for a colour index, by the chosen model.

    Parameters
    ----------
    value : array_like
        B-V or BP-RP colours, mag.
    index : {"B-V", "BP-RP"}
    model : {"synthetic", "relation"}
        ``synthetic`` (default): the blackbody of the same synthetic colour (colours bluer
        than the 100 000 K blackbody give 100 000 K); ``relation``: the effective temperature
        of [Ballesteros2012] (B-V) or [Mucciarelli2021] (BP-RP, solar [Fe/H]).
    extrapolate : bool
        Relation model, BP-RP: accept -0.5 to 5.0 (appearance only).

    Returns
    -------
    numpy.ndarray
        Kelvin, the shape of ``value``.

    Raises
    ------
    starkiln.engine.errors.InputRangeError
        A colour outside :func:`index_range` (named with the range), or not finite.

    References
    ----------
    [BessellMurphy2012], [Riello2021] (synthetic photometry); [Ballesteros2012] eq. 14;
    [Mucciarelli2021] eq. 1.

    Examples
    --------
    The Sun's B-V, 0.653 ([Ramirez2012]): the relation gives about its Teff, 5772 K
    ([IAU2015B3]); the synthetic model, the blackbody of the same colour, within 1 % of it:

    >>> abs(float(temperature_from_index(0.653, "B-V", "relation")) / 5772.0 - 1) < 0.01
    True
    >>> abs(float(temperature_from_index(0.653, "B-V")) / 5772.0 - 1) < 0.01
    True
    """
    from starkiln.engine.colour.photometry import check_index, temperature_from_colour_index

    index, model = check_index(index), check_index_model(model)
    if model == "relation":
        if index == "B-V":
            return temperature_from_bv(value)
        from starkiln.engine.stars.gaia import temperature_from_bp_rp

        return temperature_from_bp_rp(value, extrapolate=extrapolate)
    v = np.asarray(value, dtype=np.float64)
    lo, hi = index_range(index, model)
    with np.errstate(invalid="ignore"):
        bad = ~np.isfinite(v) | (v < lo) | (v > hi)
    if np.any(bad):
        x = v[bad].flat[0] if v.ndim else float(v)
        raise InputRangeError(f"{index} {x:g} is outside the accepted range {lo:g} to {hi:.2f} "
                              f"(synthetic model: blackbodies of 500-100 000 K)")
    return temperature_from_colour_index(v, index, clamp_blue=True)


def _class_position(text: str) -> float:
    """The validated position of a main-sequence class on the O0 = 0, B0 = 10 ... scale."""
    m = _CLASS_RE.match(str(text))
    if not m:
        raise InputRangeError(f"spectral class {text!r} not understood; accepted: O5V to M8V, "
                              "e.g. G2V, K5.5V, B3")
    letter, sub, lum = m.group(1).upper(), float(m.group(2)), (m.group(3) or "V").upper()
    if lum != "V":
        raise InputRangeError(f"spectral class {text!r}: luminosity class {lum} is not supported; "
                              "accepted: main-sequence (V) classes O5V to M8V")
    code = 10.0 * _LETTERS.index(letter) + sub
    if not _NODE_CODES[0] <= code <= _NODE_CODES[-1] or sub >= 10.0:
        raise InputRangeError(f"spectral class {text!r} is outside the table; accepted: O5V to M8V")
    return code


def temperature_from_spectral_class(text: str) -> float:
    """Effective temperature of a main-sequence spectral class such as ``G2V`` or ``K5.5``.

    Only luminosity class V (or none, meaning V) is accepted; O5-M8.

    References
    ----------
    [Mamajek2024] (mean dwarf sequence, version 2024.05.15; the maintained form of
    [PecautMamajek2013] Table 5); see the module docstring.

    Examples
    --------
    >>> temperature_from_spectral_class("G2V")
    5770.0
    """
    return float(np.interp(_class_position(text), _NODE_CODES, _NODE_TEFF))


def spectral_class_bv(text: str) -> float:
    """Mean intrinsic Johnson B-V of a main-sequence spectral class (``G2V``, ``K5.5`` ...).

    Decimal subclasses interpolate linearly between the tabulated neighbours.

    References
    ----------
    [Mamajek2018] (column B-V; the dwarf sequence of [PecautMamajek2013] Table 5).

    Examples
    --------
    The table lists B-V = 0.650 for G2V and 0.000 for A0V:

    >>> spectral_class_bv("G2V"), spectral_class_bv("A0")
    (0.65, 0.0)
    """
    return float(np.interp(_class_position(text), _BV_NODE_CODES, _BV_NODE_VALUES))


def temperature_for_spectral_class(text: str, model: str = DEFAULT_INDEX_MODEL) -> float:
    """The temperature to render for a main-sequence spectral class, by the chosen model.

    Parameters
    ----------
    text : str
        ``G2V``, ``K5.5``, ``B3`` ... (O5V-M8V).
    model : {"synthetic", "relation"}
        ``synthetic`` (default): the blackbody of the class's mean intrinsic B-V
        (:func:`spectral_class_bv`); ``relation``: the class's effective temperature
        (:func:`temperature_from_spectral_class`).

    Returns
    -------
    float
        Kelvin.

    References
    ----------
    [Mamajek2018] (B-V), [Mamajek2024] (Teff); [BessellMurphy2012] (synthetic photometry).

    Examples
    --------
    A0V has B-V = 0 like Vega, so its colour-matched blackbody is far hotter than its Teff
    of 9700 K ([Mamajek2024]): the Balmer jump makes A stars bluer than blackbodies of
    their temperature (common practice):

    >>> temperature_for_spectral_class("A0V") > 1.2 * temperature_from_spectral_class("A0V")
    True
    """
    if check_index_model(model) == "relation":
        return temperature_from_spectral_class(text)
    return float(temperature_from_index(spectral_class_bv(text), "B-V", "synthetic"))
