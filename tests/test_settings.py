"""starkiln.engine.pipeline.settings: the validated, immutable settings object and its TOML file.

References: TOML 1.0 (read back here with the standard library's tomllib, independent of
the writer), the engine contract (frozen, hashable, one-line errors naming the file and
the key), IEC 61966-2-1 / ITU-R BT.2020 for the display values that round-trip.
"""

import dataclasses
import tomllib

import pytest

from starkiln.engine.colour.displays import PRESETS, Display
from starkiln.engine.atomic import OutputExistsError
from starkiln.engine.errors import SettingsError
from starkiln.engine.pipeline.settings import (
    SETTINGS_FORMAT,
    Settings,
    load_settings,
    save_settings,
    settings_to_toml,
)


def _custom():
    # An invented display for a fictional dome ("Lantern Hill"), and non-default choices.
    dome = Display("lantern-hill-dome", (0.68, 0.32), (0.265, 0.69), (0.15, 0.06),
                   (0.3127, 0.329), "gamma", 2.2, 14.0)
    return Settings(observer="cie1964", scene_white="blackbody:5500", adaptation="cat16",
                    display=dome, gamut="scale", normalisation="luminance", luminance_Y=0.25)


@pytest.mark.parametrize("settings", [Settings(), _custom(),
                                      Settings(display="rec2100-pq", scene_white="xy:0.32,0.34")])
def test_toml_round_trip(tmp_path, settings):
    path = tmp_path / "look.toml"
    save_settings(settings, path)
    again = load_settings(path)
    assert again == settings
    assert hash(again) == hash(settings)
    # The file is plain TOML 1.0 with the format version (read by the standard library).
    data = tomllib.loads(path.read_text(encoding="utf-8"))
    assert data["starkiln_settings"] == SETTINGS_FORMAT == 2
    assert data["observer"] == settings.observer
    assert data["display"]["white_xy"] == list(settings.display.white_xy)


def test_toml_text_has_version_first():
    text = settings_to_toml(Settings())
    assert text.splitlines()[0].replace(" ", "") == "starkiln_settings=2"
    assert tomllib.loads(text)["display"]["name"] == "srgb"


def test_display_preset_by_name_in_toml(tmp_path):
    # Contract: display = "srgb" (a preset name) is accepted in place of a table.
    path = tmp_path / "short.toml"
    path.write_text('starkiln_settings = 1\ndisplay = "rec2020"\ngamut = "clip"\n',
                    encoding="utf-8")
    s = load_settings(path)
    assert s.display == PRESETS["rec2020"] and s.gamut == "clip"


def test_settings_hashable_and_immutable():
    a, b = Settings(), Settings(scene_white="d65")
    assert a == b and hash(a) == hash(b)
    assert len({a, b, _custom()}) == 2
    with pytest.raises(dataclasses.FrozenInstanceError):
        a.gamut = "clip"
    c = a.replace(gamut="clip")
    assert c.gamut == "clip" and a.gamut == "chroma"


def test_defaults_match_contract():
    # Engine contract (CONTRACT.md): cie1931, D65, bradford, srgb, chroma, max-channel.
    s = Settings()
    assert (s.observer, s.scene_white, s.adaptation, s.display.name, s.gamut,
            s.normalisation) == ("cie1931", "D65", "bradford", "srgb", "chroma", "max-channel")


@pytest.mark.parametrize("changes,word", [
    ({"observer": "cie2006"}, "cie2006"),
    ({"scene_white": "D93"}, "D93"),
    ({"adaptation": "sharp"}, "sharp"),
    ({"gamut": "perceptual"}, "perceptual"),
    ({"normalisation": "peak"}, "peak"),
    ({"luminance_Y": 0.0}, "luminance_Y"),
    ({"luminance_Y": "half"}, "half"),
    ({"display": "crt"}, "crt"),
])
def test_replace_validates(changes, word):
    with pytest.raises(SettingsError) as exc:
        Settings().replace(**changes)
    assert word in str(exc.value) and "\n" not in str(exc.value)


def _write(tmp_path, text, name="bad.toml"):
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


@pytest.mark.parametrize("text,expected", [
    ('starkiln_settings = 1\nsparkle = true\n', "unknown key 'sparkle'"),
    ('starkiln_settings = 1\ngamut = "wobble"\n', "key 'gamut'"),
    ('starkiln_settings = 1\nobserver = "cie2006"\n', "key 'observer'"),
    ('starkiln_settings = 1\nscene_white = "xy:0.7,0.5"\n', "key 'scene_white'"),
    ('starkiln_settings = 1\nluminance_Y = 3.0\n', "key 'luminance_Y'"),
    ('starkiln_settings = 1\ndisplay = "crt"\n', "key 'display'"),
    ('starkiln_settings = 1\n[display]\nname = "x"\nred_xy = [0.9, 0.3]\n'
     'green_xy = [0.3, 0.6]\nblue_xy = [0.15, 0.06]\nwhite_xy = [0.3127, 0.329]\n',
     "key 'display'"),
    ('starkiln_settings = 1\n[display]\nname = "x"\nshine = 3\n', "key 'display'"),
    ('starkiln_settings = 3\n', "starkiln_settings = 3"),             # unknown version
])
def test_bad_settings_files_name_file_and_key(tmp_path, text, expected):
    # Contract: one line, naming the file and the key (and the bad value where there is one).
    path = _write(tmp_path, text)
    with pytest.raises(SettingsError) as exc:
        load_settings(path)
    msg = str(exc.value)
    assert "\n" not in msg
    assert msg.startswith(str(path))
    assert expected in msg


def test_malformed_toml(tmp_path):
    path = _write(tmp_path, 'starkiln_settings = 1\ngamut = "clip\n')
    with pytest.raises(SettingsError) as exc:
        load_settings(path)
    msg = str(exc.value)
    assert str(path) in msg and "TOML" in msg and "\n" not in msg


def test_missing_and_binary_files(tmp_path):
    with pytest.raises(SettingsError) as exc:
        load_settings(tmp_path / "absent.toml")
    assert "absent.toml" in str(exc.value)
    path = tmp_path / "binary.toml"
    path.write_bytes(b"\xff\xfe\x00gamut")
    with pytest.raises(SettingsError) as exc:
        load_settings(path)
    assert str(path) in str(exc.value) and "\n" not in str(exc.value)


def test_from_dict_requires_a_table():
    with pytest.raises(SettingsError, match="inline"):
        Settings.from_dict(["gamut", "clip"], "inline")


def test_save_is_atomic_and_refuses_to_clobber(tmp_path):
    # Contract: writes go through starkiln.engine.atomic; overwrite=False keeps an existing file.
    path = tmp_path / "keep.toml"
    path.write_text("old", encoding="utf-8")
    with pytest.raises(OutputExistsError):
        save_settings(Settings(), path, overwrite=False)
    assert path.read_text(encoding="utf-8") == "old"
    save_settings(Settings(), path, overwrite=True)
    assert load_settings(path) == Settings()
    assert sorted(p.name for p in tmp_path.iterdir()) == ["keep.toml"]  # no temp files left


# --- the one number check (starkiln.engine.errors.finite_number) -----------------------------

@pytest.mark.parametrize("text,value", [("2.5", 2.5), ("-1e3", -1000.0), (7, 7.0), (" 3 ", 3.0)])
def test_finite_number_accepts_what_python_float_reads(text, value):
    # Python's float() grammar is the reference for what counts as a number.
    from starkiln.engine.errors import finite_number

    assert finite_number(text, "pupil_mm") == value


@pytest.mark.parametrize("text,words", [("wide", "is not a number"), ("nan", "is not finite"),
                                        ("inf", "is not finite"), ("-inf", "is not finite"),
                                        (None, "is not a number")])
def test_finite_number_refuses_in_one_line_naming_the_value(text, words):
    # IEEE 754: NaN and the infinities are not finite numbers.
    from starkiln.engine.errors import InputRangeError, SettingsError, finite_number

    with pytest.raises(SettingsError) as exc:
        finite_number(text, "pupil_mm")
    msg = str(exc.value)
    assert msg.startswith(f"pupil_mm {text!r} ") and words in msg and "\n" not in msg
    with pytest.raises(InputRangeError):
        finite_number(text, "x", InputRangeError)


def test_every_number_in_the_area_goes_through_the_one_check():
    # Settings, displays and whites name the same message shape for the same mistake.
    from starkiln.engine.colour.displays import Display
    from starkiln.engine.colour.whites import resolve_white
    from starkiln.engine.errors import SettingsError

    with pytest.raises(SettingsError, match=r"pupil_mm 'abc' is not a number"):
        Settings(pupil_mm="abc")
    with pytest.raises(SettingsError, match=r"gamma 'abc' is not a number"):
        Display("d", (0.64, 0.33), (0.3, 0.6), (0.15, 0.06), (0.3127, 0.329), "gamma", "abc")
    with pytest.raises(SettingsError, match=r"is not finite"):
        resolve_white("xy:nan,0.33")
