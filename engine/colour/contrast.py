"""Contrast of interface colours: WCAG 2.x relative luminance and contrast ratio.

The window's themes are checked with the Web Content Accessibility Guidelines' definitions
([WCAG21] "relative luminance" and "contrast ratio", unchanged in WCAG 2.2):

- relative luminance of an sRGB colour: each 8-bit channel ``c8 / 255`` decoded with the sRGB
  EOTF ([IEC61966-2-1] section 5.2: ``V / 12.92`` at or below 0.04045, else
  ``((V + 0.055) / 1.055) ** 2.4``; WCAG 2.0 printed the threshold as 0.03928, which gives the
  same value for every 8-bit code), then ``L = 0.2126 R + 0.7152 G + 0.0722 B`` (the
  luminance row of the Rec. 709 / sRGB primaries, [BT709] item 3.2, item number from memory);
- contrast ratio ``(L1 + 0.05) / (L2 + 0.05)`` with ``L1`` the lighter, from 1:1 to 21:1.

The thresholds the window keeps ([WCAG21] success criteria 1.4.3 and 1.4.11): 4.5:1 for text,
3:1 for large text (18 pt, or 14 pt bold) and for the parts of controls that show their state.

References
----------
[WCAG21] definitions and success criteria 1.4.3, 1.4.11; [IEC61966-2-1] section 5.2;
[BT709] item 3.2.
"""

from __future__ import annotations

import numpy as np

from starkiln.engine.colour.displays import srgb_decode
from starkiln.engine.errors import InputRangeError

#: Rec. 709 / sRGB luminance weights of linear R, G, B ([BT709] item 3.2; [WCAG21]).
LUMINANCE_WEIGHTS_709 = np.array([0.2126, 0.7152, 0.0722])
#: The contrast the window's text keeps against its background ([WCAG21] 1.4.3, level AA).
TEXT_CONTRAST = 4.5
#: The contrast of large text and of control states ([WCAG21] 1.4.3 and 1.4.11).
LARGE_TEXT_CONTRAST = 3.0


def hex_to_rgb_8bit(colour: str) -> np.ndarray:
    """``'#rrggbb'`` -> three 8-bit values ([CSSColor4] section 5.2).

    Parameters
    ----------
    colour : str
        ``#rrggbb``.

    Returns
    -------
    numpy.ndarray of int, (3,)

    Raises
    ------
    InputRangeError
        Not of the form ``#rrggbb`` (one line naming the value).

    References
    ----------
    [CSSColor4] section 5.2.
    """
    text = str(colour).strip()
    try:
        if len(text) != 7 or text[0] != "#":
            raise ValueError
        return np.array([int(text[i:i + 2], 16) for i in (1, 3, 5)])
    except ValueError:
        raise InputRangeError(f"colour {colour!r}: accepted: '#rrggbb'") from None


def relative_luminance(rgb_8bit) -> np.ndarray:
    """WCAG 2.x relative luminance of 8-bit sRGB colours (0 black to 1 white).

    Parameters
    ----------
    rgb_8bit : array_like (..., 3) of 0-255, or a ``'#rrggbb'`` string

    Returns
    -------
    numpy.ndarray, (...)
        ``0.2126 R + 0.7152 G + 0.0722 B`` of the sRGB-decoded channels.

    References
    ----------
    [WCAG21] "relative luminance"; [IEC61966-2-1] section 5.2; [BT709] item 3.2.

    Examples
    --------
    White is 1 and black 0 by definition; mid-grey #808080 decodes to 0.2158605
    ([IEC61966-2-1] section 5.2: ((128/255 + 0.055) / 1.055) ** 2.4):

    >>> round(float(relative_luminance("#808080")), 6)
    0.215861
    """
    if isinstance(rgb_8bit, str):
        rgb_8bit = hex_to_rgb_8bit(rgb_8bit)
    v = np.asarray(rgb_8bit, dtype=np.float64) / 255.0
    return srgb_decode(v) @ LUMINANCE_WEIGHTS_709


def contrast_ratio(a, b) -> np.ndarray:
    """WCAG 2.x contrast ratio of two colours, 1 to 21 (order does not matter).

    Parameters
    ----------
    a, b : array_like (..., 3) of 0-255, or ``'#rrggbb'`` strings

    Returns
    -------
    numpy.ndarray, (...)
        ``(L_lighter + 0.05) / (L_darker + 0.05)``.

    References
    ----------
    [WCAG21] "contrast ratio".

    Examples
    --------
    Black on white is 21:1 by the definition ([WCAG21]: (1 + 0.05) / (0 + 0.05)):

    >>> float(contrast_ratio("#000000", "#ffffff"))
    21.0
    """
    la, lb = relative_luminance(a), relative_luminance(b)
    hi, lo = np.maximum(la, lb), np.minimum(la, lb)
    return (hi + 0.05) / (lo + 0.05)
