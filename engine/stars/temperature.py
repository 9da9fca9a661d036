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
"""

from __future__ import annotations

import re

import numpy as np

from starkiln.engine.errors import InputRangeError

TEMPERATURE_MIN_K = 500.0
TEMPERATURE_MAX_K = 100000.0
BV_MIN = -0.40
BV_MAX = 2.00

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
_LETTERS = "OBAFGKM"


def _class_code(key: str) -> float:
    """Position on one numeric scale: O0 = 0, B0 = 10, ... with the subclass added."""
    return 10.0 * _LETTERS.index(key[0]) + float(key[1:])


_NODES = sorted((_class_code(k), float(v)) for k, v in
                {**SPECTRAL_CLASS_TEFF_K, **HALF_SUBCLASS_TEFF_K}.items())
_NODE_CODES = np.array([c for c, _ in _NODES])
_NODE_TEFF = np.array([t for _, t in _NODES])
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
    return float(np.interp(code, _NODE_CODES, _NODE_TEFF))
