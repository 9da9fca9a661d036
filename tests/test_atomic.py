"""Atomic writes (starkiln.engine.atomic): the old file survives any failure; new files get ordinary modes.

Reference: POSIX rename(2) is atomic within one file system and open(2) creates files with
mode 0666 & ~umask (common practice for "ordinary" new files).
"""

import os

import pytest

from starkiln.engine.atomic import OutputExistsError, atomic_path, new_file_mode, write_atomic
from starkiln.engine.errors import StarkilnError
from starkiln.engine.pipeline.settings import Settings, load_settings, save_settings


def test_write_then_refuse_to_overwrite(tmp_path):
    p = tmp_path / "a.bin"
    write_atomic(p, b"one", overwrite=False)
    with pytest.raises(OutputExistsError, match="--force"):
        write_atomic(p, b"two", overwrite=False)
    assert p.read_bytes() == b"one"
    write_atomic(p, b"two", overwrite=True)
    assert p.read_bytes() == b"two"


def test_failure_mid_write_keeps_the_old_file_and_leaves_no_temporary(tmp_path):
    p = tmp_path / "keep.txt"
    p.write_bytes(b"old")
    with pytest.raises(RuntimeError):
        with atomic_path(p) as tmp:
            tmp.write_bytes(b"half")
            raise RuntimeError("interrupted")
    assert p.read_bytes() == b"old"
    assert sorted(x.name for x in tmp_path.iterdir()) == ["keep.txt"]


def test_new_files_get_the_ordinary_mode(tmp_path):
    # open(2): 0666 & ~umask; tempfile.mkstemp alone would give 0600.
    mask = os.umask(0o022)
    os.umask(mask)
    assert new_file_mode() == 0o666 & ~mask
    p = tmp_path / "s.toml"
    save_settings(Settings(), p)
    assert p.stat().st_mode & 0o777 == 0o666 & ~mask
    assert load_settings(p) == Settings()


def test_missing_folder_is_one_line(tmp_path):
    with pytest.raises(StarkilnError) as exc:
        write_atomic(tmp_path / "nope" / "x.bin", b"")
    assert "does not exist" in str(exc.value) and "\n" not in str(exc.value)
