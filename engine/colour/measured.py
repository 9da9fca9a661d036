"""Display profiles from colorimeter readings of the display's own patches.

The readings file is CSV (``docs/formats.md``, "Display readings (CSV)"): a header row, then
one row a patch, with the columns

- ``patch``: ``red``, ``green``, ``blue``, ``white`` (full drive of each, one row each,
  required) or ``grey`` (a step of a grey ramp, any number of rows);
- ``code``: the code value 0-1 the patch was shown at (grey rows only; empty or absent for
  the others);
- either ``X``, ``Y``, ``Z`` (tristimulus values, cd/m2) or ``x``, ``y``, ``Y`` (chromaticity
  and luminance, cd/m2): what a colorimeter reports.

The primaries and the white are the readings' chromaticities ([CIE15] eq. 7.3); the peak
luminance is the white's Y in cd/m2. With a grey ramp the tone curve is the ramp's relative
luminance ``Y / Y_white`` against its code values, with code 0 giving 0 and code 1 the
white: a pure power is kept when one fits every reading within 0.01 (readings are noisy), else
a ``table`` transfer: the readings themselves when their code values, with 0 and 1, are
equally spaced, otherwise 33 samples interpolated linearly from them. Without a ramp the
sRGB curve is assumed ([IEC61966-2-1]) and said in a note.

An additive display gives ``X_R + X_G + X_B = X_W`` (and so for Y and Z); when the sum differs
from the white by more than 3 % of the white's Y in any of X, Y, Z, the display is not additive
and a profile of three primaries can only approximate it: a warning says so (common practice
in display calibration).

References
----------
[CIE15] eq. 7.3 (xy from XYZ, XYZ from xyY); [IEC61966-2-1] (sRGB curve); [RFC4180] (CSV).
"""

from __future__ import annotations

import csv
import io
import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from starkiln.engine.errors import SettingsError

PRIMARY_PATCHES = ("red", "green", "blue", "white")
#: Additivity: largest |R + G + B - W| accepted without a warning, as a fraction of Y_W.
ADDITIVITY_TOLERANCE = 0.03
#: A pure power must fit every ramp reading within this (display-linear).
RAMP_GAMMA_TOLERANCE = 0.01
RAMP_TABLE_SAMPLES = 33
ACCEPTED_COLUMNS = "patch, code (grey rows), and X, Y, Z or x, y, Y"


@dataclass(frozen=True)
class MeasuredProfile:
    """A display built from readings, the warnings on its readings and notes on assumptions."""

    display: object  # starkiln.engine.colour.displays.Display
    warnings: tuple[str, ...]
    notes: tuple[str, ...]


def _number(text, what: str) -> float:
    try:
        v = float(str(text).strip())
    except ValueError:
        raise SettingsError(f"{what} {str(text).strip()!r} is not a number") from None
    if not math.isfinite(v):
        raise SettingsError(f"{what} {str(text).strip()!r} is not finite; accepted: a number")
    return v


def read_readings(text: str, source: str = "readings") -> tuple[dict, list]:
    """Parse a readings CSV (module docstring) into XYZ per patch and the grey ramp.

    Parameters
    ----------
    text : str
        The file's text.
    source : str
        How messages name the file.

    Returns
    -------
    (dict, list)
        ``{"red": XYZ, "green": XYZ, "blue": XYZ, "white": XYZ}`` (arrays, cd/m2) and the
        grey ramp as ``[(code, Y), ...]``.

    References
    ----------
    [RFC4180] (CSV); [CIE15] eq. 7.3 (xyY to XYZ).
    """
    rows = list(csv.reader(io.StringIO(text)))
    rows = [r for r in rows if any(c.strip() for c in r) and not r[0].lstrip().startswith("#")]
    if not rows:
        raise SettingsError(f"{source}: no header row; accepted columns: {ACCEPTED_COLUMNS}")
    header = [h.strip() for h in rows[0]]
    if "patch" not in [h.lower() for h in header]:
        raise SettingsError(f"{source}: no 'patch' column; accepted columns: {ACCEPTED_COLUMNS}")
    col = {h if h in ("X", "Y", "Z", "x", "y") else h.lower(): i for i, h in enumerate(header)}
    if all(k in col for k in ("X", "Y", "Z")):
        form = "XYZ"
    elif all(k in col for k in ("x", "y", "Y")):
        form = "xyY"
    else:
        raise SettingsError(f"{source}: columns {', '.join(header)}; accepted columns: "
                            f"{ACCEPTED_COLUMNS}")
    patches, ramp = {}, []
    for n, row in enumerate(rows[1:], start=2):
        row = row + [""] * (len(header) - len(row))
        where = f"{source}: row {n}"
        patch = row[col["patch"]].strip().lower()
        if patch not in PRIMARY_PATCHES + ("grey", "gray"):
            raise SettingsError(f"{where}: patch {row[col['patch']].strip()!r} unknown; "
                                f"accepted: {', '.join(PRIMARY_PATCHES)}, grey")
        if form == "XYZ":
            XYZ = np.array([_number(row[col[k]], f"{where}: {k}") for k in ("X", "Y", "Z")])
        else:
            x, y, Y = (_number(row[col[k]], f"{where}: {k}") for k in ("x", "y", "Y"))
            if not (0.0 < y < 1.0 and 0.0 <= x < 1.0):
                raise SettingsError(f"{where}: chromaticity ({x:g}, {y:g}) is not one; "
                                    "accepted: 0 <= x < 1, 0 < y < 1")
            XYZ = np.array([x * Y / y, Y, (1.0 - x - y) * Y / y])
        if XYZ[1] < 0.0:
            raise SettingsError(f"{where}: Y {XYZ[1]:g} is negative; accepted: a luminance "
                                ">= 0 cd/m2")
        if patch in ("grey", "gray"):
            if "code" not in col or not row[col["code"]].strip():
                raise SettingsError(f"{where}: a grey patch needs its code value (column "
                                    "'code', 0-1)")
            code = _number(row[col["code"]], f"{where}: code")
            if not 0.0 <= code <= 1.0:
                raise SettingsError(f"{where}: code {code:g} is outside 0-1")
            ramp.append((code, float(XYZ[1])))
        else:
            if patch in patches:
                raise SettingsError(f"{where}: a second {patch!r} reading; accepted: one each "
                                    f"of {', '.join(PRIMARY_PATCHES)}")
            if XYZ[1] <= 0.0 or np.sum(XYZ) <= 0.0:
                raise SettingsError(f"{where}: the {patch} reading has no light (Y = "
                                    f"{XYZ[1]:g}); accepted: Y > 0 cd/m2")
            patches[patch] = XYZ
    missing = [p for p in PRIMARY_PATCHES if p not in patches]
    if missing:
        raise SettingsError(f"{source}: no {', '.join(missing)} reading; required patches: "
                            f"{', '.join(PRIMARY_PATCHES)} (grey optional)")
    return patches, ramp


def _ramp_transfer(ramp, white_Y: float, source: str) -> tuple[dict, list]:
    """The tone curve from a grey ramp (module docstring); returns Display fields and notes."""
    from starkiln.engine.colour.icc_profiles import fit_transfer

    codes = np.array([0.0] + [c for c, _ in ramp] + [1.0])
    y = np.array([0.0] + [Y / white_Y for _, Y in ramp] + [1.0])
    order = np.argsort(codes, kind="stable")
    codes, y = codes[order], np.clip(y[order], 0.0, 1.0)
    notes = []
    if np.any(np.diff(y) < 0.0):
        notes.append("the grey ramp falls somewhere as the code value rises: made "
                     "non-decreasing")
        y = np.maximum.accumulate(y)
    steps = np.diff(codes)
    if codes.size <= 4096 and np.all(steps > 0) and np.ptp(steps) < 1e-6:
        table = y  # equally spaced readings (0 and 1 included): the table is the readings
    else:
        table = np.interp(np.linspace(0.0, 1.0, RAMP_TABLE_SAMPLES), codes, y)
    fit = fit_transfer(codes, y, table, tolerance=RAMP_GAMMA_TOLERANCE)
    return fit, notes


def display_from_readings(text: str, source: str = "readings", name: str | None = None
                          ) -> MeasuredProfile:
    """A display from colorimeter readings (module docstring for the CSV and the method).

    Parameters
    ----------
    text : str
        The readings CSV.
    source : str
        How messages name the file.
    name : str, optional
        The display's name; default: ``source``'s stem.

    Returns
    -------
    MeasuredProfile

    Raises
    ------
    SettingsError
        Missing patches, a negative Y, a white outside the red-green-blue triangle, a
        malformed row: one line naming the file and what is accepted.

    References
    ----------
    [CIE15] eq. 7.3; [IEC61966-2-1]; module docstring.
    """
    from starkiln.engine.colour.displays import Display, in_triangle
    from starkiln.engine.colour.icc_profiles import chromaticity_of

    patches, ramp = read_readings(text, source)
    xy = {p: chromaticity_of(patches[p]) for p in PRIMARY_PATCHES}
    triangle = np.array([xy["red"], xy["green"], xy["blue"]])
    if not in_triangle(np.array(xy["white"]), triangle):
        raise SettingsError(f"{source}: the white reading ({xy['white'][0]:.4f}, "
                            f"{xy['white'][1]:.4f}) lies outside the triangle of the red, "
                            "green and blue readings; accepted: a white inside it")
    white = patches["white"]
    warnings, notes = [], []
    excess = np.abs(patches["red"] + patches["green"] + patches["blue"] - white) / white[1]
    if float(np.max(excess)) > ADDITIVITY_TOLERANCE:
        warnings.append(f"{source}: red + green + blue differ from white by "
                        f"{100 * float(np.max(excess)):.1f} % of white Y (more than "
                        f"{100 * ADDITIVITY_TOLERANCE:g} %): the display is not additive and "
                        "the profile is approximate")
    if ramp:
        fit, ramp_notes = _ramp_transfer(ramp, float(white[1]), source)
        notes += ramp_notes
        notes.append(f"tone curve from {len(ramp)} grey readings")
    else:
        fit = {"transfer": "srgb", "gamma": 2.2, "transfer_samples": ()}
        notes.append("no grey ramp: the sRGB tone curve (IEC 61966-2-1) is assumed")
    name = name or Path(source).stem
    try:
        display = Display(name, xy["red"], xy["green"], xy["blue"], xy["white"],
                          fit["transfer"], fit["gamma"], float(white[1]), "display",
                          fit["transfer_samples"])
    except SettingsError as exc:
        raise SettingsError(f"{source}: {exc}") from None
    return MeasuredProfile(display, tuple(warnings), tuple(notes))


def measure_display_profile(readings_path, json_path, overwrite: bool = False
                            ) -> MeasuredProfile:
    """Read a readings CSV and write the display as a JSON display profile, atomically.

    Parameters
    ----------
    readings_path : path-like
        The readings (module docstring).
    json_path : path-like
        Destination ``.json``; its ``note`` names the readings file and the assumptions.
    overwrite : bool
        Replace an existing file.

    Returns
    -------
    MeasuredProfile

    References
    ----------
    Module docstring; [RFC8259] (JSON); :mod:`starkiln.engine.atomic` for the write.
    """
    from starkiln.engine.colour.icc_profiles import write_profile_with_note
    from starkiln.engine.errors import read_text_file

    path = Path(readings_path)
    text = read_text_file(path, "readings file")
    measured = display_from_readings(text, str(path))
    write_profile_with_note(measured.display, json_path,
                            f"measured from the readings {path.name}", measured.notes,
                            overwrite)
    return measured
