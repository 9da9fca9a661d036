"""Working spaces: scene-linear targets beside the displays, checked against colour-science's
RGB colourspaces (which follow ITU-R BT.709, BT.2020, SMPTE EG 432-1, ST 2065-1 and the
Academy's S-2014-004)."""

from __future__ import annotations

import numpy as np
import pytest

from starkiln.engine.colour.displays import WORKING_SPACES, Display, get_display
from starkiln.engine.errors import SettingsError

#: Starkiln name -> colour-science colourspace name.
REFERENCE = {"lin-srgb": "ITU-R BT.709",  # sRGB in colour-science carries IEC's rounded matrix
              "lin-p3-d65": "P3-D65", "lin-rec2020": "ITU-R BT.2020",
             "acescg": "ACEScg", "aces2065-1": "ACES2065-1"}


@pytest.mark.parametrize("name", sorted(WORKING_SPACES))
def test_matrices_match_colour_science(name, colour):
    ref = colour.RGB_COLOURSPACES[REFERENCE[name]]
    space = get_display(name)
    assert space.kind == "working-space" and space.transfer == "linear"
    np.testing.assert_allclose(space.rgb_to_XYZ, ref.matrix_RGB_to_XYZ, atol=1e-5)
    np.testing.assert_allclose(space.XYZ_to_rgb, ref.matrix_XYZ_to_RGB, atol=1e-4)
    np.testing.assert_allclose(space.white_xy, ref.whitepoint, atol=1e-12)


def test_imaginary_primaries_only_for_working_spaces():
    # ACES AP0's blue primary (0.0001, -0.0770) lies outside the spectral locus ([ST2065-1]).
    ap0 = WORKING_SPACES["aces2065-1"]
    assert ap0.blue_xy[1] < 0
    with pytest.raises(SettingsError, match="not a chromaticity"):
        Display("bad", ap0.red_xy, ap0.green_xy, ap0.blue_xy, ap0.white_xy, "linear")
    with pytest.raises(SettingsError, match="scene-linear"):
        Display("bad", ap0.red_xy, ap0.green_xy, ap0.blue_xy, ap0.white_xy, "srgb",
                kind="working-space")


def test_working_space_round_trips_through_a_profile(tmp_path):
    from starkiln.engine.colour.displays import load_display_profile, save_display_profile

    path = tmp_path / "acescg.json"
    save_display_profile(WORKING_SPACES["acescg"], path)
    assert load_display_profile(path) == WORKING_SPACES["acescg"]
