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


# --- the one writer: flush, folder creation, npz caches ------------------------------------

def test_atomic_path_flushes_the_file_before_renaming(tmp_path, monkeypatch):
    # POSIX fsync(2) before rename(2): the published file's data is on disk (common practice).
    import starkiln.engine.atomic as atomic

    order = []
    real_fsync, real_replace = os.fsync, os.replace
    monkeypatch.setattr(atomic.os, "fsync", lambda fd: (order.append("fsync"), real_fsync(fd)))
    monkeypatch.setattr(atomic.os, "replace",
                        lambda a, b: (order.append("replace"), real_replace(a, b)))
    write_atomic(tmp_path / "a.bin", b"payload")
    assert order == ["fsync", "replace"]
    assert (tmp_path / "a.bin").read_bytes() == b"payload"


def test_make_folder_creates_the_destination_folder(tmp_path):
    target = tmp_path / "cache" / "deeper" / "x.bin"
    with pytest.raises(StarkilnError, match="does not exist"):
        write_atomic(target, b"1")
    write_atomic(target, b"1", make_folder=True)
    assert target.read_bytes() == b"1"


def test_write_npz_atomic_round_trips_through_numpy(tmp_path):
    # numpy.load as the reference reader of the .npz archive (numpy.savez format).
    import numpy as np

    from starkiln.engine.atomic import write_npz_atomic

    path = tmp_path / "c" / "t.npz"
    arrays = {"a": np.arange(5.0), "b": np.eye(3, dtype=np.float32)}
    write_npz_atomic(path, arrays)
    with np.load(path) as data:
        assert sorted(data.files) == ["a", "b"]
        assert np.array_equal(data["a"], arrays["a"]) and data["b"].dtype == np.float32
    assert [p.name for p in path.parent.iterdir()] == ["t.npz"]  # no temporary file left


def test_write_npz_atomic_reports_an_unwritable_folder_as_os_error(tmp_path):
    # Caches fall back to memory on OSError; a folder that is not there must say so that way.
    import numpy as np

    from starkiln.engine.atomic import write_npz_atomic

    with pytest.raises(OSError):
        write_npz_atomic(tmp_path / "missing" / "t.npz", {"a": np.zeros(1)}, make_folder=False)


def test_cie_cache_uses_the_one_writer():
    import starkiln.engine.atomic as atomic
    import starkiln.engine.colour.cie_data as cie_data

    assert cie_data.write_npz_atomic is atomic.write_npz_atomic
