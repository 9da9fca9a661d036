"""Fuzzing the readers of user files through the command line: never a traceback, never a lost file.

Targets: the settings file (``--settings``, TOML 1.0), the display profile (``--display``,
JSON, RFC 8259) and the text embedded in a texture (``lut --settings-from``, a PNG text chunk,
ISO/IEC 15948:2004 section 11.3.4). Inputs: random bytes, random JSON/TOML trees of random
depth and kinds (deep nesting, true/false, NaN-like text, huge numbers), and trees over the
real key names so that the values reach the per-key checks.

The contract checked (project rule, common practice for command-line tools): exit 0 or 2; on
2 exactly one line on standard error starting ``starkiln: error:``; never a Python traceback;
no file in the working folder other than the output changes. Hypothesis is bounded
(``max_examples`` 200 per target, no deadline) so the file runs in well under a minute.
"""

from __future__ import annotations

import contextlib
import io
import json
import tempfile
import zlib
from pathlib import Path

import pytest

hypothesis = pytest.importorskip("hypothesis")
from hypothesis import HealthCheck, given, settings, strategies as st  # noqa: E402

import tomli_w  # noqa: E402

from starkiln.cli.main import main  # noqa: E402
from test_readers_bad_input import png_with_chunk  # noqa: E402 (same folder)

FUZZ = settings(max_examples=200, deadline=None, derandomize=True,
                suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])

SETTINGS_KEYS = ["starkiln_settings", "observer", "scene_white", "adaptation", "display",
                 "gamut", "normalisation", "luminance_Y", "vision", "pupil_mm", "aperture_mm",
                 "transmission", "blur_spot_arcmin", "intensity_curve", "magnitude_bright",
                 "magnitude_faint", "night_tint", "compensate"]
DISPLAY_TABLE_KEYS = ["name", "red_xy", "green_xy", "blue_xy", "white_xy", "transfer", "gamma",
                      "peak_luminance_cd_m2"]
PROFILE_KEYS = ["starkiln_display", "name", "primaries_xy", "white_xy", "transfer",
                "peak_luminance_cd_m2", "note", "red", "green", "blue", "function", "gamma"]

# Leaves of the random trees: every JSON/TOML kind, with the values that break naive readers.
NASTY_TEXT = st.sampled_from(["nan", "NaN", "inf", "-inf", "1e309", "", " ", "D65", "srgb",
                              "xy:nan,nan", "blackbody:1e999", "daylight:-0", "true", "7",
                              "../../etc", "gamma", "pq", "\x00", "\u00e9toile", "a" * 300])
NUMBERS = st.one_of(st.integers(min_value=-(10 ** 30), max_value=10 ** 30),
                    st.floats(allow_nan=True, allow_infinity=True),
                    st.sampled_from([0, 1, -1, 1e-300, 1e300, 5e-324, 0.3127, 2.2, 80.0]))
LEAVES = st.one_of(st.booleans(), NUMBERS, NASTY_TEXT, st.text(max_size=12))


def _trees(keys):
    """Random JSON-like trees whose tables use ``keys`` (or random text) as their keys."""
    names = st.one_of(st.sampled_from(keys), st.text(max_size=6))
    return st.recursive(LEAVES, lambda inner: st.one_of(
        st.lists(inner, max_size=4), st.dictionaries(names, inner, max_size=5)), max_leaves=25)


def _deep(n: int, kind: str) -> bytes:
    """A document nested ``n`` levels: ``[[[...`` (JSON, TOML arrays) or ``{"a":{...`` (JSON)."""
    if kind == "toml":
        return ("a = " + "[" * n + "]" * n + "\n").encode()
    if kind == "toml-inline":
        return ("a = " + "{b = " * n + "1" + "}" * n + "\n").encode()
    if kind == "json-object":
        return ('{"a":' * n + "1" + "}" * n).encode()
    return ("[" * n).encode()


def _toml_bytes(tree) -> bytes | None:
    """TOML text of a random tree (the top must be a table; TOML has no null)."""
    def clean(v):
        if v is None:
            return "null"
        if isinstance(v, dict):
            return {str(k): clean(x) for k, x in v.items()}
        if isinstance(v, list):
            return [clean(x) for x in v]
        return v

    top = clean(tree) if isinstance(tree, dict) else {"display": clean(tree)}
    try:
        return tomli_w.dumps(top).encode("utf-8")
    except (TypeError, ValueError, UnicodeEncodeError):
        return None


def _snapshot(folder: Path) -> dict:
    return {p.relative_to(folder): p.read_bytes() for p in folder.rglob("*") if p.is_file()}


def _run_cli(folder: Path, argv: list[str], output: Path | None = None) -> None:
    """Run ``main(argv)`` and check the contract of the module docstring."""
    before = _snapshot(folder)
    err, out = io.StringIO(), io.StringIO()
    with contextlib.redirect_stderr(err), contextlib.redirect_stdout(out):
        try:
            code = main(argv)
        except BaseException as exc:  # noqa: BLE001 - the point: nothing may escape
            pytest.fail(f"{argv}: {type(exc).__name__} escaped: {exc!r}"[:400])
    text = err.getvalue()
    assert "Traceback" not in text, text
    assert code in (0, 2), (argv, code, text)
    if code == 2:
        lines = text.splitlines()
        assert len(lines) == 1, (argv, text)
        assert lines[0].startswith("starkiln: error:"), text
    else:
        assert text == "", (argv, text)
        if "--json" in argv:
            json.loads(out.getvalue(), parse_constant=lambda c: pytest.fail(f"{c} in output"))
    after = _snapshot(folder)
    changed = {p for p in set(before) | set(after) if before.get(p) != after.get(p)}
    allowed = {output.relative_to(folder)} if output is not None else set()
    assert changed <= allowed, (argv, changed)


def _colour_argv(*extra):
    return ["colour", "--temperature", "5000", "--magnitude", "3", "--json", *extra]


SETTINGS_INPUTS = st.one_of(
    st.binary(max_size=200),
    st.builds(_deep, st.sampled_from([50, 1000, 100000]),
              st.sampled_from(["toml", "toml-inline", "json"])),
    _trees(SETTINGS_KEYS + DISPLAY_TABLE_KEYS).map(_toml_bytes),
    st.dictionaries(st.sampled_from(SETTINGS_KEYS), _trees(DISPLAY_TABLE_KEYS),
                    max_size=6).map(_toml_bytes),
)


@FUZZ
@given(SETTINGS_INPUTS)
def test_fuzz_settings_file(content):
    if content is not None:
        _run_with_file("look.toml", content, "--settings")


def _run_with_file(name: str, content: bytes, option: str) -> None:
    """Write ``content`` to ``name`` in a fresh folder and pass it to ``colour`` with ``option``."""
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        (folder / name).write_bytes(content)
        _run_cli(folder, _colour_argv(option, str(folder / name)))


def _json_bytes(tree) -> bytes:
    return json.dumps(tree).encode("utf-8")  # NaN and Infinity as Python writes them


PROFILE_INPUTS = st.one_of(
    st.binary(max_size=200),
    st.builds(_deep, st.sampled_from([50, 1000, 100000]), st.sampled_from(["json",
                                                                          "json-object"])),
    _trees(PROFILE_KEYS).map(_json_bytes),
    st.dictionaries(st.sampled_from(PROFILE_KEYS), _trees(PROFILE_KEYS), max_size=7)
    .map(_json_bytes),
)


@FUZZ
@given(PROFILE_INPUTS)
def test_fuzz_display_profile(content):
    _run_with_file("dome.json", content, "--display")


def _embedded_tree(tree) -> bytes:
    """A texture description whose settings (or the whole) is a random tree."""
    good = {"starkiln_texture": 1,
            "texture": {"width": 4, "height": 2, "alpha": "none", "premultiplied": False,
                        "format": "png", "depth": 8},
            "axes": {"u": {"range": [1000.0, 40000.0], "mapping": "mired"}, "v": {}}}
    if isinstance(tree, dict) and "settings" not in tree:
        good["settings"] = tree
        return json.dumps(good).encode()
    return json.dumps(tree).encode()


EMBEDDED_INPUTS = st.tuples(
    st.sampled_from([b"tEXt", b"zTXt", b"iTXt", b"whole-file"]),
    st.one_of(st.binary(max_size=200),
              st.builds(_deep, st.sampled_from([50, 1000, 100000]), st.just("json")),
              _trees(SETTINGS_KEYS + ["settings", "texture", "axes"]).map(_embedded_tree),
              st.dictionaries(st.sampled_from(SETTINGS_KEYS), _trees(DISPLAY_TABLE_KEYS),
                              max_size=6).map(_embedded_tree)))


@FUZZ
@given(EMBEDDED_INPUTS)
def test_fuzz_embedded_text(case):
    tag, text = case
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        old = folder / "old.png"
        if tag == b"whole-file":
            old.write_bytes(text)
        elif tag == b"tEXt":
            png_with_chunk(old, tag, b"starkiln\x00" + text)
        elif tag == b"zTXt":
            png_with_chunk(old, tag, b"starkiln\x00\x00" + zlib.compress(text))
        else:
            png_with_chunk(old, tag, b"starkiln\x00\x00\x00\x00\x00" + text)
        out = folder / "new.png"
        _run_cli(folder, ["lut", str(out), "--settings-from", str(old)], output=out)
