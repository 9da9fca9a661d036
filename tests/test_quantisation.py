"""Quantisation to integer code values and hex text (starkiln.engine.colour.quantisation).

References: full-range quantisation rounded half up, ``floor(v * (2^n - 1) + 0.5)`` after
clipping to 0-1 (common practice; IEC 61966-2-1 8-bit sRGB encoding, ITU-R BT.2100-2
full-range code values), written out here in plain Python; CSS Color Module Level 4
section 5.2 for ``#rrggbb`` (two lower-case hex digits a channel, as Python's ``%02x``).
"""

import math

import numpy as np
import pytest

from starkiln.engine.colour.quantisation import quantise, to_8bit, to_hex
from starkiln.engine.errors import StarkilnError

VALUES = [0.0, 1.0, 0.5, 0.498, 1.2, -0.1, 1.0 / 255.0, 0.5 / 255.0, 0.4999 / 255.0,
          0.25, 0.75, 0.123456, 0.999999]


def common_practice(v: float, bits: int) -> int:
    """floor(clip(v, 0, 1) * (2^n - 1) + 0.5), one value at a time (common practice)."""
    return math.floor(min(max(v, 0.0), 1.0) * (2 ** bits - 1) + 0.5)


@pytest.mark.parametrize("bits", [8, 16])
def test_quantise_matches_the_common_practice_formula(bits):
    got = quantise(np.array(VALUES), bits)
    assert got.dtype == (np.uint8 if bits == 8 else np.uint16)
    assert got.tolist() == [common_practice(v, bits) for v in VALUES]


def test_to_8bit_and_16_bits_on_arrays_match_the_formula():
    rng = np.random.default_rng(7)
    v = rng.uniform(-0.1, 1.1, size=(50, 3))
    assert to_8bit(v).tolist() == [[common_practice(x, 8) for x in row] for row in v.tolist()]
    assert quantise(v, 16).tolist() == [[common_practice(x, 16) for x in row] for row in v.tolist()]


def test_half_code_values_round_up():
    # 0.5 / 255 sits exactly half way between codes 0 and 1: rounded half up (common practice).
    assert to_8bit([0.5 / 255.0]).tolist() == [1]
    assert to_8bit([0.5]).tolist() == [128]  # 127.5 -> 128


def test_unavailable_width_is_refused_in_one_line():
    with pytest.raises(StarkilnError, match="12") as exc:
        quantise([0.5], 12)
    assert "\n" not in str(exc.value) and "accepted: 8, 16" in str(exc.value)


def test_hex_is_css_notation_of_the_8bit_values():
    rng = np.random.default_rng(11)
    v = rng.uniform(0.0, 1.0, size=(4, 5, 3))
    got = to_hex(v)
    assert got.shape == (4, 5)
    expected = ["#%02x%02x%02x" % tuple(common_practice(x, 8) for x in px)
                for px in v.reshape(-1, 3).tolist()]
    assert got.reshape(-1).tolist() == expected
    assert str(to_hex([1.0, 0.5, 0.0])) == "#ff8000"  # CSS Color 4: orange-ish, 0x80 = 128
