"""Error types of the engine.

Every message is one line that names the offending value (and the file and key
where there is one) and says what is accepted.
"""


class StarkilnError(ValueError):
    """Bad input to the engine: a one-line, user-facing message."""


class SettingsError(StarkilnError):
    """A settings value, settings file or display profile is malformed."""


class InputRangeError(StarkilnError):
    """A numeric input (temperature, colour index, magnitude...) is outside what is accepted."""
