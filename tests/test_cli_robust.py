"""The command line never ends in a traceback: closed pipes, full disks, folders as outputs,
options in the wrong place. Each case exits 2 (bad input) with one line on stderr, or 0 and
quietly where the reader of standard output went away (Python documentation, "Note on
SIGPIPE"; common practice for command-line tools in a pipeline).
"""

from __future__ import annotations

import errno
import os
import subprocess
import sys
from pathlib import Path

import pytest

from starkiln.cli.main import main

ROOT = Path(__file__).resolve().parent.parent
STARKILN = f"{sys.executable} -m starkiln"


def _shell(cmd, cwd):
    return subprocess.run(["bash", "-c", cmd], cwd=cwd, capture_output=True, text=True,
                          timeout=120)


def _one_line_error(stderr: str) -> bool:
    lines = stderr.strip().splitlines()
    return len(lines) == 1 and lines[0].startswith("starkiln: error: ") and "Traceback" not in stderr


def test_broken_pipe_ends_quietly(tmp_path):
    r = _shell(f"set -o pipefail; {STARKILN} whites | head -c1 >/dev/null", tmp_path)
    assert r.returncode == 0, r.stderr
    assert r.stderr == ""


def test_closed_stdout_is_one_line(tmp_path):
    r = _shell(f"{STARKILN} whites >&-", tmp_path)
    assert r.returncode == 2
    assert _one_line_error(r.stderr), r.stderr
    assert "standard output" in r.stderr


@pytest.mark.parametrize("flag", ["-V", "--version"])
def test_version_flags(flag, capsys):
    with pytest.raises(SystemExit) as exc:
        main([flag])
    assert exc.value.code == 0
    assert capsys.readouterr().out.startswith("starkiln ")


@pytest.mark.parametrize("argv", [
    ["--screenshot", "x.png", "colour", "--temperature", "5000"],
    ["--settings", "x.toml", "whites"],
    ["--temperature", "5000", "displays"],
])
def test_window_options_with_a_command_are_an_error(argv, capsys, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    assert main(argv) == 2
    err = capsys.readouterr().err
    assert _one_line_error(err) and "window" in err
    assert not (tmp_path / "x.png").exists()


def test_output_that_is_a_folder(tmp_path, capsys):
    folder = tmp_path / "strip.png"
    folder.mkdir()
    (folder / "keep.txt").write_text("mine")
    assert main(["lut", str(folder), "--size", "16x1", "--force"]) == 2
    err = capsys.readouterr().err
    assert _one_line_error(err)
    assert (folder / "keep.txt").read_text() == "mine"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["strip.png"]  # no temporary left


def test_full_disk_leaves_the_old_file_and_no_temporary(tmp_path, capsys, monkeypatch):
    import starkiln.engine.exports.image_files as image_files

    out = tmp_path / "strip.png"
    out.write_bytes(b"the earlier render")

    def full(path, *a, **k):
        Path(path).write_bytes(b"half")
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC), str(path))

    monkeypatch.setattr(image_files, "write_png", full)
    assert main(["lut", str(out), "--size", "16x1", "--force"]) == 2
    err = capsys.readouterr().err
    assert _one_line_error(err) and "space" in err
    assert out.read_bytes() == b"the earlier render"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["strip.png"]


def test_deeply_nested_profile_is_one_line(tmp_path, capsys):
    deep = tmp_path / "deep.json"
    deep.write_text("[" * 100_000)
    assert main(["colour", "--temperature", "5000", "--display", str(deep)]) == 2
    assert _one_line_error(capsys.readouterr().err)
