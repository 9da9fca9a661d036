"""Keeping a catalogue run away from files it must not touch.

- :func:`refuse_same_file`: the output may not be one of the inputs (the same file after
  symbolic and hard links, compared by ``st_dev``/``st_ino`` when both exist and by
  resolved paths otherwise), nor, for a folder of parts, hold an input.
- The folder of Parquet parts that ``--engine dask`` writes carries a mark, the manifest
  :data:`MANIFEST_NAME` (JSON: ``format``, ``version``, the ``parts`` written, the
  ``settings_digest`` of the run). :func:`check_replaceable` lets ``--force`` replace
  only a folder that carries the mark and holds nothing but the files it lists;
  :func:`remove_marked_folder` deletes exactly those files.
- :func:`folder_beside`: a new folder beside the output, made by ``mkdir`` so that it
  follows the process umask (``tempfile.mkdtemp`` makes 0700 folders).

References: POSIX ``stat`` (``st_dev``, ``st_ino`` identify a file), ``mkdir(2)`` (mode
0777 less the umask), ``rename(2)``; Python ``os.path.samefile``. The manifest format is
Starkiln's own.
"""

from __future__ import annotations

import hashlib
import json
import os
from pathlib import Path

from starkiln.engine.errors import StarkilnError

#: The file that marks a folder of parts as written by Starkiln.
MANIFEST_NAME = ".starkiln-parts.json"
#: ``format`` entry of the manifest.
MANIFEST_FORMAT = "starkiln-catalogue-parts"
#: Version of the manifest's layout.
MANIFEST_VERSION = 1


def _identity(path: Path):
    try:
        st = os.stat(path)
    except OSError:
        return None
    return st.st_dev, st.st_ino


def _resolved(path) -> Path:
    return Path(os.path.realpath(os.path.abspath(str(path))))


def same_file(a, b) -> bool:
    """True when paths ``a`` and ``b`` name the same file or folder.

    Parameters
    ----------
    a, b : path

    Returns
    -------
    bool
        Same ``(st_dev, st_ino)`` when both exist (hard links, symbolic links), else the
        same path once symbolic links are resolved.

    References
    ----------
    POSIX ``stat``; Python ``os.path.realpath``.
    """
    ia, ib = _identity(Path(a)), _identity(Path(b))
    if ia is not None and ib is not None:
        return ia == ib
    return _resolved(a) == _resolved(b)


def _inside(path, folder) -> bool:
    p, f = _resolved(path), _resolved(folder)
    return f == p or f in p.parents


def refuse_same_file(inputs, output, folder_output: bool = False) -> None:
    """Raise a one-line error when the output would overwrite or hold an input.

    Parameters
    ----------
    inputs : list of path
        The input files.
    output : path
        The output file, or the output folder when ``folder_output``.
    folder_output : bool
        The output is a folder of parts (``--engine dask``): an input inside it is refused.

    Raises
    ------
    starkiln.engine.errors.StarkilnError
        ``OUT is the input IN`` or ``IN lies inside the output folder OUT``.
    """
    inside = set()
    if folder_output:  # hard links to an input, anywhere in the output folder
        inside = {_identity(p) for p in _walk_files(Path(output))} - {None}
    for f in inputs:
        if same_file(f, output):
            raise StarkilnError(f"{output} is the input {f}; accepted: an output path that is "
                                "not one of the inputs")
        if folder_output and (_inside(f, output) or _identity(Path(f)) in inside):
            raise StarkilnError(f"{f} lies inside the output folder {output}; accepted: an "
                                "output folder that holds no input")


def _walk_files(folder: Path):
    if not folder.is_dir() or folder.is_symlink():
        return
    for root, dirs, files in os.walk(folder):
        for name in files:
            yield Path(root) / name


def settings_digest(plan) -> str:
    """A short SHA-256 digest of a plan's settings and columns (what the parts depend on).

    Parameters
    ----------
    plan : starkiln.engine.catalogue.plan.CataloguePlan

    Returns
    -------
    str
        32 hexadecimal digits.

    References
    ----------
    FIPS 180-4 (SHA-256), through Python ``hashlib``.
    """
    data = {"settings": plan.settings.to_dict(), "source": plan.source,
            "source_column": plan.source_column, "magnitude_column": plan.magnitude_column,
            "magnitude_band": plan.magnitude_band, "bp_rp_column": plan.bp_rp_column,
            "magnitude": plan.magnitude, "extrapolate_bp_rp": plan.extrapolate_bp_rp,
            "exact": plan.exact, "prefix": plan.prefix}
    text = json.dumps(data, sort_keys=True, default=str)
    return hashlib.sha256(text.encode()).hexdigest()[:32]


def write_manifest(folder: Path, parts: list[str], plan) -> None:
    """Write :data:`MANIFEST_NAME` into ``folder``: the mark of a Starkiln folder of parts.

    Parameters
    ----------
    folder : Path
        The (temporary) folder the parts were written into.
    parts : list of str
        File names of the parts, in order.
    plan : CataloguePlan
        The run's plan (its digest goes into the manifest).
    """
    body = {"format": MANIFEST_FORMAT, "version": MANIFEST_VERSION, "parts": list(parts),
            "settings_digest": settings_digest(plan)}
    with open(folder / MANIFEST_NAME, "w", encoding="utf-8") as fh:
        json.dump(body, fh, indent=1)
        fh.write("\n")
        fh.flush()
        os.fsync(fh.fileno())


def _listed_files(folder: Path) -> list[str]:
    """The part names a folder's manifest lists; a one-line error when it has no valid one."""
    mark = folder / MANIFEST_NAME
    if not mark.is_file() or mark.is_symlink():
        raise StarkilnError(f"{folder} exists and is not a Starkiln output folder (no "
                            f"{MANIFEST_NAME}); accepted with --force: a folder an earlier "
                            "--engine dask run wrote")
    try:
        with open(mark, encoding="utf-8") as fh:
            body = json.load(fh)
        parts = body["parts"]
        ok = (body.get("format") == MANIFEST_FORMAT and isinstance(parts, list)
              and all(isinstance(p, str) and p and "/" not in p and p not in (".", "..")
                      for p in parts))
    except (OSError, ValueError, KeyError, TypeError, AttributeError):
        ok = False
    if not ok:
        raise StarkilnError(f"{mark}: not a Starkiln manifest; accepted with --force: a "
                            "folder an earlier --engine dask run wrote")
    return parts


def check_replaceable(folder: Path) -> list[str]:
    """Check that ``--force`` may replace ``folder``; return the files to delete.

    Parameters
    ----------
    folder : Path
        An existing output folder.

    Returns
    -------
    list of str
        The names of the files in it (the manifest and the parts it lists).

    Raises
    ------
    starkiln.engine.errors.StarkilnError
        No manifest, or a file or folder the manifest does not list (the first one, in
        sorted order, is named).
    """
    parts = _listed_files(folder)
    allowed = set(parts) | {MANIFEST_NAME}
    for entry in sorted(os.scandir(folder), key=lambda e: e.name):
        if entry.name not in allowed or not entry.is_file(follow_symlinks=False):
            raise StarkilnError(f"{folder} holds {entry.name!r}, which no Starkiln run wrote "
                                "there; accepted with --force: a folder holding only the "
                                f"files its {MANIFEST_NAME} lists")
    return [name for name in [*parts, MANIFEST_NAME] if (folder / name).exists()]


def remove_marked_folder(folder: Path, names: list[str]) -> None:
    """Delete the listed files of a checked folder, then the (now empty) folder itself.

    Parameters
    ----------
    folder : Path
        A folder :func:`check_replaceable` accepted (after it was moved aside).
    names : list of str
        The names :func:`check_replaceable` returned. Anything else stays, with the folder.
    """
    for name in names:
        try:
            os.unlink(folder / name)
        except FileNotFoundError:
            pass
    try:
        os.rmdir(folder)
    except OSError:
        pass


def folder_beside(output: Path, tag: str = "new") -> Path:
    """Make a new, empty, hidden folder beside ``output`` with ``mkdir`` (mode 0777 less the
    process umask, as any folder the user makes; ``tempfile.mkdtemp`` would make it 0700).

    Parameters
    ----------
    output : Path
        The output folder the new one will replace (or become).
    tag : str
        Word in the hidden name (``new``, ``old``).

    Returns
    -------
    Path
        ``.NAME.TAG.RANDOM`` in the output's parent folder.

    References
    ----------
    POSIX ``mkdir(2)``; Python ``secrets.token_hex``.
    """
    import secrets

    parent = output.parent if str(output.parent) else Path(".")
    for _ in range(100):
        path = parent / f".{output.name}.{tag}.{secrets.token_hex(6)}"
        try:
            os.mkdir(path)
        except FileExistsError:
            continue
        return path
    raise StarkilnError(f"{parent}: cannot make a temporary folder beside {output.name}")
