"""Atomic file writes: a temporary file in the destination folder, then a rename.

An interrupted write leaves either the old file or nothing, never a partial
file (POSIX ``rename`` is atomic within a file system; common practice).
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


@contextmanager
def atomic_path(path, overwrite: bool = True):
    """Yield a temporary path beside ``path``; on success rename it over ``path``.

    The temporary name keeps the extension, so writers that pick a format by
    extension still work. On any exception the temporary file is removed.
    """
    path = check_writable(path, overwrite)
    fd, tmp = tempfile.mkstemp(dir=path.parent, prefix=f".{path.stem}.", suffix=path.suffix)
    os.close(fd)
    try:
        yield Path(tmp)
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


def write_atomic(path, data: bytes, overwrite: bool = True) -> None:
    """Write ``data`` to ``path`` atomically (see the module docstring)."""
    with atomic_path(path, overwrite) as tmp:
        with open(tmp, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
