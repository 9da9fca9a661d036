"""Atomic file writes: a temporary file in the destination folder, then a rename.

An interrupted write leaves either the old file or nothing, never a partial
file ([POSIX] ``rename`` is atomic within a file system; common practice).
"""

from __future__ import annotations

import os
import tempfile
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


def check_writable(path, overwrite: bool) -> Path:
    """Validate an output path before any work: folder exists and is writable, no clobbering."""
    path = Path(path)
    folder = path.parent if str(path.parent) else Path(".")
    if not folder.is_dir():
        raise StarkilnError(f"{path}: folder {str(folder)!r} does not exist")
    if not os.access(folder, os.W_OK):
        raise StarkilnError(f"{path}: folder {str(folder)!r} is not writable")
    if path.exists() and not overwrite:
        raise OutputExistsError(f"{path} exists; pass --force to overwrite it")
    return path


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
    fd, tmp = tempfile.mkstemp(dir=path.parent, prefix=f".{path.stem}.", suffix=path.suffix)
    os.close(fd)
    try:
        yield Path(tmp)
        _flush_to_disk(tmp)
        if path.exists() and not overwrite:
            raise OutputExistsError(f"{path} exists; pass --force to overwrite it")
        os.chmod(tmp, new_file_mode())
        os.replace(tmp, path)
    except BaseException:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        raise


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
