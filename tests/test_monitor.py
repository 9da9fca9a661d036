"""The monitor step (engine/colour/monitor.py) against colour-science, the reference library.

Every expected value is colour-science's: ``colour.RGB_to_RGB`` between its own RGB colour
spaces (or one built from a profile's published numbers) with the Bradford adaptation, then
its own encoding (``colour.cctf_encoding``, ``colour.models.eotf_ST2084``). Tolerance: one
8-bit code value (the conversion's result is compared unquantised, times 255).
"""

import json
import warnings

import numpy as np
import pytest

from starkiln.engine.colour.displays import PRESETS, WORKING_SPACES
from starkiln.engine.colour.monitor import (CLIP_TOLERANCE, NAMED_PRIMARIES, SRGB_MONITOR,
                                            load_monitor, monitor_from_primaries,
                                            monitor_matrix, monitor_rgb_8bit,
                                            rendered_on_monitor)
from starkiln.engine.colour.quantisation import to_8bit
from starkiln.engine.errors import SettingsError
from starkiln.engine.pipeline.render import render
from starkiln.engine.pipeline.settings import Settings

with warnings.catch_warnings():
    warnings.simplefilter("ignore")
    import colour



def _derived(name):
    """colour-science's colour space ``name`` with its matrices derived from its primaries and
    white ([RP177]), as the engine derives them (the published 4-digit sRGB matrix of
    [IEC61966-2-1] differs from the derived one by up to 4e-4)."""
    space = colour.RGB_COLOURSPACES[name].copy()
    space.use_derived_transformation_matrices(True)
    return space


class _Spaces(dict):
    def __missing__(self, name):
        return self.setdefault(name, _derived(name))


SPACES = _Spaces()
TEMPS_K = np.geomspace(1000.0, 40000.0, 300)


def _srgb_reference(rgb_linear, source_space):
    """colour-science: RGB_to_RGB (Bradford) to its sRGB space, clamp, sRGB encoding ([IEC61966-2-1])."""
    lin = colour.RGB_to_RGB(rgb_linear, source_space, SPACES["sRGB"],
                            chromatic_adaptation_transform="Bradford")
    clipped = np.any((lin < -CLIP_TOLERANCE) | (lin > 1 + CLIP_TOLERANCE), axis=-1)
    return 255.0 * colour.cctf_encoding(np.clip(lin, 0.0, 1.0), "sRGB"), clipped


def _within_one_code(rgb8, expected_255):
    diff = np.abs(rgb8.astype(float) - expected_255)
    assert diff.max() <= 1.0, f"largest difference {diff.max():.3f} code values"


def test_p3_to_srgb_against_colour_science():
    rng = np.random.default_rng(11)
    rgb = rng.random((1000, 3))
    rgb8, clipped = monitor_rgb_8bit(rgb, "display-p3", "srgb")
    expected, ref_clipped = _srgb_reference(rgb, SPACES["Display P3"])  # [EG432-1] primaries
    _within_one_code(rgb8, expected)
    assert np.array_equal(clipped, ref_clipped)
    assert 0 < clipped.sum() < clipped.size  # P3 reaches outside sRGB, and not everywhere


def test_rec2100_pq_to_srgb_against_colour_science():
    """The render path's PQ code values mean, by colour-science's ST 2084 EOTF over the 1000
    cd/m2 peak, the linear light the monitor step converts ([ST2084], [BT2020])."""
    s = Settings(display="rec2100-pq")
    r = render(s, TEMPS_K)
    linear = colour.models.eotf_ST2084(r.rgb_encoded) / 1000.0
    expected, ref_clipped = _srgb_reference(linear, SPACES["ITU-R BT.2020"])
    rgb8, clipped = rendered_on_monitor(r, SRGB_MONITOR)
    _within_one_code(rgb8, expected)
    assert clipped.any()  # Rec. 2020 reds of cool stars are outside sRGB


def test_acescg_to_srgb_against_colour_science():
    """ACEScg (AP1, ACES white [S-2014-004]) to sRGB: colour-science's ACEScg space, Bradford."""
    rng = np.random.default_rng(12)
    rgb = rng.random((1000, 3))
    rgb8, clipped = monitor_rgb_8bit(rgb, WORKING_SPACES["acescg"], "srgb")
    expected, ref_clipped = _srgb_reference(rgb, SPACES["ACEScg"])
    _within_one_code(rgb8, expected)
    assert np.array_equal(clipped, ref_clipped)
    # the working space's white is shown as the monitor's white (Bradford maps white to white)
    white8, white_clipped = monitor_rgb_8bit([1.0, 1.0, 1.0], WORKING_SPACES["acescg"], "srgb")
    assert white8.tolist() == [255, 255, 255] and not white_clipped


def test_dome_profile_to_srgb_against_colour_science():
    """The invented dome's primaries, white and gamma 2.4 as published in its JSON file, as a
    colour-science RGB colour space; its code values decoded by colour-science's gamma."""
    from starkiln.assets import asset_path
    from starkiln.engine.colour.displays import load_display_profile

    path = str(asset_path("dome_projector.json"))
    data = json.loads(open(path, encoding="utf-8").read())
    p = data["primaries_xy"]
    dome_space = colour.RGB_Colourspace("dome", np.array([p["red"], p["green"], p["blue"]]),
                                        np.array(data["white_xy"]), use_derived_matrix_RGB_to_XYZ=True,
                                        use_derived_matrix_XYZ_to_RGB=True)
    rng = np.random.default_rng(13)
    code = rng.random((1000, 3))
    linear = colour.gamma_function(code, data["transfer"]["gamma"])
    expected, ref_clipped = _srgb_reference(linear, dome_space)
    rgb8, clipped = monitor_rgb_8bit(linear, load_display_profile(path), "srgb")
    _within_one_code(rgb8, expected)
    assert np.array_equal(clipped, ref_clipped)


def test_srgb_on_srgb_is_bit_exact_the_render_paths_pixels():
    """Same primaries and white: no matrix at all, so today's pixels do not change."""
    s = Settings()
    assert monitor_matrix(PRESETS["srgb"], SRGB_MONITOR) is None
    r = render(s, TEMPS_K)
    rgb8, clipped = rendered_on_monitor(r, SRGB_MONITOR)
    assert np.array_equal(rgb8, to_8bit(r.rgb_encoded)) and not clipped.any()
    night = render(s, TEMPS_K[:, None], np.array([[-1.0, 2.0, 4.5]]))
    dim8, _ = rendered_on_monitor(night, SRGB_MONITOR, dimmed=True)
    assert np.array_equal(dim8, to_8bit(night.rgb_dimmed_encoded))


def test_lin_srgb_working_space_is_encoded_by_the_monitor():
    """lin-srgb values are shown through the sRGB monitor's curve (colour-science's sRGB
    encoding of the clamped values; no matrix: same primaries and white)."""
    r = render(Settings(display="lin-srgb"), TEMPS_K)
    expected = 255.0 * colour.cctf_encoding(np.clip(r.rgb_linear, 0, 1), "sRGB")
    _within_one_code(rendered_on_monitor(r, SRGB_MONITOR)[0], expected)


@pytest.mark.parametrize("key, name", [("srgb", "sRGB"), ("dci-p3-d65", "Display P3"),
                                       ("bt2020", "ITU-R BT.2020"),
                                       ("adobe-rgb", "Adobe RGB (1998)"),
                                       ("prophoto-rgb", "ProPhoto RGB")])
def test_named_primaries_are_colour_sciences(key, name):
    r, g, b, white = NAMED_PRIMARIES[key]
    np.testing.assert_allclose([r, g, b], colour.RGB_COLOURSPACES[name].primaries, atol=1e-4)
    np.testing.assert_allclose(white, colour.RGB_COLOURSPACES[name].whitepoint, atol=1e-4)


def test_monitor_from_primaries_builds_a_p3_monitor():
    m = monitor_from_primaries("dci-p3-d65", (0.3127, 0.3290), "srgb", name="P3 monitor")
    assert m.kind == "display" and m.transfer == "srgb"
    # P3 colours on a P3 monitor: the identity (EG 432-1 primaries both sides)
    assert monitor_matrix(PRESETS["display-p3"], m) is None
    xy = monitor_from_primaries([(0.64, 0.33), (0.30, 0.60), (0.15, 0.06)], (0.3127, 0.329),
                                "gamma", 2.2)
    assert xy.gamma == 2.2 and xy.red_xy == (0.64, 0.33)


@pytest.mark.parametrize("call, words", [
    (lambda: monitor_from_primaries("cmyk"), "monitor primaries 'cmyk' unknown"),
    (lambda: monitor_from_primaries("srgb", transfer="hlg"), "monitor transfer 'hlg'"),
    (lambda: monitor_from_primaries([(0.64, 0.33), (0.3, 0.6), (0.15, 0.06)]),
     "white point missing"),
    (lambda: monitor_from_primaries("srgb", (0.7, 0.2)), "outside the primaries' triangle"),
    (lambda: load_monitor("acescg"), "is a working space"),
    (lambda: load_monitor("no-such-monitor"), "--monitor: unknown display"),
])
def test_bad_monitors_give_one_line(call, words):
    with pytest.raises(SettingsError) as info:
        call()
    assert words in str(info.value) and "\n" not in str(info.value)


def test_monitor_option_bad_value_exits_2(tmp_path, capsys):
    from starkiln.cli.main import main

    out = tmp_path / "w.png"
    assert main(["--monitor", "acescg", "--screenshot", str(out)]) == 2
    err = capsys.readouterr().err.strip()
    assert "working space" in err and len(err.splitlines()) == 1
    assert not out.exists()
    assert main(["--monitor", "srgb", "displays"]) == 2  # a window option with a command


def test_encoded_image_on_the_monitor_matches_colour_science():
    from starkiln.engine.colour.monitor import encoded_on_monitor

    rng = np.random.default_rng(12)
    codes = rng.integers(0, 256, (16, 9, 3)).astype(np.uint8)
    got, clipped = encoded_on_monitor(codes, "display-p3", "srgb")
    # Display P3 code values use the sRGB curve ([EG432-1] primaries, [IEC61966-2-1] curve)
    lin = colour.RGB_to_RGB(colour.cctf_decoding(codes / 255.0, "sRGB"),
                            _derived("Display P3"), _derived("sRGB"),
                            chromatic_adaptation_transform="Bradford")
    expected = 255.0 * colour.cctf_encoding(np.clip(lin, 0.0, 1.0), "sRGB")
    assert got.shape == codes.shape and got.dtype == np.uint8
    assert np.abs(got - expected).max() <= 1.0
    assert np.array_equal(clipped, np.any((lin < -1e-4) | (lin > 1 + 1e-4), axis=-1))
    with_alpha = np.concatenate([codes, np.full(codes.shape[:2] + (1,), 7, np.uint8)], -1)
    assert np.array_equal(encoded_on_monitor(with_alpha, "display-p3", "srgb")[0], got)


def test_encoded_image_must_be_8bit_rgb():
    from starkiln.engine.colour.monitor import encoded_on_monitor

    with pytest.raises(SettingsError, match=r"float64 with shape \(2, 3\) is not 8-bit RGB"):
        encoded_on_monitor(np.zeros((2, 3)), "srgb")
    with pytest.raises(SettingsError, match="integers 0-255"):
        encoded_on_monitor([[0, 256, 0]], "srgb")
