"""Quantisation of display-encoded signals to integer code values, and ``#rrggbb`` text.

An encoded signal ``v`` in 0-1 (after the display's transfer function) becomes the
n-bit code value ``floor(clip(v, 0, 1) * (2^n - 1) + 0.5)``: full range, rounded half
up (common practice; the full-range code values of [BT709]/[BT2100] and of the
8-bit sRGB encoding of [IEC61966-2-1]). Every integer colour of Starkiln (textures,
palettes, hex strings, the window's swatches, catalogues) comes from here.
"""

from __future__ import annotations

import numpy as np

from starkiln.engine.errors import StarkilnError

#: Code-value widths and their numpy types.
INTEGER_TYPES = {8: np.uint8, 16: np.uint16}
#: "#rrggbb" of every 8-bit triple would be 16.7 M strings; hex digits come from this table.
_HEX_BYTES = np.array([f"{k:02x}" for k in range(256)], dtype="<U2")


def quantise(rgb_encoded, bits: int) -> np.ndarray:
    """Encoded 0-1 values -> unsigned ``bits``-bit code values ``floor(v * (2^n - 1) + 0.5)``.

    Parameters
    ----------
    rgb_encoded : array_like
        Display-encoded values; clipped to [0, 1] first.
    bits : {8, 16}
        Code-value width.

    Returns
    -------
    numpy.ndarray
        uint8 or uint16, the input's shape.

    References
    ----------
    Full-range quantisation, rounded half up (common practice; [IEC61966-2-1] 8-bit
    encoding; [BT2100] Table 9 full-range digital values).

    Examples
    --------
    >>> quantise([0.0, 0.5, 1.0], 8).tolist()
    [0, 128, 255]
    """
    if bits not in INTEGER_TYPES:
        raise StarkilnError(f"quantisation width {bits!r} bits is not available; accepted: "
                            f"{', '.join(str(b) for b in INTEGER_TYPES)}")
    scale = float(2 ** bits - 1)
    v = np.minimum(np.maximum(np.asarray(rgb_encoded, dtype=np.float64), 0.0), 1.0)
    return np.floor(v * scale + 0.5).astype(INTEGER_TYPES[bits])


def to_8bit(rgb_encoded) -> np.ndarray:
    """Encoded 0-1 -> uint8 by ``floor(v * 255 + 0.5)`` (:func:`quantise`; common practice)."""
    return quantise(rgb_encoded, 8)


def to_hex(rgb_encoded) -> np.ndarray:
    """``#rrggbb`` strings of encoded RGB in 0-1, from the 8-bit code values (common practice).

    Vectorised: the two hex digits of each channel come from a 256-entry table, so a
    texture's worth of strings costs a few numpy operations, not a Python loop.

    Parameters
    ----------
    rgb_encoded : array_like
        (..., 3) display-encoded values.

    Returns
    -------
    numpy.ndarray
        (...,) strings of dtype ``<U7``.

    References
    ----------
    [CSSColor4] section 5.2 (hex colour notation); :func:`to_8bit`.

    Examples
    --------
    >>> str(to_hex([1.0, 0.5, 0.0]))
    '#ff8000'
    """
    q = to_8bit(rgb_encoded)
    digits = _HEX_BYTES[q]
    head = np.char.add("#", digits[..., 0])
    return np.char.add(np.char.add(head, digits[..., 1]), digits[..., 2]).astype("<U7")
