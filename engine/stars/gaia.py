"""Gaia photometry: effective temperature from BP-RP, and Johnson V from Gaia G.

Two published relations, both for the Gaia (E)DR3 photometric system:

- **BP-RP -> Teff**: [Mucciarelli2021],
  "Exploiting the Gaia EDR3 photometry to derive stellar temperatures",
  A&A 653, A90, eq. 1 and Table 1 (dwarf stars, colour BP-RP)::

      theta = b0 + b1 C + b2 C^2 + b3 [Fe/H] + b4 [Fe/H]^2 + b5 [Fe/H] C
      Teff  = 5040 K / theta,        C = (BP-RP)_0

  b0..b5 = 0.4929, 0.5092, -0.0353, 0.0192, -0.0020, -0.0395; valid for
  0.39 <= (BP-RP)_0 <= 1.50; dispersion of the fit 61 K. The coefficients,
  the range and the dispersion are **from memory** of Table 1; they agree
  with the values that public code citing the paper uses, which is the
  only cross-check available here (no access to the paper itself). The
  colour must be dereddened: Starkiln does not correct for extinction.
  Starkiln has no metallicity column, so [Fe/H] = 0 (solar) is assumed
  unless a value is passed; at [Fe/H] = -1 the temperature of a given
  colour changes by about +1 % (blue end) to -3 % (red end).

- **G -> V**: [Riello2021], "Gaia Early Data Release 3:
  Photometric content and validation", A&A 649, A3, Appendix C, Table C.2
  (relation with Johnson-Cousins V)::

      G - V = -0.02704 + 0.01424 C - 0.2156 C^2 + 0.01426 C^3,   C = BP-RP

  valid for -0.5 < BP-RP < 5.0, scatter 0.03017 mag. Coefficients, range
  and scatter are **from memory** of Table C.2; they agree with public code
  that cites the paper.

The check values printed in the two papers could not be consulted here, so
the tests check the relations against an independent published sequence
instead ([Mamajek2024], "A Modern Mean Dwarf Stellar Color and Effective
Temperature Sequence", the maintained form of [PecautMamajek2013] Table 5), within the stated scatter of each relation.
"""

from __future__ import annotations

import numpy as np

from starkiln.engine.errors import InputRangeError

#: [Mucciarelli2021] Table 1, dwarfs, BP-RP (from memory).
MBM21_DWARF_BP_RP = (0.4929, 0.5092, -0.0353, 0.0192, -0.0020, -0.0395)
#: Valid colour range of that relation (from memory of Table 1).
BP_RP_CALIBRATED_MIN = 0.39
BP_RP_CALIBRATED_MAX = 1.50
#: Dispersion of that relation, K (from memory of Table 1).
MBM21_DWARF_SIGMA_K = 61.0

#: [Riello2021] Table C.2: G - V as a cubic in BP-RP (from memory).
RIELLO21_G_MINUS_V = (-0.02704, 0.01424, -0.2156, 0.01426)
#: Valid colour range of the G - V relation (from memory of Table C.2).
BP_RP_G_TO_V_MIN = -0.5
BP_RP_G_TO_V_MAX = 5.0
#: Scatter of the G - V relation, mag (from memory of Table C.2).
RIELLO21_G_MINUS_V_SIGMA = 0.03017

#: Range over which Starkiln lets the BP-RP relation be extrapolated on request
#: (the G-to-V relation's range; the quadratic has no pole there). This is a
#: project choice for appearance only, not part of the published calibration.
BP_RP_EXTRAPOLATED_MIN = BP_RP_G_TO_V_MIN
BP_RP_EXTRAPOLATED_MAX = BP_RP_G_TO_V_MAX


def _as_float(values) -> np.ndarray:
    return np.asarray(values, dtype=np.float64)


def bp_rp_in_range(bp_rp, extrapolate: bool = False) -> np.ndarray:
    """Where a BP-RP colour is inside the range the temperature relation accepts.

    Parameters
    ----------
    bp_rp : array_like
        Dereddened Gaia BP-RP colours, mag.
    extrapolate : bool
        False: the published calibration range 0.39-1.50 ([Mucciarelli2021]
        Table 1, from memory). True: the wider range -0.5 to 5.0 that
        Starkiln accepts for appearance-only extrapolation.

    Returns
    -------
    numpy.ndarray
        Boolean array, False for non-finite values too.
    """
    c = _as_float(bp_rp)
    lo, hi = ((BP_RP_EXTRAPOLATED_MIN, BP_RP_EXTRAPOLATED_MAX) if extrapolate
              else (BP_RP_CALIBRATED_MIN, BP_RP_CALIBRATED_MAX))
    with np.errstate(invalid="ignore"):
        return np.isfinite(c) & (c >= lo) & (c <= hi)


def temperature_from_bp_rp(bp_rp, feh=0.0, extrapolate: bool = False) -> np.ndarray:
    """Effective temperature of dwarf stars from the dereddened Gaia BP-RP colour.

    Parameters
    ----------
    bp_rp : array_like
        Dereddened (BP-RP)_0, mag; 0.39-1.50 (or -0.5 to 5.0 with ``extrapolate``).
    feh : array_like
        Metallicity [Fe/H], dex; default 0 (solar, assumed when unknown).
    extrapolate : bool
        Accept colours outside the calibrated range (appearance only).

    Returns
    -------
    numpy.ndarray
        Teff in kelvin, the broadcast shape of the inputs.

    Raises
    ------
    starkiln.engine.errors.InputRangeError
        A colour outside the accepted range, or not finite.

    References
    ----------
    [Mucciarelli2021] eq. 1 and Table 1 (dwarfs, BP-RP); coefficients from memory (module docstring).

    Examples
    --------
    >>> round(float(temperature_from_bp_rp(0.82)))
    5684
    """
    c = _as_float(bp_rp)
    ok = bp_rp_in_range(c, extrapolate)
    if not np.all(ok):
        v = c[~ok].flat[0] if c.ndim else float(c)
        lo, hi = ((BP_RP_EXTRAPOLATED_MIN, BP_RP_EXTRAPOLATED_MAX) if extrapolate
                  else (BP_RP_CALIBRATED_MIN, BP_RP_CALIBRATED_MAX))
        raise InputRangeError(f"BP-RP {v:g} is outside the accepted range {lo:g} to {hi:g}")
    b0, b1, b2, b3, b4, b5 = MBM21_DWARF_BP_RP
    theta = b2 * c
    theta += b1
    theta *= c
    theta += b0
    if np.ndim(feh) or float(feh) != 0.0:
        f = _as_float(feh)
        theta = theta + f * (b3 + b4 * f + b5 * c)
    return 5040.0 / theta


def g_minus_v(bp_rp) -> np.ndarray:
    """Gaia G minus Johnson V as a function of BP-RP.

    Parameters
    ----------
    bp_rp : array_like
        Gaia BP-RP, mag, -0.5 to 5.0.

    Returns
    -------
    numpy.ndarray
        G - V in magnitudes.

    Raises
    ------
    starkiln.engine.errors.InputRangeError
        A colour outside -0.5 to 5.0, or not finite.

    References
    ----------
    [Riello2021], A&A 649, A3, Table C.2 (coefficients from memory).

    Examples
    --------
    >>> round(float(g_minus_v(0.82)), 4)
    -0.1525
    """
    c = _as_float(bp_rp)
    with np.errstate(invalid="ignore"):
        ok = np.isfinite(c) & (c >= BP_RP_G_TO_V_MIN) & (c <= BP_RP_G_TO_V_MAX)
    if not np.all(ok):
        v = c[~ok].flat[0] if c.ndim else float(c)
        raise InputRangeError(f"BP-RP {v:g} is outside the range of the G-to-V relation "
                              f"{BP_RP_G_TO_V_MIN:g} to {BP_RP_G_TO_V_MAX:g}")
    a0, a1, a2, a3 = RIELLO21_G_MINUS_V
    return a0 + c * (a1 + c * (a2 + c * a3))


def v_from_g(g_mag, bp_rp) -> np.ndarray:
    """Johnson V magnitude from Gaia G and BP-RP: ``V = G - (G - V)``.

    Parameters
    ----------
    g_mag : array_like
        Gaia G magnitudes.
    bp_rp : array_like
        Gaia BP-RP, -0.5 to 5.0.

    Returns
    -------
    numpy.ndarray
        V magnitudes.

    References
    ----------
    [Riello2021], A&A 649, A3, Table C.2 (see :func:`g_minus_v`).

    Examples
    --------
    >>> round(float(v_from_g(10.0, 0.82)), 4)
    10.1525
    """
    return _as_float(g_mag) - g_minus_v(bp_rp)
