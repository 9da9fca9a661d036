"""Atomic file writes: a temporary file in the destination folder, then a rename.

An interrupted write leaves either the old file or nothing, never a partial
file ([POSIX] ``rename`` is atomic within a file system; common practice). The temporary
file's name carries its owner's process id (:data:`TEMPORARY_NAME`), so one left by a
killed run is removed by the next write into the same folder
(:func:`remove_stale_temporaries`).
"""

from __future__ import annotations

import errno
import os
import re
import stat
import tempfile
import time
from contextlib import contextmanager
from pathlib import Path

from starkiln.engine.errors import StarkilnError


class OutputExistsError(StarkilnError):
    """The output file exists and overwriting was not asked for."""


def format_for_extension(path, formats: dict[str, str], kind: str) -> str:
    """The format a file's extension names, from ``formats`` (``{".png": "png", ...}``).

    Raises a one-line :class:`StarkilnError` naming the extension and those accepted.
    """
    suffix = Path(path).suffix.lower()
    if suffix not in formats:
        raise StarkilnError(f"{path}: unknown {kind} extension {suffix or '(none)'!r}; "
                            f"accepted: {', '.join(formats)}")
    return formats[suffix]


def check_writable(path, overwrite: bool, folder_output: bool = False) -> Path:
    """Validate an output path before any work; every refusal names the path as given.

    Accepted: a path to a regular file (existing only with ``overwrite``) in an existing,
    writable folder; with ``folder_output`` (an output that is itself a folder, such as a
    partitioned dataset) an existing folder in its place instead. Refused: a folder (unless
    ``folder_output``), a FIFO, device or socket, a path whose parent is a file, a missing or
    read-only folder.
    """
    path = Path(path)
    folder = path.parent if str(path.parent) else Path(".")
    if path.is_dir() and not folder_output:
        raise StarkilnError(f"{path} is a folder; accepted: a file path, such as "
                            f"{str(path / ('NAME' + (path.suffix or '.ext')))!r}")
    if path.exists() and not path.is_file() and not (folder_output and path.is_dir()):
        raise StarkilnError(f"{path} is not a regular file (a FIFO, device or socket); "
                            "accepted: a path to a regular file")
    if folder.exists() and not folder.is_dir():
        raise StarkilnError(f"{path}: {str(folder)!r} is a file, not a folder; accepted: "
                            "a path inside an existing folder")
    if not folder.is_dir():
        raise StarkilnError(f"{path}: folder {str(folder)!r} does not exist")
    if not os.access(folder, os.W_OK):
        raise StarkilnError(f"{path}: folder {str(folder)!r} is not writable")
    if path.exists() and not overwrite:
        raise OutputExistsError(f"{path} exists; pass --force to overwrite it")
    return path


#: Temporary files: ``.NAME.starkiln-PID-RANDOM.tmp.EXT`` (the extension kept for writers
#: that pick a format by it; RANDOM is ``tempfile``'s eight characters).
TEMPORARY_NAME = re.compile(r"^\..+\.starkiln-(?P<pid>[0-9]+)-[a-z0-9_]{8}\.tmp(\.[^./]*)?$")
#: A temporary file younger than this is never removed, whoever owned it (seconds).
STALE_AFTER_S = 60.0


def _process_gone(pid: int) -> bool:
    """True only when no process ``pid`` exists (``kill(pid, 0)`` fails with ESRCH; POSIX kill(2))."""
    if pid <= 0 or pid == os.getpid():
        return False
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return True
    except (OSError, OverflowError, ValueError):  # another user's process, or not checkable
        return False
    return False


def remove_stale_temporaries(folder, now: float | None = None,
                             folders: bool = False) -> list[Path]:
    """Remove temporary files a killed Starkiln left in ``folder``; return what was removed.

    Only regular files whose name matches :data:`TEMPORARY_NAME`, whose owner process no
    longer runs and that are older than :data:`STALE_AFTER_S` are removed; nothing else is
    touched, and a file that cannot be removed is left alone. With ``folders``, a folder so
    named (an output that is itself a folder, built under a temporary name) is removed with
    what it holds, on the same conditions.

    References
    ----------
    POSIX ``kill(2)`` with signal 0 (existence check; common practice).
    """
    now = time.time() if now is None else now
    removed = []
    try:
        entries = list(os.scandir(folder))
    except OSError:
        return removed
    for entry in entries:
        m = TEMPORARY_NAME.match(entry.name)
        if m is None:
            continue
        try:
            info = entry.stat(follow_symlinks=False)
            is_folder = folders and stat.S_ISDIR(info.st_mode)
            if ((not stat.S_ISREG(info.st_mode) and not is_folder)
                    or now - info.st_mtime < STALE_AFTER_S or not _process_gone(int(m["pid"]))):
                continue
            if is_folder:
                import shutil

                shutil.rmtree(entry.path)
            else:
                os.unlink(entry.path)
            removed.append(Path(entry.path))
        except OSError:
            continue
    return removed


def new_file_mode() -> int:
    """The mode an ordinary new file gets here: 0666 less the process umask (POSIX open(2)).

    ``tempfile.mkstemp`` creates files readable by their owner only; a finished export must be
    as readable as any file the user saves. The umask is read from /proc where Linux offers it,
    so it is never changed, even for a moment, in a threaded program.
    """
    try:
        with open("/proc/self/status", encoding="ascii") as fh:
            for line in fh:
                if line.startswith("Umask:"):
                    return 0o666 & ~int(line.split()[1], 8)
    except (OSError, ValueError):
        pass
    mask = os.umask(0o022)
    os.umask(mask)
    return 0o666 & ~mask


def _flush_to_disk(path) -> None:
    """fsync a finished file, so the rename never publishes a file whose data is still in flight."""
    fd = os.open(path, os.O_RDONLY)
    try:
        os.fsync(fd)
    finally:
        os.close(fd)


@contextmanager
def atomic_path(path, overwrite: bool = True, make_folder: bool = False):
    """Yield a temporary path beside ``path``; on success flush it to disk and rename it over ``path``.

    The temporary name keeps the extension, so writers that pick a format by
    extension still work. On any exception the temporary file is removed. The
    writer inside only writes; this function owns the flush, the mode
    (:func:`new_file_mode`) and the rename.

    Parameters
    ----------
    path : path-like
        The destination.
    overwrite : bool
        Replace an existing file (otherwise :class:`OutputExistsError`, old file untouched).
    make_folder : bool
        Create the destination folder first (caches); exports never do.

    References
    ----------
    POSIX ``rename(2)`` (atomic within a file system) and ``fsync(2)`` (common practice).
    """
    if make_folder:
        Path(path).parent.mkdir(parents=True, exist_ok=True)
    path = check_writable(path, overwrite)
    remove_stale_temporaries(path.parent)
    try:
        fd, tmp = tempfile.mkstemp(dir=path.parent, prefix=f".{path.name}.starkiln-{os.getpid()}-",
                                   suffix=f".tmp{path.suffix}")
    except OSError as exc:  # a pseudo file system (/proc, /sys) can pass os.access and still refuse
        raise OSError(exc.errno or errno.EIO, exc.strerror or str(exc), str(path)) from None
    os.close(fd)
    try:
        yield Path(tmp)
        _flush_to_disk(tmp)
        if path.exists() and not overwrite:
            raise OutputExistsError(f"{path} exists; pass --force to overwrite it")
        os.chmod(tmp, new_file_mode())
        os.replace(tmp, path)
    except BaseException as exc:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        if isinstance(exc, OSError):
            raise _about_destination(exc, path, tmp) from None
        raise


def _about_destination(exc: OSError, path: Path, tmp) -> OSError:
    """The same error, naming the user's ``path`` instead of the hidden temporary file."""
    if exc.filename is not None and str(exc.filename) not in (str(tmp), str(path.parent)):
        return exc  # about another file (an input, say): keep it
    return OSError(exc.errno or errno.EIO, exc.strerror or str(exc), str(path))


def write_atomic(path, data: bytes, overwrite: bool = True, make_folder: bool = False) -> None:
    """Write ``data`` to ``path`` atomically (see the module docstring and :func:`atomic_path`)."""
    with atomic_path(path, overwrite, make_folder) as tmp:
        with open(tmp, "wb") as fh:
            fh.write(data)


def write_npz_atomic(path, arrays: dict, make_folder: bool = True) -> None:
    """Save numpy arrays as an uncompressed ``.npz`` archive atomically (:func:`atomic_path`).

    For caches: the folder is created, an existing file is replaced, and a folder that cannot
    be written raises :class:`OSError` (``PermissionError``) like any other I/O failure, so a
    cache can fall back to memory with one ``except OSError``.

    References
    ----------
    ``numpy.savez`` (a ZIP archive of ``.npy`` files; numpy NEP 1).
    """
    import numpy as np

    folder = Path(path).parent
    if make_folder:
        folder.mkdir(parents=True, exist_ok=True)
    if not os.access(folder, os.W_OK):
        raise PermissionError(f"{path}: folder {str(folder)!r} is not writable")
    with atomic_path(path, True) as tmp:
        with open(tmp, "wb") as fh:
            np.savez(fh, **arrays)
