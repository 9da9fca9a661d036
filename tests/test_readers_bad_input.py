"""Bad input to the readers of user files, table-driven: one clear line, never a traceback.

Each case is an invented bad input (a fictional dome "Lantern Hill", its settings and display
profile) with a short comment, run through the command line's ``main([...])``. The contract
(project rule; common practice for command-line tools): exit code 2, exactly one line on
standard error that starts ``starkiln: error:`` and names the file, the key and the value
(the fragments listed with each case), and no Python names (``__init__``, ``unhashable``)
or values spelt as tuples of characters.

Formats: TOML 1.0 (settings), RFC 8259 JSON (display profiles), ISO/IEC 15948:2004 section
11.3.4 (PNG text chunks: ``tEXt`` Latin-1, ``iTXt`` UTF-8). Ranges: the docstrings of
:class:`starkiln.engine.pipeline.settings.Settings` and :mod:`starkiln.engine.colour.displays`.
"""

from __future__ import annotations

import contextlib
import io
import json
import os
import struct
import zlib
from pathlib import Path

import numpy as np
import pytest

from starkiln.cli.main import main

GOOD_DISPLAY_TOML = ('[display]\nname = "lantern-hill"\nred_xy = [0.68, 0.32]\n'
                     'green_xy = [0.265, 0.69]\nblue_xy = [0.15, 0.06]\n'
                     'white_xy = [0.3127, 0.329]\n')
GOOD_PROFILE = {"starkiln_display": 1, "name": "lantern-hill",
                "primaries_xy": {"red": [0.68, 0.32], "green": [0.265, 0.69],
                                 "blue": [0.15, 0.06]},
                "white_xy": [0.3127, 0.329], "transfer": {"function": "gamma", "gamma": 2.2},
                "peak_luminance_cd_m2": 14.0}


def profile(**changes) -> bytes:
    """The good profile with top-level keys changed (``None`` removes a key)."""
    d = json.loads(json.dumps(GOOD_PROFILE))
    for k, v in changes.items():
        if v is None:
            d.pop(k, None)
        else:
            d[k] = v
    return json.dumps(d).encode()


def display_toml(line: str, drop: str | None = None) -> bytes:
    """The good [display] table with one line added (or one key dropped)."""
    lines = [x for x in GOOD_DISPLAY_TOML.splitlines() if not (drop and x.startswith(drop))]
    return ("\n".join(lines) + "\n" + line + "\n").encode()


def embedded(settings) -> bytes:
    """Texture metadata (JSON) of a 4 x 2 PNG strip holding ``settings``."""
    return json.dumps({"starkiln_texture": 1, "settings": settings,
                       "texture": {"width": 4, "height": 2, "alpha": "none",
                                   "premultiplied": False, "format": "png", "depth": 8},
                       "axes": {"u": {"range": [1000.0, 40000.0], "mapping": "mired"},
                                "v": {}}}).encode()


DEEP = 100000
# (comment, kind, content, extra command-line arguments, fragments the one line must hold)
# kind: settings (look.toml via --settings), profile (dome.json via --display), text / itxt
# (a PNG tEXt / iTXt chunk read by 'lut --settings-from'), exr (an EXR header attribute
# read the same way), args (options only), window
# (the window's start-up: 'starkiln --settings look.toml').
CASES = [
    # --- settings files (TOML) ---
    ("UTF-16 byte-order mark: not UTF-8", "settings", b"\xff\xfe", [], ["look.toml", "UTF-8"]),
    ("Latin-1 accent in a string", "settings", b'scene_white = "D65\xe9"\n', [],
     ["look.toml", "UTF-8"]),
    ("100000 nested arrays", "settings", b"a = " + b"[" * DEEP, [], ["look.toml", "nested"]),
    ("2000 nested inline tables", "settings",
     b"a = " + b"{b = " * 2000 + b"1" + b"}" * 2000 + b"\n", [], ["look.toml", "nested"]),
    ("white as an xy list", "settings", b"scene_white = [0.31, 0.33]\n", [],
     ["look.toml", "'scene_white'", "[0.31, 0.33]", "list"]),
    ("white as a table", "settings", b"scene_white = {x = 0.31}\n", [],
     ["'scene_white'", "table"]),
    ("observer as a number", "settings", b"observer = 1931\n", [], ["'observer'", "number"]),
    ("gamut as true", "settings", b"gamut = true\n", [], ["'gamut'", "true/false"]),
    ("adaptation as a list", "settings", b'adaptation = ["bradford"]\n', [], ["'adaptation'"]),
    ("vision as an empty table", "settings", b"vision = {}\n", [], ["'vision'", "table"]),
    ("intensity curve as a number", "settings", b"intensity_curve = 2\n", [],
     ["'intensity_curve'"]),
    ("normalisation as false", "settings", b"normalisation = false\n", [], ["'normalisation'"]),
    ("pupil as true (bool is not a number)", "settings", b"pupil_mm = true\n", [],
     ["'pupil_mm'", "true", "not a number"]),
    ("pupil as quoted text", "settings", b'pupil_mm = "7"\n', [], ["'pupil_mm'", "text"]),
    ("aperture as quoted text", "settings", b'aperture_mm = "200"\n', [], ["'aperture_mm'"]),
    ("aperture 1e-300 mm: intensity would be NaN", "settings", b"aperture_mm = 1e-300\n", [],
     ["aperture_mm", "1 <= aperture_mm <= 100000"]),
    ("aperture 1e300 mm: luminance would overflow", "settings", b"aperture_mm = 1e300\n", [],
     ["aperture_mm", "100000"]),
    ("aperture nan", "settings", b"aperture_mm = nan\n", [], ["aperture_mm", "not finite"]),
    ("transmission 1e-300", "settings", b"aperture_mm = 200.0\ntransmission = 1e-300\n", [],
     ["transmission", "0.0001 <= transmission <= 1"]),
    ("transmission inf", "settings", b"transmission = inf\n", [], ["transmission", "finite"]),
    ("luminance_Y as true", "settings", b"luminance_Y = true\n", [], ["'luminance_Y'"]),
    ("night tint as a list", "settings", b"night_tint = [0.5]\n", [], ["'night_tint'", "list"]),
    ("bright magnitude as text", "settings", b'magnitude_bright = "-1"\n', [],
     ["'magnitude_bright'"]),
    ("blur spot as a table", "settings", b"blur_spot_arcmin = {}\n", [],
     ["'blur_spot_arcmin'"]),
    ("compensate as 1", "settings", b"compensate = 1\n", [], ["'compensate'", "true or false"]),
    ("compensate as text", "settings", b'compensate = "yes"\n', [], ["'compensate'"]),
    ("format version true", "settings", b"starkiln_settings = true\n", [],
     ["starkiln_settings", "accepted: 1"]),
    ("format version as text", "settings", b'starkiln_settings = "1"\n', [],
     ["starkiln_settings"]),
    ("[[display]] array of tables: blame display", "settings",
     b'[[display]]\nname = "x"\n', [], ["'display'", "list"]),
    ("display as a number", "settings", b"display = 5\n", [], ["'display'", "number"]),
    ("display as true", "settings", b"display = true\n", [], ["'display'"]),
    ("unknown key in [display]", "settings", display_toml("sparkle = 1"), [],
     ["'display'", "'sparkle'", "accepted:", "peak_luminance_cd_m2"]),
    ("[display] without white_xy", "settings", display_toml("", drop="white_xy"), [],
     ["'display'", "white_xy"]),
    ("[display] gamma as true", "settings", display_toml("gamma = true"), [],
     ["gamma", "true"]),
    ("[display] peak as text", "settings", display_toml('peak_luminance_cd_m2 = "80"'), [],
     ["peak_luminance_cd_m2", "text"]),
    ("[display] red_xy of one number", "settings",
     display_toml('red_xy = [0.64]', drop="red_xy"), [], ["red_xy", "[0.64]"]),
    ("[display] red_xy as text: not a tuple of characters", "settings",
     display_toml('red_xy = "0.64,0.33"', drop="red_xy"), [], ["red_xy", "'0.64,0.33'"]),
    ("[display] red_xy holding true", "settings",
     display_toml('red_xy = [true, 0.33]', drop="red_xy"), [], ["red_xy", "true"]),
    ("[display] name as a number", "settings", display_toml('name = 3', drop="name"), [],
     ["name", "3"]),
    ("[display] transfer as a table", "settings",
     display_toml('transfer = {function = "gamma"}'), [], ["transfer", "table"]),
    ("display profile missing beside the settings", "settings",
     b'display = "nowhere.json"\n', [], ["nowhere.json", "cannot read display profile"]),
    ("unknown top-level key", "settings", b"sparkle = 1\n", [], ["'sparkle'", "accepted:"]),
    ("pupil 1e400 (TOML reads inf)", "settings", b"pupil_mm = 1e400\n", [],
     ["pupil_mm", "not finite"]),
    ("faint brighter than bright", "settings",
     b"magnitude_bright = 5.0\nmagnitude_faint = 1.0\n", [], ["magnitude_faint"]),
    # --- display profiles (JSON) ---
    ("UTF-16 byte-order mark", "profile", b"\xff\xfe{}", [], ["dome.json", "UTF-8"]),
    ("100000 nested arrays", "profile", b"[" * DEEP, [], ["dome.json", "nested"]),
    ("5000 nested objects", "profile", b'{"a":' * 5000 + b"1" + b"}" * 5000, [],
     ["dome.json", "nested"]),
    ("format version true", "profile", profile(starkiln_display=True), [],
     ["starkiln_display true", "accepted: 1"]),
    ("format version as text", "profile", profile(starkiln_display="1"), [],
     ["starkiln_display"]),
    ("format version 1.5", "profile", profile(starkiln_display=1.5), [], ["starkiln_display"]),
    ("peak as true", "profile", profile(peak_luminance_cd_m2=True), [],
     ["peak_luminance_cd_m2", "true"]),
    ("peak as text", "profile", profile(peak_luminance_cd_m2="80"), [],
     ["peak_luminance_cd_m2", "text"]),
    ("peak 1e-300", "profile", profile(peak_luminance_cd_m2=1e-300), [],
     ["peak_luminance_cd_m2", "0.01-10000"]),
    ("gamma as true", "profile", profile(transfer={"function": "gamma", "gamma": True}), [],
     ["transfer.gamma", "true"]),
    ("gamma as text", "profile", profile(transfer={"function": "gamma", "gamma": "2.2"}), [],
     ["transfer.gamma", "text"]),
    ("gamma 1e300", "profile", profile(transfer={"function": "gamma", "gamma": 1e300}), [],
     ["gamma", "1-4"]),
    ("unknown key in transfer", "profile",
     profile(transfer={"function": "srgb", "sparkle": 1}), [],
     ["transfer", "'sparkle'", "accepted: function, gamma"]),
    ("transfer function as a number", "profile", profile(transfer={"function": 3}), [],
     ["transfer.function", "3"]),
    ("transfer function as a list", "profile", profile(transfer={"function": ["srgb"]}), [],
     ["transfer.function"]),
    ("a fourth primary", "profile",
     profile(primaries_xy={**GOOD_PROFILE["primaries_xy"], "cyan": [0.2, 0.3]}), [],
     ["primaries_xy", "'cyan'"]),
    ("red primary as text: not a tuple of characters", "profile",
     profile(primaries_xy={**GOOD_PROFILE["primaries_xy"], "red": "0.68,0.32"}), [],
     ["primaries_xy.red", "'0.68,0.32'"]),
    ("primaries as a list", "profile", profile(primaries_xy=[[0.68, 0.32]]), [],
     ["primaries_xy", "list"]),
    ("white NaN (JSON NaN)", "profile", profile(white_xy=[float("nan"), 0.3]), [],
     ["white_xy", "not finite"]),
    ("white 1e999 (reads as inf)", "profile",
     json.dumps(GOOD_PROFILE).replace("[0.3127, 0.329]", "[1e999, 0.3]").encode(), [],
     ["white_xy", "not finite"]),
    ("name as a number", "profile", profile(name=5), [], ["name", "5"]),
    ("note as an object", "profile", profile(note={}), [], ["note"]),
    ("top level a list", "profile", b"[1, 2]", [], ["dome.json", "JSON object"]),
    ("unknown key gamut", "profile", profile(gamut="clip"), [], ["'gamut'", "accepted:"]),
    # --- text embedded in a texture (lut --settings-from) ---
    ("iTXt that is not UTF-8", "itxt", b"\xff\xfe{}", [], ["old.png", "UTF-8"]),
    ("tEXt nested 100000 deep", "text", b"[" * DEEP, [], ["old.png", "nested"]),
    ("embedded white as a list", "text", embedded({"scene_white": [0.31, 0.33]}), [],
     ["old.png", "'scene_white'", "list"]),
    ("embedded pupil as true", "text", embedded({"pupil_mm": True}), [],
     ["old.png", "'pupil_mm'", "true"]),
    ("embedded settings missing", "text", embedded(None), [], ["old.png", "settings"]),
    ("embedded display as a list", "text", embedded({"display": [{"name": "x"}]}), [],
     ["old.png", "'display'", "list"]),
    ("EXR header nested 100000 deep", "exr", b"[" * DEEP, [], ["old.exr", "nested"]),
    ("EXR header: white as a list", "exr", embedded({"scene_white": [0.31, 0.33]}), [],
     ["old.exr", "'scene_white'", "list"]),
    ("EXR header: aperture 1e-300", "exr", embedded({"aperture_mm": 1e-300}), [],
     ["old.exr", "'aperture_mm'", "1 <= aperture_mm"]),
    # --- options ---
    ("--aperture-mm 1e-300", "args", None, ["--aperture-mm", "1e-300"],
     ["aperture_mm 1e-300", "1 <= aperture_mm"]),
    ("--aperture-mm 1e300", "args", None, ["--aperture-mm", "1e300"], ["aperture_mm"]),
    ("--transmission 1e-300", "args", None, ["--aperture-mm", "200", "--transmission",
                                             "1e-300"], ["transmission"]),
    ("--pupil-mm 1e-300", "args", None, ["--pupil-mm", "1e-300"], ["pupil_mm", "1 <= pupil_mm"]),
    ("--magnitudes with three parts: magnitude example", "lut", None,
     ["--magnitudes", "1:2:3"], ["--magnitudes", "e.g. -1:7"]),
    ("--temperatures not numbers: temperature example", "lut", None,
     ["--temperatures", "hot:cold"], ["--temperatures", "e.g. 1000:40000"]),
    # --- the window's start-up reads the settings file ---
    ("window: white as a list", "window", b"scene_white = [0.31, 0.33]\n", [],
     ["look.toml", "'scene_white'"]),
    ("window: not UTF-8", "window", b"\xff\xfe", [], ["look.toml", "UTF-8"]),
]

FORBIDDEN = ("Traceback", "__init__", "unhashable", "('0', '.'", "('0',", "NoneType")


def png_with_chunk(path: Path, tag: bytes, payload: bytes) -> None:
    """A valid 1 x 1 PNG with one extra chunk (correct CRC, ISO/IEC 15948 5.3) before IEND."""
    from starkiln.engine.exports.image_files import write_png

    write_png(path, np.zeros((1, 1, 3), dtype=np.uint8))
    data = path.read_bytes()
    iend = data.rindex(b"IEND") - 4
    chunk = (struct.pack(">I", len(payload)) + tag + payload
             + struct.pack(">I", zlib.crc32(tag + payload) & 0xFFFFFFFF))
    path.write_bytes(data[:iend] + chunk + data[iend:])


def run_case(folder: Path, kind: str, content, extra) -> tuple[int | str, str]:
    """Run one case in ``folder``; returns (exit code or the escaped exception's name, stderr)."""
    colour = ["colour", "--temperature", "5000", "--magnitude", "3", "--json"]
    if kind == "settings":
        (folder / "look.toml").write_bytes(content)
        argv = colour + ["--settings", str(folder / "look.toml")]
    elif kind == "profile":
        (folder / "dome.json").write_bytes(content)
        argv = colour + ["--display", str(folder / "dome.json")]
    elif kind in ("text", "itxt"):
        old = folder / "old.png"
        if kind == "text":
            png_with_chunk(old, b"tEXt", b"starkiln\x00" + content)
        else:
            png_with_chunk(old, b"iTXt", b"starkiln\x00\x00\x00\x00\x00" + content)
        argv = ["lut", str(folder / "new.png"), "--settings-from", str(old)]
    elif kind == "exr":  # an OpenEXR string attribute (OpenEXR header attributes)
        from starkiln.engine.exports.image_files import write_exr

        write_exr(folder / "old.exr", np.zeros((1, 1, 3)),
                  attributes={"starkiln": content.decode("utf-8")})
        argv = ["lut", str(folder / "new.png"), "--settings-from", str(folder / "old.exr")]
    elif kind == "args":
        argv = colour + extra
    elif kind == "lut":
        argv = ["lut", str(folder / "new.png")] + extra
    else:  # window
        (folder / "look.toml").write_bytes(content)
        argv = ["--settings", str(folder / "look.toml")]
    err = io.StringIO()
    with contextlib.redirect_stderr(err), contextlib.redirect_stdout(io.StringIO()):
        try:
            code = main(argv)
        except Exception as exc:  # noqa: BLE001 - counted as a traceback
            return type(exc).__name__, err.getvalue()
    return code, err.getvalue()


def test_at_least_sixty_cases():
    assert len(CASES) >= 60


@pytest.mark.parametrize("comment,kind,content,extra,fragments", CASES,
                         ids=[c[0] for c in CASES])
def test_bad_input_gives_one_clear_line(tmp_path, monkeypatch, comment, kind, content, extra,
                                        fragments):
    import starkiln.gui.app as app

    monkeypatch.setattr(app, "_has_display", lambda: False)  # never open a real window
    code, err = run_case(tmp_path, kind, content, extra)
    assert code == 2, (comment, code, err)
    lines = err.splitlines()
    assert len(lines) == 1 and lines[0].startswith("starkiln: error: "), err
    for fragment in fragments:
        assert fragment in lines[0], (comment, fragment, lines[0])
    for word in FORBIDDEN:
        assert word not in lines[0], (comment, word, lines[0])
    assert not (tmp_path / "new.png").exists()


# --- items that need more than one line of input ---------------------------------------------


def test_display_path_is_read_beside_the_settings_file(tmp_path, monkeypatch):
    # A display profile named in a settings file is found next to that file, whatever the
    # current folder (common practice: paths in a file are relative to the file).
    show = tmp_path / "show"
    show.mkdir()
    (show / "dome.json").write_text(json.dumps(GOOD_PROFILE), encoding="utf-8")
    (show / "look.toml").write_text('display = "dome.json"\n', encoding="utf-8")
    elsewhere = tmp_path / "elsewhere"
    elsewhere.mkdir()
    monkeypatch.chdir(elsewhere)
    from starkiln.engine.pipeline.settings import load_settings

    s = load_settings(show / "look.toml")
    assert s.display.name == "lantern-hill" and s.display.peak_luminance_cd_m2 == 14.0
    # ...and not in the current folder: a profile of the same name there is not used.
    (elsewhere / "dome.json").write_text(json.dumps({**GOOD_PROFILE, "name": "decoy"}),
                                         encoding="utf-8")
    assert load_settings(Path("..") / "show" / "look.toml").display.name == "lantern-hill"


@pytest.mark.parametrize("options", [
    ["--aperture-mm", "1"], ["--aperture-mm", "100000"],
    ["--aperture-mm", "1", "--transmission", "0.0001", "--pupil-mm", "9"],
    ["--aperture-mm", "100000", "--pupil-mm", "1", "--blur-spot-arcmin", "0.1"],
    ["--aperture-mm", "1", "--transmission", "0.0001", "--blur-spot-arcmin", "60"],
])
@pytest.mark.parametrize("magnitude", ["-30", "30"])
def test_json_colour_is_finite_at_the_ends_of_every_range(capsys, options, magnitude):
    # RFC 8259 has no NaN or Infinity: the JSON colour query holds finite numbers only, at
    # the extremes that the settings accept (ranges in the Settings docstring).
    code = main(["colour", "--temperature", "5000", "--magnitude", magnitude, "--json",
                 "--intensity-curve", "linear", *options])
    out = capsys.readouterr().out
    assert code == 0
    record = json.loads(out, parse_constant=lambda c: pytest.fail(f"{c} in {out}"))
    assert all(np.isfinite(record["rgb_dimmed_encoded"]))
    assert np.isfinite(record["intensity"]) and np.isfinite(record["photopic_luminance_cd_m2"])


@pytest.mark.filterwarnings("ignore::RuntimeWarning")
def test_render_refuses_to_return_nan(monkeypatch):
    # Last guard of the render path: a gain that slips past the ranges gives a one-line
    # InputRangeError, not NaN colours (IEEE 754: NaN is not a value to show).
    from starkiln.engine.errors import InputRangeError
    from starkiln.engine.eye import vision
    from starkiln.engine.pipeline.render import render
    from starkiln.engine.pipeline.settings import Settings

    monkeypatch.setattr(vision, "aperture_gain", lambda *a: 0.0)
    with pytest.raises(InputRangeError, match="no finite image luminance"):
        render(Settings(aperture_mm=200.0), 5000.0, 3.0)


def test_finite_number_refuses_bool_and_file_text():
    # Python's isinstance(True, int) holds, but true is not a number in a settings file.
    from starkiln.engine.errors import SettingsError, finite_number

    for value in (True, False, np.bool_(True)):
        with pytest.raises(SettingsError, match="not a number"):
            finite_number(value, "gamma")
    assert finite_number("2.2", "gamma") == 2.2  # command-line text is still read
    with pytest.raises(SettingsError, match="gamma '2.2' is text"):
        finite_number("2.2", "gamma", text=False)


def test_python_callers_get_the_same_checks():
    # The Settings and Display objects check kinds too (the scripting API), one line each.
    from starkiln.engine.colour.displays import Display
    from starkiln.engine.errors import SettingsError
    from starkiln.engine.pipeline.settings import Settings

    with pytest.raises(SettingsError, match=r"scene_white \[0.31, 0.33\] is a list"):
        Settings(scene_white=[0.31, 0.33])
    with pytest.raises(SettingsError, match="pupil_mm true is true/false"):
        Settings(pupil_mm=True)
    with pytest.raises(SettingsError, match="red_xy must be two numbers"):
        Display("x", "0.6,0.3", (0.3, 0.6), (0.15, 0.06), (0.3127, 0.329))
    with pytest.raises(SettingsError, match="display name 5 is a number"):
        Display(5, (0.64, 0.33), (0.3, 0.6), (0.15, 0.06), (0.3127, 0.329))


def test_no_case_leaves_files_behind(tmp_path, monkeypatch):
    # Bad input changes nothing: the folder holds exactly the inputs afterwards.
    import starkiln.gui.app as app

    monkeypatch.setattr(app, "_has_display", lambda: False)
    for i, (comment, kind, content, extra, _) in enumerate(CASES):
        folder = tmp_path / str(i)
        folder.mkdir()
        run_case(folder, kind, content, extra)
        left = sorted(p.name for p in folder.iterdir())
        assert set(left) <= {"look.toml", "dome.json", "old.png", "old.exr"}, (comment, left)
    assert os.listdir(tmp_path)
