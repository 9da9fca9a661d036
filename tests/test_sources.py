"""starkiln.engine.stars.temperature: temperatures from kelvin, B-V and spectral classes.

References:

- F. J. Ballesteros (2012), "New insights into black bodies", EPL 97, 34008:
  T = 4600 K (1 / (0.92 (B-V) + 1.7) + 1 / (0.92 (B-V) + 0.62)).
- IAU 2015 Resolution B3: nominal solar effective temperature 5772 K.
- E. Mamajek, mean dwarf sequence v2024.05.15 (Pecaut & Mamajek 2013, ApJS 208, 9, Table 5).
- The Harvard/MK sequence O B A F G K M runs from hot to cool (common practice).
"""

import numpy as np
import pytest

from starkiln.engine.errors import InputRangeError, StarkilnError
from starkiln.engine.stars.temperature import (
    SPECTRAL_CLASS_TEFF_K,
    check_temperature,
    temperature_from_bv,
    temperature_from_spectral_class,
)


def ballesteros_by_hand(bv):
    """Ballesteros (2012) EPL 97 34008, published coefficients 4600, 0.92, 1.7, 0.62."""
    return 4600.0 * (1.0 / (0.92 * bv + 1.7) + 1.0 / (0.92 * bv + 0.62))


def test_ballesteros_solar_colour():
    # [Ballesteros2012] eq. 14 worked by hand with the published coefficients: for the
    # Sun's B-V = 0.65 it gives 4600 * (1/2.298 + 1/1.218) ~ 5778 K, the commonly quoted
    # solar effective temperature (common practice).
    expected = ballesteros_by_hand(0.65)
    assert expected == pytest.approx(4600.0 * (1 / 2.298 + 1 / 1.218), rel=1e-12)
    ours = float(temperature_from_bv(0.65))
    assert ours == pytest.approx(expected, rel=1e-12)
    assert abs(ours - 5778.0) < 10.0
    # and close to the IAU 2015 nominal solar Teff 5772 K
    assert abs(ours - 5772.0) < 15.0


def test_ballesteros_vectorised_and_monotone():
    # Published formula, by hand, at B-V from -0.4 to 2.0; redder index -> cooler star
    # (common practice).
    bv = np.linspace(-0.4, 2.0, 49).reshape(7, 7)
    ours = temperature_from_bv(bv)
    assert ours.shape == (7, 7)
    np.testing.assert_allclose(ours, ballesteros_by_hand(bv), rtol=1e-12)
    assert np.all(np.diff(ours.ravel()) < 0)


@pytest.mark.parametrize("bv", [-0.41, 2.01, -0.674, 5.0, float("nan"), float("inf")])
def test_ballesteros_out_of_range(bv):
    # Accepted range -0.40..2.00 (engine contract; the formula diverges at -0.674).
    with pytest.raises(InputRangeError) as exc:
        temperature_from_bv(bv)
    msg = str(exc.value)
    assert "\n" not in msg
    assert f"{bv:g}" in msg
    assert "-0.4" in msg and "2" in msg


def test_ballesteros_range_edges_accepted():
    # The range ends themselves are accepted (engine contract), values by hand.
    np.testing.assert_allclose(temperature_from_bv([-0.4, 2.0]),
                               ballesteros_by_hand(np.array([-0.4, 2.0])), rtol=1e-12)


def test_g2v_is_sun_like():
    # Mamajek (2024.05.15) G2V 5770 K; IAU 2015 Resolution B3 nominal solar Teff 5772 K.
    assert temperature_from_spectral_class("G2V") == pytest.approx(5772.0, abs=30.0)
    # luminosity class V may be omitted, and case/space do not matter
    assert temperature_from_spectral_class("g2") == temperature_from_spectral_class(" G2 V ")


def test_spectral_sequence_is_hot_to_cool():
    # Common practice: O5 ... M8 (letters OBAFGKM, subclasses 0-9) is ordered hot to cool.
    sequence = [f"{letter}{digit}" for letter in "OBAFGKM" for digit in range(10)]
    sequence = sequence[sequence.index("O5"):sequence.index("M8") + 1]
    temps = [temperature_from_spectral_class(f"{c}V") for c in sequence]
    assert len(temps) == 64  # O5-O9, B0-K9 (6 x 10), M0-M8
    assert np.all(np.diff(temps) < 0)
    # the table covers exactly that sequence
    assert sorted(SPECTRAL_CLASS_TEFF_K) == sorted(sequence)
    # O5 stars are hotter than 35000 K and M8 dwarfs cooler than 3000 K (common practice)
    assert temps[0] > 35000.0 and temps[-1] < 3000.0


def test_decimal_subclass_lies_between_neighbours():
    # K5.5V lies between K5V and K6V (common practice for half subclasses).
    k5, k6 = temperature_from_spectral_class("K5V"), temperature_from_spectral_class("K6V")
    k55 = temperature_from_spectral_class("K5.5V")
    assert k6 < k55 < k5


@pytest.mark.parametrize("text", ["G2III", "Z9", "", "M9V", "O3V", "M8.5V", "G12V", "B-3"])
def test_bad_spectral_classes(text):
    # Only main-sequence O5V-M8V is accepted (engine contract); the message is one line
    # and names the value.
    with pytest.raises(StarkilnError) as exc:
        temperature_from_spectral_class(text)
    msg = str(exc.value)
    assert "\n" not in msg
    assert repr(text) in msg
    assert "O5V" in msg and "M8V" in msg


def test_check_temperature_range():
    # Supported range 500-100000 K (engine contract); ends included.
    t = check_temperature([500.0, 5772.0, 100000.0])
    assert t.dtype == np.float64
    np.testing.assert_array_equal(t, [500.0, 5772.0, 100000.0])


@pytest.mark.parametrize("value,shown", [(0.0, "0"), (-5.0, "-5"), (499.0, "499"),
                                         (100001.0, "100001"), (float("nan"), "nan"),
                                         (float("inf"), "inf")])
def test_check_temperature_rejects(value, shown):
    with pytest.raises(InputRangeError) as exc:
        check_temperature(np.array([6000.0, value]))
    msg = str(exc.value)
    assert "\n" not in msg
    assert f"{shown} K" in msg and "500" in msg and "100000" in msg


@pytest.mark.parametrize("cls,teff_K", [
    # E. Mamajek, "A Modern Mean Dwarf Stellar Color and Effective Temperature Sequence",
    # version 2024.05.15, column Teff (whole and half subclasses as published).
    ("O5V", 41400), ("O9.5V", 31900), ("B0.5V", 29000), ("B5V", 15700), ("A0V", 9700),
    ("A2V", 8840), ("F5V", 6550), ("F9.5V", 5990), ("K0V", 5290), ("K3V", 4870),
    ("K7V", 4090), ("M0.5V", 3770), ("M3.5V", 3270), ("M8V", 2570)])
def test_spectral_classes_against_the_published_sequence(cls, teff_K):
    assert temperature_from_spectral_class(cls) == teff_K


def test_quarter_subclass_interpolates_between_published_nodes():
    # M0.25V lies halfway between M0V (3850 K) and M0.5V (3770 K) of Mamajek (2024.05.15).
    assert temperature_from_spectral_class("M0.25V") == pytest.approx(3810.0, abs=1e-9)
