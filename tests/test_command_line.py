"""The command line that reproduces a render (:func:`starkiln.cli.options.command_line_for`).

External references: the shell words are split back by :func:`shlex.split` (Python's
standard library, POSIX shell quoting, IEEE Std 1003.1 section 2.2); the parsed options are
read by the CLI's own parser and must give back an equal settings object; and the colour the
command prints is checked against the render path in a subprocess in tests/test_gui_compare.py
(and against colour-science there).
"""

import shlex

import pytest

from starkiln.cli.main import build_parser
from starkiln.cli.options import SETTING_OPTIONS, command_line_for, command_words_for
from starkiln.cli.options import settings_from_args
from starkiln.engine.colour.displays import Display, save_display_profile
from starkiln.engine.errors import StarkilnError
import dataclasses

from starkiln.engine.pipeline.settings import Settings


def _parsed(line):
    words = shlex.split(line)
    assert words[:2] == ["starkiln", "colour"]
    return build_parser().parse_args(words[1:])


CUSTOM = Display(name="Fictional 'Quay' dome; 2 lasers", red_xy=(0.68, 0.31),
                 green_xy=(0.27, 0.68), blue_xy=(0.15, 0.06), white_xy=(0.3127, 0.3290),
                 transfer="gamma", gamma=2.4, peak_luminance_cd_m2=14.0)


@pytest.mark.parametrize("settings", [
    Settings(),
    Settings(scene_white="daylight:5503", display="display-p3", gamut="clip",
             adaptation="cat16", vision="none", aperture_mm=203.2, transmission=0.83,
             night_tint=0.25, compensate=True, magnitude_bright=-2.0, luminance_Y=0.3,
             normalisation="luminance"),
    Settings(scene_white="xy:0.3127,0.329", display="rec2100-pq", observer="cie1964",
             intensity_curve="log", pupil_mm=6.5, blur_spot_arcmin=3.3),
])
def test_the_command_parses_back_to_the_same_settings_and_star(settings):
    line = command_line_for(settings, 3456.789012345, magnitude=2.25)
    args = _parsed(line)
    assert settings_from_args(args) == settings
    assert args.temperature == 3456.789012345  # repr round-trips the double exactly
    assert args.magnitude == 2.25
    assert args.json


def test_every_settings_field_is_written_out():
    """Defaults included, so the line does not depend on a settings file or later defaults."""
    words = command_words_for(Settings(), 5772.0)
    names = {f.name for f in dataclasses.fields(Settings)}
    assert names <= set(SETTING_OPTIONS)
    for key, option in SETTING_OPTIONS.items():
        spelled = {"aperture_mm": "--naked-eye", "compensate": "--no-compensate",
                   "altitude_deg": "--no-atmosphere"}.get(key, option)
        assert spelled in words, key


def test_no_magnitude_and_no_json_when_not_asked():
    words = command_words_for(Settings(), 5772.0, json_output=False)
    assert "--magnitude" not in words and "--json" not in words


def test_a_custom_display_needs_its_profile(tmp_path):
    s = Settings(display=CUSTOM)
    with pytest.raises(StarkilnError, match="not a preset"):
        command_line_for(s, 5000.0)
    other = tmp_path / "other.json"
    save_display_profile("display-p3", other)
    with pytest.raises(StarkilnError, match="does not hold"):
        command_line_for(s, 5000.0, display_profile=other)
    path = tmp_path / "a folder with spaces" / "quay dome.json"
    path.parent.mkdir()
    save_display_profile(CUSTOM, path)
    args = _parsed(command_line_for(s, 5000.0, display_profile=path))
    assert args.display == str(path)  # one word after POSIX quoting
    assert settings_from_args(args) == s


def test_a_preset_renamed_is_not_taken_for_the_preset(tmp_path):
    """A display that carries a preset's name but another peak is not written as the name."""
    from starkiln.engine.colour.displays import PRESETS

    fake = dataclasses.replace(PRESETS["srgb"], peak_luminance_cd_m2=300.0)
    with pytest.raises(StarkilnError, match="not a preset"):
        command_line_for(Settings(display=fake), 5000.0)
