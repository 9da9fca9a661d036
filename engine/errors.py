"""Error types of the engine.

Every message is one line that names the offending value (and the file and key
where there is one) and says what is accepted. :func:`finite_number` is the one
number check those messages share.
"""

import math

import numpy as np


class StarkilnError(ValueError):
    """Bad input to the engine: a one-line, user-facing message."""


class SettingsError(StarkilnError):
    """A settings value, settings file or display profile is malformed."""


class InputRangeError(StarkilnError):
    """A numeric input (temperature, colour index, magnitude...) is outside what is accepted."""


def finite_number(value, what: str, error: type = SettingsError, *, text: bool = True) -> float:
    """``value`` as a finite float, or ``error`` with a one-line message naming ``what`` and it.

    The one number check of the engine and the command line: settings, display profiles,
    white specifications and option values all parse their numbers here.

    Parameters
    ----------
    value : object
        A number or text such as ``"6504"``.
    what : str
        How the message names the value (``"white 'D65': x"``, ``"pupil_mm"``); may be empty.
    error : type
        The :class:`StarkilnError` subclass to raise (:class:`SettingsError` by default).
    text : bool
        Accept text such as ``"6504"`` (command-line values). Readers of typed files
        (TOML, JSON) pass ``False``: there a quoted ``"2.2"`` is a string, not a number.
        A boolean is never a number (``isinstance(True, int)`` holds in Python, but
        ``true`` in a settings file is a mistake, not 1).

    Returns
    -------
    float

    References
    ----------
    [IEEE754] (finite: neither infinite nor NaN; common practice).

    Examples
    --------
    >>> finite_number("2.5", "gamma")
    2.5
    """
    shown = shown_value(value)
    named = f"{what} {shown}" if what else shown
    if isinstance(value, (bool, np.bool_)) or (not text and isinstance(value, (str, bytes))):
        kind = "true/false" if isinstance(value, (bool, np.bool_)) else "text"
        raise error(f"{named} is {kind}, not a number; accepted: a finite number")
    if isinstance(value, (list, tuple, dict)):
        raise error(f"{named} is {plain_type_name(value)}, not a number; accepted: a finite "
                    "number")
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise error(f"{named} is not a number; accepted: a finite number") from None
    if not math.isfinite(v):
        raise error(f"{named} is not finite; accepted: a finite number")
    return v


def plain_type_name(value) -> str:
    """How a message names the kind of a parsed JSON/TOML value (``table``, ``list``, ``text``...).

    References
    ----------
    TOML 1.0 and RFC 8259 value kinds (common practice).
    """
    if value is None:
        return "nothing (null)"
    if isinstance(value, (bool, np.bool_)):
        return "true/false"
    if isinstance(value, dict):
        return "a table"
    if isinstance(value, (list, tuple)):
        return "a list"
    if isinstance(value, str):
        return "text"
    if isinstance(value, (int, float)):
        return "a number"
    return type(value).__name__


def read_text_file(path, kind: str) -> str:
    """The UTF-8 text of a small input file, or a one-line :class:`SettingsError` naming it.

    Parameters
    ----------
    path : pathlib.Path
        The file (a settings file, a display profile).
    kind : str
        How the message names the file's role (``"settings file"``).

    Returns
    -------
    str

    References
    ----------
    RFC 8259 section 8.1 and TOML 1.0 (both are UTF-8 only).
    """
    try:
        raw = path.read_bytes()
    except OSError as exc:
        raise SettingsError(f"{path}: cannot read {kind} ({exc.strerror or exc})") from None
    try:
        return raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise SettingsError(f"{path}: {kind} is not UTF-8 text (byte {exc.object[exc.start]:#04x} "
                            f"at offset {exc.start}); accepted: a UTF-8 text file") from None


def parse_json(text: str, where: str, accepted: str, error=None):
    """Parse JSON text, or raise a one-line error naming ``where`` (never a traceback).

    Parameters
    ----------
    text : str
        The JSON text.
    where : str
        What the message names first (``"dome.json"``, ``"out.png: 'starkiln' metadata"``).
    accepted : str
        What an over-deep document should have been (``"a display profile as in the user
        guide (a few levels)"``).
    error : type, optional
        The :class:`StarkilnError` subclass to raise (default :class:`SettingsError`).

    References
    ----------
    [RFC8259] (JSON); Python's ``json`` module raises RecursionError for very deep nesting.
    """
    import json

    error = SettingsError if error is None else error
    try:
        return json.loads(text)
    except json.JSONDecodeError as exc:
        raise error(f"{where}: not valid JSON (line {exc.lineno}: {exc.msg})") from None
    except RecursionError:
        raise error(f"{where}: nested too deeply to read; accepted: {accepted}") from None


def shown_value(value) -> str:
    """A parsed file value as a message shows it: ``true``/``false`` as in TOML and JSON, else
    its ``repr`` (text quoted, lists and tables as written).

    References
    ----------
    TOML 1.0 and RFC 8259 spell booleans ``true`` and ``false`` (common practice).
    """
    if isinstance(value, (bool, np.bool_)):
        return "true" if value else "false"
    return repr(value)


def values_in_range(values, lo: float, hi: float, message, error: type = None) -> np.ndarray:
    """``values`` as float64 if all are finite and within [lo, hi]; else ``error`` with
    ``message(v)``, the one-line text for the first bad value ``v``.

    The one array range check of the engine (magnitudes, E(B-V), altitudes).

    References
    ----------
    [IEEE754] (finite: neither infinite nor NaN; common practice).

    Examples
    --------
    >>> values_in_range([1.0, 2.0], 0.0, 5.0, lambda v: f"{v:g} is out").tolist()
    [1.0, 2.0]
    """
    a = np.asarray(values, dtype=np.float64)
    bad = ~np.isfinite(a) | (a < lo) | (a > hi)
    if np.any(bad):
        raise (error or InputRangeError)(message(a[bad].flat[0]))
    return a
