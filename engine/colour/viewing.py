"""Dark-room viewing: the window's colour patches dimmed in linear light, and their surround.

The artist works beside the dome in the dark. A monitor at its usual white (the sRGB reference
display is 80 cd/m2, [IEC61966-2-1]) is far brighter than a dome's stars, so the
artist's eyes adapt to the monitor and judge a dome's colours at the wrong luminance. The
*viewing level* is a fraction ``f`` (0.02-1) of the monitor's white: every colour patch the
window paints (swatches, strips, sky, spectrum band) is multiplied by ``f`` in the monitor's
linear light, after the conversion to the monitor and its clipping, before the monitor's
transfer function (:func:`starkiln.engine.colour.monitor.monitor_rgb_8bit`). Multiplying linear
RGB keeps the chromaticity exactly and scales the luminance by ``f``; the readouts are not
dimmed (they are the chosen display's values).

The *dome level* sets ``f`` so that a star at full intensity is shown on the monitor at the
luminance the dome shows it:

    f = L_dome / L_monitor,  L_dome = peak_luminance_cd_m2 of the chosen display,

clamped to 0.02-1. In the night-vision model (:mod:`starkiln.engine.eye.vision`) a star at
``magnitude_bright`` has intensity 1 and the audience sees it at ``intensity *
peak_luminance_cd_m2`` (the dome compensation's step 7); with the monitor at ``L_monitor``
(80 cd/m2 unless the artist says otherwise) the swatch then reaches the same absolute
luminance, so the artist's own eyes are at the same point of the [CIE191] mesopic model as
the audience's (as far as the monitor's white really is ``L_monitor``). A display brighter
than the monitor (a 1000 cd/m2 PQ display) gives ``f = 1``: the monitor cannot show more.

The *surround* is a neutral border round the large swatch, so that the eye adapts to a known
neutral rather than to the swatch or the themed chrome: ``black``, or ``grey`` at
:data:`SURROUND_GREY_FRACTION` of the viewing white (a mid-grey surround at about a fifth of
the white's luminance, common practice in image viewing conditions, from memory), both in the
monitor's linear light and equally dimmed by the viewing level.

Caution: the viewing level is for the artist's eyes. It is not a lighting-compliance tool, and
a monitor's white is seldom exactly 80 cd/m2; measure the dome for anything that matters. For a
dark-adapted audience avoid sudden bright flashes; in the window, change the level gradually.

References
----------
[IEC61966-2-1] (80 cd/m2 reference white); [CIE191] (mesopic adaptation, through
:mod:`starkiln.engine.eye.vision`).
"""

from __future__ import annotations

import numpy as np

from starkiln.engine.colour.displays import Display, get_display
from starkiln.engine.colour.quantisation import to_8bit
from starkiln.engine.errors import SettingsError, finite_number

#: The range of the viewing level (a fraction of the monitor's white).
VIEWING_LEVEL_RANGE = (0.02, 1.0)
#: The monitor's white luminance the dome level assumes: the sRGB reference display's
#: ([IEC61966-2-1]).
MONITOR_WHITE_CD_M2 = 80.0
#: The surround choices round the large swatch.
SURROUNDS = ("none", "grey", "black")
#: Luminance of the grey surround as a fraction of the viewing white (common practice, from
#: memory: a mid-grey at about 20 % of the white).
SURROUND_GREY_FRACTION = 0.2


def check_viewing_level(level) -> float:
    """A viewing level as a float, or a one-line error naming it and the range.

    Parameters
    ----------
    level : float
        Fraction of the monitor's white, 0.02-1.

    Returns
    -------
    float

    Raises
    ------
    SettingsError
        Not a finite number in 0.02-1.

    References
    ----------
    The module docstring.
    """
    v = finite_number(level, "viewing level")
    lo, hi = VIEWING_LEVEL_RANGE
    if not lo <= v <= hi:
        raise SettingsError(f"viewing level {v:g} is outside {lo:g}-{hi:g} (a fraction of the "
                            "monitor's white)")
    return float(v)


def dome_viewing_level(display, monitor_white_cd_m2: float = MONITOR_WHITE_CD_M2) -> float:
    """The viewing level that shows a full-intensity star at the dome's luminance.

    ``f = clamp(peak_luminance_cd_m2 / monitor_white_cd_m2, 0.02, 1)`` (module docstring).

    Parameters
    ----------
    display : Display or str
        The chosen display (its ``peak_luminance_cd_m2``).
    monitor_white_cd_m2 : float
        The monitor's white luminance (default 80 cd/m2, [IEC61966-2-1]).

    Returns
    -------
    float

    Raises
    ------
    SettingsError
        A monitor white that is not a positive finite number.

    References
    ----------
    [IEC61966-2-1]; [CIE191] through :mod:`starkiln.engine.eye.vision` (step 7).

    Examples
    --------
    A 12 cd/m2 dome on an 80 cd/m2 monitor: 12 / 80 = 0.15.

    >>> from starkiln.engine.colour.displays import Display
    >>> dome = Display("dome", (0.68, 0.32), (0.265, 0.69), (0.15, 0.06), (0.3127, 0.329),
    ...                "gamma", 2.4, 12.0)
    >>> dome_viewing_level(dome)
    0.15
    """
    d: Display = get_display(display)
    white = finite_number(monitor_white_cd_m2, "monitor white luminance")
    if white <= 0.0:
        raise SettingsError(f"monitor white luminance {white:g} cd/m2: accepted: > 0")
    lo, hi = VIEWING_LEVEL_RANGE
    return float(min(max(d.peak_luminance_cd_m2 / white, lo), hi))


def dim_linear(rgb_linear, level: float) -> np.ndarray:
    """Monitor-linear RGB at the viewing level: clamped to 0-1, then times ``level``.

    Parameters
    ----------
    rgb_linear : array_like (..., 3)
        The monitor's linear RGB (0-1 of its white).
    level : float
        The viewing level, 0.02-1.

    Returns
    -------
    numpy.ndarray (..., 3)

    References
    ----------
    The module docstring (a scale in linear light keeps chromaticity, [CIE15] section 7).
    """
    level = check_viewing_level(level)
    rgb = np.minimum(np.maximum(np.asarray(rgb_linear, dtype=np.float64), 0.0), 1.0)
    return rgb if level == 1.0 else rgb * level


def surround_rgb_8bit(surround: str, level: float = 1.0, monitor="srgb") -> np.ndarray | None:
    """The monitor's 8-bit colour of the surround round the large swatch.

    Parameters
    ----------
    surround : str
        ``none`` (no border: None), ``grey`` (neutral at :data:`SURROUND_GREY_FRACTION` of the
        viewing white) or ``black``.
    level : float
        The viewing level.
    monitor : Display or str

    Returns
    -------
    numpy.ndarray of uint8 (3,), or None for ``none``

    Raises
    ------
    SettingsError
        An unknown surround (one line naming it and the choices).

    References
    ----------
    The module docstring; the monitor's transfer function
    (:func:`starkiln.engine.colour.displays.encode`).
    """
    key = str(surround).strip().lower()
    if key not in SURROUNDS:
        raise SettingsError(f"surround {surround!r} unknown; accepted: {', '.join(SURROUNDS)}")
    if key == "none":
        return None
    grey = SURROUND_GREY_FRACTION if key == "grey" else 0.0
    m = get_display(monitor)
    return to_8bit(m.encode(dim_linear(np.full(3, grey), level)))
