"""Where a star's temperature comes from: kelvin, a B-V colour index, or a spectral class.

- Effective temperature in kelvin, supported range 500-100 000 K.
- B-V (Johnson) through Ballesteros (2012), EPL 97, 34008, eq. 14:
  ``T = 4600 K * (1 / (0.92 (B-V) + 1.7) + 1 / (0.92 (B-V) + 0.62))``,
  accepted for -0.40 <= B-V <= 2.00 (the range of normal stars; the formula
  diverges at B-V = -0.674).
- Main-sequence spectral classes O5V-M8V through the table below: mean dwarf
  effective temperatures after Pecaut & Mamajek (2013), ApJS 208, 9, Table 5
  and E. Mamajek's maintained "Modern Mean Dwarf Stellar Color and Effective
  Temperature Sequence". The values are **from memory** of that table (rounded
  as published, to 10-100 K); check them against the current table before
  relying on a single class to better than about 2 %. Decimal subclasses
  (``K5.5V``) interpolate linearly in temperature between the neighbours.
"""

from __future__ import annotations

import re

import numpy as np

from engine.errors import InputRangeError

TEMPERATURE_MIN_K = 500.0
TEMPERATURE_MAX_K = 100000.0
BV_MIN = -0.40
BV_MAX = 2.00

#: Main-sequence effective temperatures (K), from memory of Pecaut & Mamajek (2013) Table 5.
SPECTRAL_CLASS_TEFF_K = {
    "O5": 41400, "O6": 39500, "O7": 37100, "O8": 35100, "O9": 33300,
    "B0": 31400, "B1": 26000, "B2": 20600, "B3": 17000, "B4": 16400,
    "B5": 15700, "B6": 14500, "B7": 14000, "B8": 12300, "B9": 10700,
    "A0": 9700, "A1": 9300, "A2": 8800, "A3": 8600, "A4": 8250,
    "A5": 8100, "A6": 7910, "A7": 7760, "A8": 7590, "A9": 7400,
    "F0": 7220, "F1": 7020, "F2": 6820, "F3": 6750, "F4": 6670,
    "F5": 6550, "F6": 6350, "F7": 6280, "F8": 6180, "F9": 6050,
    "G0": 5930, "G1": 5860, "G2": 5770, "G3": 5720, "G4": 5680,
    "G5": 5660, "G6": 5600, "G7": 5550, "G8": 5480, "G9": 5380,
    "K0": 5270, "K1": 5170, "K2": 5100, "K3": 4830, "K4": 4600,
    "K5": 4440, "K6": 4300, "K7": 4100, "K8": 3990, "K9": 3930,
    "M0": 3850, "M1": 3660, "M2": 3560, "M3": 3430, "M4": 3210,
    "M5": 3060, "M6": 2810, "M7": 2680, "M8": 2570,
}
_ORDER = list(SPECTRAL_CLASS_TEFF_K)
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
    F. J. Ballesteros (2012), "New insights into black bodies", EPL 97, 34008, eq. 14.

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

    Only luminance class V (or none, meaning V) is accepted; O5-M8.

    References
    ----------
    Pecaut & Mamajek (2013), ApJS 208, 9, Table 5 (values from memory; see the
    module docstring).

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
    lo_key = f"{letter}{int(sub)}"
    if lo_key not in SPECTRAL_CLASS_TEFF_K:
        raise InputRangeError(f"spectral class {text!r} is outside the table; accepted: O5V to M8V")
    i = _ORDER.index(lo_key)
    frac = sub - int(sub)
    t_lo = float(SPECTRAL_CLASS_TEFF_K[lo_key])
    if frac == 0.0:
        return t_lo
    if i + 1 >= len(_ORDER):
        raise InputRangeError(f"spectral class {text!r} is outside the table; accepted: O5V to M8V")
    t_hi = float(SPECTRAL_CLASS_TEFF_K[_ORDER[i + 1]])
    return t_lo + frac * (t_hi - t_lo)
