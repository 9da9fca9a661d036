"""Never lose a file, never show a traceback (issue 10, command-line part).

Outputs follow one rule (refuse an existing file without ``--force``; refuse a folder, a FIFO
or device, a path whose parent is a file, naming the path as given); a run stopped by SIGINT
or SIGTERM removes its hidden temporary file, and one left by SIGKILL is removed by the next
write into that folder; every settings field has a command-line option, and
``starkiln settings write`` round-trips them. Bad command lines end in exit 2 and one line.

References: POSIX ``kill(2)`` (signal 0 tests whether a process exists; SIGTERM, SIGINT and
SIGKILL semantics) and ``rename(2)`` (atomic replace), common practice; argparse's
``BooleanOptionalAction`` (Python documentation) for ``--compensate/--no-compensate``.
"""

from __future__ import annotations

import dataclasses
import errno
import os
import re
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from starkiln.cli.main import build_parser, main
from starkiln.engine.atomic import (TEMPORARY_NAME, atomic_path, check_writable,
                                    remove_stale_temporaries, write_atomic)
from starkiln.engine.errors import StarkilnError
from starkiln.engine.pipeline.settings import Settings, load_settings

ROOT = Path(__file__).resolve().parent.parent


def _run(argv, capsys):
    code = main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return code, out, err


def _one_line_error(stderr: str) -> bool:
    lines = stderr.strip().splitlines()
    return (len(lines) == 1 and lines[0].startswith("starkiln: error: ")
            and "Traceback" not in stderr)


def _temporaries(folder: Path) -> list[str]:
    return sorted(p.name for p in folder.iterdir() if ".starkiln-" in p.name)


# -- 1. --screenshot follows the --force rule ---------------------------------------------

def test_screenshot_refuses_an_existing_file_without_force(tmp_path, capsys):
    shot = tmp_path / "window.png"
    shot.write_bytes(b"an earlier render")
    code, out, err = _run(["--screenshot", shot], capsys)
    assert code == 2 and _one_line_error(err) and "--force" in err
    assert shot.read_bytes() == b"an earlier render"


@pytest.mark.usefixtures("qapp")
def test_screenshot_with_force_replaces_the_file(tmp_path, capsys):
    shot = tmp_path / "window.png"
    shot.write_bytes(b"an earlier render")
    code, out, err = _run(["--screenshot", shot, "--force"], capsys)
    assert code == 0, err
    assert shot.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"  # PNG signature (ISO/IEC 15948)
    assert _temporaries(tmp_path) == []


def test_force_before_a_command_is_an_error(tmp_path, capsys):
    code, out, err = _run(["--force", "whites"], capsys)
    assert code == 2 and _one_line_error(err) and "--force" in err


# -- 2. outputs that are not files ------------------------------------------------------

def test_a_folder_as_output_is_named_as_given(tmp_path, capsys):
    folder = tmp_path / "some_folder.png"
    folder.mkdir()
    (folder / "keep.txt").write_text("mine")
    code, out, err = _run(["lut", folder, "--force"], capsys)
    assert code == 2 and _one_line_error(err)
    assert f"{folder} is a folder" in err and "accepted: a file path" in err
    assert ".some_folder" not in err  # never the hidden temporary name
    assert (folder / "keep.txt").read_text() == "mine"


def test_parent_that_is_a_file_and_fifo_are_refused(tmp_path):
    plain = tmp_path / "plain"
    plain.write_text("x")
    with pytest.raises(StarkilnError, match="is a file, not a folder"):
        check_writable(plain / "x.png", overwrite=True)
    fifo = tmp_path / "pipe.png"
    os.mkfifo(fifo)
    with pytest.raises(StarkilnError, match="not a regular file"):
        check_writable(fifo, overwrite=True)
    with pytest.raises(StarkilnError, match="not a regular file"):
        check_writable(os.devnull, overwrite=True)  # a character device (POSIX /dev/null)


def test_a_failing_temporary_file_names_the_users_path(tmp_path, monkeypatch):
    # A pseudo file system (/proc, /sys) can pass os.access and still refuse to create files.
    import tempfile

    def refuse(*args, **kwargs):
        raise PermissionError(errno.EACCES, "Permission denied", str(tmp_path / ".x.png.tmp"))

    monkeypatch.setattr(tempfile, "mkstemp", refuse)
    with pytest.raises(PermissionError) as exc:
        write_atomic(tmp_path / "x.png", b"data")
    assert exc.value.filename == str(tmp_path / "x.png")


def test_a_full_disk_mid_write_names_the_users_path(tmp_path, capsys, monkeypatch):
    out = tmp_path / "s.toml"
    with pytest.raises(OSError) as exc:
        with atomic_path(out) as tmp:
            raise OSError(errno.ENOSPC, "No space left on device")  # as fh.write reports it
    assert exc.value.errno == errno.ENOSPC and exc.value.filename == str(out)
    assert list(tmp_path.iterdir()) == []


@pytest.mark.skipif(not os.path.isdir("/sys/kernel") or os.geteuid() != 0,
                    reason="needs /sys, and root (os.access passes there only for root)")
def test_pseudo_file_system_is_one_line_naming_the_path(capsys):
    code, out, err = _run(["lut", "/sys/kernel/starkiln-test.png", "--force"], capsys)
    assert code == 2 and _one_line_error(err)
    assert "/sys/kernel/starkiln-test.png:" in err and ".starkiln-" not in err


# -- 3. killed runs leave no temporary files ----------------------------------------------

def _start_slow_lut(folder: Path) -> subprocess.Popen:
    """A real run whose writing takes about a second (a 4096 x 2048 float EXR)."""
    return subprocess.Popen([sys.executable, "-m", "starkiln", "lut", "big.exr",
                             "--size", "4096x2048", "--magnitudes", "-1:7"],
                            cwd=folder, stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                            text=True)


def _wait_for_temporary(proc, folder: Path) -> bool:
    deadline = time.monotonic() + 120
    while time.monotonic() < deadline and proc.poll() is None:
        if _temporaries(folder):
            return True
        time.sleep(0.005)
    return False


@pytest.mark.parametrize("sig", [signal.SIGTERM, signal.SIGINT])
def test_sigterm_and_sigint_remove_the_temporary_file(tmp_path, sig):
    (tmp_path / "other.txt").write_text("unrelated")
    for _ in range(3):  # the write may finish before the signal lands; try again then
        proc = _start_slow_lut(tmp_path)
        seen = _wait_for_temporary(proc, tmp_path)
        if seen:
            proc.send_signal(sig)
        out, err = proc.communicate(timeout=120)
        if proc.returncode != 0:
            break
        (tmp_path / "big.exr").unlink()
    assert seen
    assert _temporaries(tmp_path) == []
    assert not (tmp_path / "big.exr").exists()
    assert (tmp_path / "other.txt").read_text() == "unrelated"
    assert "Traceback" not in err
    if sig == signal.SIGTERM:
        assert proc.returncode == 2 and _one_line_error(err) and "SIGTERM" in err
    else:
        assert proc.returncode == 130


def test_sigkill_leftover_is_removed_by_the_next_write(tmp_path):
    proc = _start_slow_lut(tmp_path)
    assert _wait_for_temporary(proc, tmp_path)
    proc.kill()
    proc.communicate(timeout=60)
    left = _temporaries(tmp_path)
    assert len(left) == 1 and TEMPORARY_NAME.match(left[0])
    assert f".starkiln-{proc.pid}-" in left[0]
    old = time.time() - 120  # older than a minute
    os.utime(tmp_path / left[0], (old, old))
    r = subprocess.run([sys.executable, "-m", "starkiln", "settings", "write", "s.toml"],
                       cwd=tmp_path, capture_output=True, text=True, timeout=60)
    assert r.returncode == 0, r.stderr
    assert _temporaries(tmp_path) == []
    assert sorted(p.name for p in tmp_path.iterdir()) == ["s.toml"]


def test_stale_cleanup_touches_nothing_else(tmp_path):
    old = time.time() - 3600
    dead = _dead_pid()
    keep = {
        f".a.png.starkiln-{os.getpid()}-abcd1234.tmp.png": "own process",
        f".b.png.starkiln-{os.getppid()}-abcd1234.tmp.png": "a live process",
        f".c.png.starkiln-{dead}-abcd12.tmp.png": "not the pattern (random part too short)",
        f".d.png.starkiln-{dead}-abcd1234.png": "not the pattern (no .tmp)",
        f"e.png.starkiln-{dead}-abcd1234.tmp.png": "not hidden",
        ".f.png.abcd1234.png": "an old-style name",
        "notes.txt": "the user's",
    }
    for name in keep:
        (tmp_path / name).write_text(name)
        os.utime(tmp_path / name, (old, old))
    young = tmp_path / f".g.png.starkiln-{dead}-abcd1234.tmp.png"
    young.write_text("young")
    folder = tmp_path / f".h.png.starkiln-{dead}-abcd1234.tmp.png"
    folder.mkdir()
    os.utime(folder, (old, old))
    stale = tmp_path / f".i.png.starkiln-{dead}-abcd1234.tmp.png"
    stale.write_text("stale")
    os.utime(stale, (old, old))
    removed = remove_stale_temporaries(tmp_path)
    assert removed == [stale]
    assert all((tmp_path / n).read_text() == n for n in keep)
    assert young.exists() and folder.is_dir()


def _dead_pid() -> int:
    p = subprocess.Popen([sys.executable, "-c", "pass"])
    p.wait()
    try:
        os.kill(p.pid, 0)
    except ProcessLookupError:
        return p.pid
    pytest.skip("the finished process's id was reused at once")


# -- 4. every settings field has an option; settings write round-trips ----------------------

#: Each field: an option spelling written here by hand (not read from the code) and a
#: non-default value; the expected Settings value is built by the Settings class itself.
EVERY_FIELD = {
    "observer": (["--observer", "cie1964"], "cie1964"),
    "scene_white": (["--white", "daylight:5500"], "daylight:5500"),
    "adaptation": (["--adaptation", "cat16"], "cat16"),
    "display": (["--display", "display-p3"], "display-p3"),
    "gamut": (["--gamut", "clip"], "clip"),
    "normalisation": (["--normalisation", "luminance"], "luminance"),
    "luminance_Y": (["--luminance-y", "0.25"], 0.25),
    "vision": (["--vision", "none"], "none"),
    "pupil_mm": (["--pupil-mm", "5.5"], 5.5),
    "aperture_mm": (["--aperture-mm", "200"], 200.0),
    "transmission": (["--transmission", "0.8"], 0.8),
    "blur_spot_arcmin": (["--blur-spot-arcmin", "3"], 3.0),
    "intensity_curve": (["--intensity-curve", "log"], "log"),
    "magnitude_bright": (["--magnitude-bright", "-2"], -2.0),
    "magnitude_faint": (["--magnitude-faint", "8"], 8.0),
    "night_tint": (["--night-tint", "0.4"], 0.4),
    "compensate": (["--compensate"], True),
    "dust_ebv": (["--ebv", "0.2"], 0.2),
    "dust_rv": (["--rv", "4.0"], 4.0),
    "dust_law": (["--dust-law", "F99"], "F99"),
    "altitude_deg": (["--altitude", "35"], 35.0),
    "site_height_m": (["--site-height", "1500"], 1500.0),
    "aerosol_tau550": (["--aerosol-tau", "0.12"], 0.12),
    "angstrom_exponent": (["--angstrom", "0.8"], 0.8),
    "ozone_du": (["--ozone", "280"], 280.0),
}


def test_every_settings_field_has_an_option_and_a_docs_line():
    fields = {f.name for f in dataclasses.fields(Settings)}
    assert set(EVERY_FIELD) == fields
    sub = build_parser()._subparsers._group_actions[0].choices["settings"]
    write = sub._subparsers._group_actions[0].choices["write"]
    options = {s for a in write._actions for s in a.option_strings}
    assert {v[0][0] for v in EVERY_FIELD.values()} <= options
    assert {"--naked-eye", "--no-compensate", "--no-atmosphere", "--av"} <= options
    docs = (ROOT / "docs" / "formats.md").read_text(encoding="utf-8")
    example = docs.split("## Settings files (TOML)", 1)[1].split("```toml", 1)[1].split("```")[0]
    keys = set(re.findall(r"^#?\s*([A-Za-z_][A-Za-z0-9_]*)\s*=", example, flags=re.M)) | {"display"}
    assert fields <= keys, fields - keys


def test_settings_write_round_trips_every_option(tmp_path, capsys):
    argv = [a for opt, _ in EVERY_FIELD.values() for a in opt]
    out = tmp_path / "all.toml"
    code, text, err = _run(["settings", "write", out, *argv], capsys)
    assert code == 0, err
    expected = Settings(**{k: v for k, (_, v) in EVERY_FIELD.items()})
    assert load_settings(out) == expected
    assert Settings() != expected  # every value above differs from the default
    for name in EVERY_FIELD:
        assert getattr(expected, name) != getattr(Settings(), name), name
    # 'show' prints the same settings back
    code, text, err = _run(["settings", "show", out], capsys)
    import tomllib
    assert code == 0 and Settings.from_dict(tomllib.loads(text)) == expected
    # the --force rule
    code, text, err = _run(["settings", "write", out], capsys)
    assert code == 2 and _one_line_error(err) and load_settings(out) == expected
    code, text, err = _run(["settings", "write", out, "--force"], capsys)
    assert code == 0 and load_settings(out) == Settings()


def test_optional_settings_can_be_switched_off(tmp_path, capsys):
    on = tmp_path / "on.toml"
    assert _run(["settings", "write", on, "--aperture-mm", "150", "--compensate"], capsys)[0] == 0
    off = tmp_path / "off.toml"
    code, _, err = _run(["settings", "write", off, "--settings", on, "--naked-eye",
                         "--no-compensate"], capsys)
    assert code == 0, err
    s = load_settings(off)
    assert s.aperture_mm is None and s.compensate is False
    assert load_settings(on).aperture_mm == 150.0 and load_settings(on).compensate is True


# -- 4. colour --magnitude shows both colours ------------------------------------------

def test_colour_with_magnitude_shows_full_and_night_colour(capsys):
    _, plain, _ = _run(["colour", "--temperature", "5800"], capsys)
    full_hex = re.search(r"^hex\s+(#[0-9a-f]{6})$", plain, re.M).group(1)
    code, text, err = _run(["colour", "--temperature", "5800", "--magnitude", "4"], capsys)
    assert code == 0, err
    full = re.search(r"^full colour\s+(#[0-9a-f]{6})", text, re.M)
    night = re.search(r"^at magnitude 4\s+(#[0-9a-f]{6})", text, re.M)
    assert full and night
    assert full.group(1) == full_hex
    # at magnitude 4 to the naked eye night vision takes most of the colour (CIE 191:2010
    # mesopic model; rods dominate): the night colour is nearer white than the full colour
    spread = lambda h: max(int(h[i:i + 2], 16) for i in (1, 3, 5)) - min(
        int(h[i:i + 2], 16) for i in (1, 3, 5))
    assert spread(night.group(1)) < spread(full.group(1))


def test_displays_points_at_a_real_heading(capsys):
    _, text, _ = _run(["displays"], capsys)
    m = re.search(r"see (docs/[a-z]+\.md), '([^']+)'", text)
    assert m, text
    doc = (ROOT / m.group(1)).read_text(encoding="utf-8")
    assert re.search(rf"^#+ {re.escape(m.group(2))}$", doc, re.M)


# -- 6. bad command lines: exit 2, one line, nothing else changed --------------------------

BAD_COMMAND_LINES = [
    "lut {d}/folder.png --force",
    "lut {d}/folder.png",
    "lut {d}/fifo.png --force",
    "lut {d}/plain/x.png",
    "lut {d}/plain/x.png --force",
    "palette {d}/folder.png --force",
    "palette {d}/fifo.png --force",
    "settings write {d}/existing.toml",
    "settings write {d}/folder.toml --force",
    "settings write {d}/fifo.toml --force",
    "settings write {d}/plain/s.toml",
    "settings write {d}/out.txt",
    "settings write {d}/s.toml --aperture-mm 10 --naked-eye",
    "settings write {d}/s.toml --luminance-y 0",
    "settings write {d}/s.toml --luminance-y 2",
    "settings write {d}/s.toml --luminance-y nan",
    "settings write {d}/s.toml --pupil-mm 0.5",
    "settings write {d}/s.toml --white nowhere",
    "settings write {d}/s.toml --display nosuch",
    "settings write {d}/s.toml --magnitude-bright 7 --magnitude-faint 6",
    "settings write {d}/s.toml --transmission 0",
    "settings write {d}/s.toml --settings {d}/bad.toml",
    "settings write {d}/s.toml --no-compensate=yes",
    "settings write",
    "settings frobnicate",
    "settings",
    "settings show",
    "settings show {d}/missing.toml",
    "settings show {d}/bad.toml",
    "settings show {d}/folder.toml",
    "settings show {d}/latin1.toml",
    "--screenshot {d}/existing.png",
    "--screenshot {d}/folder.png --force",
    "--screenshot {d}/fifo.png --force",
    "--force lut {d}/x.png",
    "--force",
    "colour --temperature 5800 --magnitude 4 --naked-eye --aperture-mm 100",
    "colour --temperature 5800 --luminance-y -1",
    "colour --temperature 5800 --compensate --naked-eye=1",
]


@pytest.fixture
def bad_input_folder(tmp_path):
    d = tmp_path
    (d / "folder.png").mkdir()
    (d / "folder.png" / "inside.txt").write_text("keep")
    (d / "folder.toml").mkdir()
    for name in ("fifo.png", "fifo.toml"):
        os.mkfifo(d / name)
    (d / "plain").write_text("a file, not a folder")
    (d / "existing.toml").write_text('observer = "cie1964"\n')
    (d / "existing.png").write_bytes(b"an earlier render")
    (d / "bad.toml").write_text("observer = [unclosed\n")
    (d / "latin1.toml").write_bytes('scene_white = "D65" # h\xf6hle\n'.encode("latin-1"))
    return d


def _snapshot(d: Path) -> dict:
    return {str(p.relative_to(d)): (p.read_bytes() if p.is_file() else p.is_dir())
            for p in sorted(d.rglob("*")) if not p.is_fifo()}


@pytest.mark.parametrize("line", BAD_COMMAND_LINES)
def test_bad_command_line_is_one_line_and_changes_nothing(line, bad_input_folder, capsys):
    before = _snapshot(bad_input_folder)
    code, out, err = _run(line.format(d=bad_input_folder).split(), capsys)
    assert code == 2, (line, out, err)
    assert _one_line_error(err), (line, err)
    assert _snapshot(bad_input_folder) == before


def test_folder_outputs_accept_a_folder_but_still_refuse_a_fifo(tmp_path):
    # --engine dask writes a folder of parts: there an existing folder is the output itself.
    out = tmp_path / "parts"
    out.mkdir()
    with pytest.raises(StarkilnError, match="--force"):
        check_writable(out, overwrite=False, folder_output=True)
    assert check_writable(out, overwrite=True, folder_output=True) == out
    with pytest.raises(StarkilnError, match="is a folder"):
        check_writable(out, overwrite=True)
    fifo = tmp_path / "pipe"
    os.mkfifo(fifo)
    with pytest.raises(StarkilnError, match="not a regular file"):
        check_writable(fifo, overwrite=True, folder_output=True)
