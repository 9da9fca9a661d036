"""Error types of the engine.

Every message is one line that names the offending value (and the file and key
where there is one) and says what is accepted. :func:`finite_number` is the one
number check those messages share.
"""

import math


class StarkilnError(ValueError):
    """Bad input to the engine: a one-line, user-facing message."""


class SettingsError(StarkilnError):
    """A settings value, settings file or display profile is malformed."""


class InputRangeError(StarkilnError):
    """A numeric input (temperature, colour index, magnitude...) is outside what is accepted."""


def finite_number(value, what: str, error: type = SettingsError) -> float:
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
    named = f"{what} {value!r}" if what else repr(value)
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise error(f"{named} is not a number") from None
    if not math.isfinite(v):
        raise error(f"{named} is not finite; accepted: a finite number")
    return v
