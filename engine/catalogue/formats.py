"""Catalogue files: formats by extension, input files and globs, astropy readers and writers.

Formats go by extension (:data:`FORMATS`). CSV (small files), ECSV, FITS and
VOTable are read and written whole through astropy (``astropy.table``,
:func:`read_astropy`, :func:`write_astropy`); Parquet, and large CSV files, are
streamed through pyarrow (:mod:`starkiln.engine.catalogue.streaming`).
:func:`arrow_to_astropy` and :func:`astropy_to_arrow` carry a table between
the two (nulls <-> masked entries). :func:`first_line` gives the one line of a
reader's error that goes into Starkiln's one-line messages.

References: [Astropy2022] documentation, "Unified file read/write interface"
(``Table.read``/``Table.write`` formats ``ascii.csv``, ``ascii.ecsv``, ``fits``,
``votable``, ``parquet``); [ApacheArrow] documentation, "Reading and writing
the Apache Parquet format".
"""

from __future__ import annotations

import glob as _glob
import os
import re
import sys
from contextlib import contextmanager
from pathlib import Path

import numpy as np

from starkiln.engine.errors import StarkilnError

#: File extensions -> format names.
FORMATS = {
    ".csv": "csv", ".ecsv": "ecsv", ".fits": "fits", ".fit": "fits", ".fts": "fits",
    ".vot": "votable", ".votable": "votable", ".xml": "votable",
    ".parquet": "parquet", ".pq": "parquet",
}
_ASTROPY_FORMATS = {"csv": "ascii.csv", "ecsv": "ascii.ecsv", "fits": "fits",
                    "votable": "votable", "parquet": "parquet"}


def format_of(path, what: str = "file") -> str:
    """Format name (:data:`FORMATS`) from a file's extension.

    Parameters
    ----------
    path : path
        The file.
    what : str
        Its role (``input``, ``output``), named in the error message.

    Returns
    -------
    str
        ``csv``, ``ecsv``, ``fits``, ``votable`` or ``parquet``.

    Raises
    ------
    starkiln.engine.errors.StarkilnError
        One line naming the extension and those accepted.
    """
    from starkiln.engine.atomic import format_for_extension

    return format_for_extension(path, FORMATS, f"catalogue {what}")


def _natural_key(text: str):
    return [int(t) if t.isdigit() else t for t in re.split(r"(\d+)", text)]


def input_files(spec) -> list[Path]:
    """A single file, every ``*.parquet`` file in a folder, or the files a glob matches.

    Parameters
    ----------
    spec : path or str
        A file, a folder (its ``.parquet``/``.pq`` files not starting with ``.`` or
        ``_``), or a glob pattern (``*``, ``?``, ``[``).

    Returns
    -------
    list of Path
        Files of a folder or glob in natural order (``part.2`` before ``part.10``).

    Raises
    ------
    starkiln.engine.errors.StarkilnError
        No such file, nothing matches, an empty folder, or an unreadable file.

    References
    ----------
    Python ``glob.glob``; natural sort order (common practice).
    """
    text = str(spec)
    p = Path(text)
    if p.is_dir():
        files = sorted((f for f in p.iterdir() if f.suffix.lower() in (".parquet", ".pq")
                        and not f.name.startswith((".", "_"))), key=lambda f: _natural_key(f.name))
        if not files:
            raise StarkilnError(f"{spec}: folder holds no .parquet files")
        return files
    if any(ch in text for ch in "*?["):
        files = sorted((Path(f) for f in _glob.glob(text) if Path(f).is_file()),
                       key=lambda f: _natural_key(str(f)))
        if not files:
            raise StarkilnError(f"{spec}: no file matches this pattern")
        return files
    if not p.exists():
        raise StarkilnError(f"{spec}: no such file")
    if not p.is_file():
        raise StarkilnError(f"{spec}: not a regular file")
    if not os.access(p, os.R_OK):
        raise StarkilnError(f"{spec}: file is not readable")
    return [p]


@contextmanager
def astropy_guard():
    """Hide a stand-in ``matplotlib`` module from astropy while astropy runs.

    colour-science (used once by :mod:`starkiln.engine.colour.cie_data` to build its cache) puts a
    stand-in object into ``sys.modules["matplotlib"]`` when matplotlib is not
    installed; astropy's optional-dependency probe (``importlib.util.find_spec``)
    fails on it with "matplotlib.__spec__ is not set". The stand-in is put back after.
    """
    mpl = sys.modules.get("matplotlib")
    hidden = mpl is not None and getattr(mpl, "__spec__", None) is None
    if hidden:
        del sys.modules["matplotlib"]
    try:
        yield
    finally:
        if hidden and "matplotlib" not in sys.modules:
            sys.modules["matplotlib"] = mpl


def first_line(exc: BaseException) -> str:
    """The first line of an exception's message (or its type's name when it has none).

    Readers (pyarrow, astropy, Dask) raise long, many-line messages; Starkiln's errors
    are one line naming the value and what is accepted, with this line in brackets.
    """
    text = str(exc).strip().splitlines()
    line = text[0] if text else type(exc).__name__
    # Readers quote the bytes they choked on: keep the line printable and short.
    line = "".join(c if c.isprintable() else "?" for c in line)
    return line if len(line) <= 160 else line[:157] + "..."


def arrow_to_astropy(table):
    """A pyarrow Table as an astropy Table (nulls become masked entries).

    Parameters
    ----------
    table : pyarrow.Table

    Returns
    -------
    astropy.table.Table
        One ``Column`` per column, ``MaskedColumn`` where the column has nulls; dictionary
        columns are decoded to their values.

    References
    ----------
    astropy documentation, ``astropy.table.MaskedColumn``; Apache Arrow ``Array.to_numpy``.
    """
    with astropy_guard():
        return _arrow_to_astropy(table)


def _arrow_to_astropy(table):
    import pyarrow as pa
    from astropy.table import Column, MaskedColumn, Table

    check_astropy_names(table.column_names)
    cols = []
    for index, name in enumerate(table.column_names):
        arr = table.column(index).combine_chunks()
        if pa.types.is_dictionary(arr.type):
            arr = arr.cast(arr.type.value_type)
        mask = None
        if arr.null_count:
            mask = np.asarray(arr.is_null().to_numpy(zero_copy_only=False), dtype=bool)
            fill = ("" if pa.types.is_string(arr.type) or pa.types.is_large_string(arr.type)
                    else False if pa.types.is_boolean(arr.type) else 0)
            try:
                arr = arr.fill_null(fill)
            except (pa.ArrowInvalid, pa.ArrowNotImplementedError, TypeError):
                pass
        data = arr.to_numpy(zero_copy_only=False)
        if data.dtype == object and (pa.types.is_string(arr.type)
                                     or pa.types.is_large_string(arr.type)):
            data = data.astype(str)
        cols.append(MaskedColumn(data, name=name, mask=mask) if mask is not None
                    else Column(data, name=name))
    return Table(cols, meta={})


def astropy_to_arrow(table):
    """An astropy Table as a pyarrow Table (masked entries become nulls; units are dropped).

    Parameters
    ----------
    table : astropy.table.Table

    Returns
    -------
    pyarrow.Table
        Native byte order (FITS is big-endian), UTF-8 text, fixed-size lists for
        multi-dimensional cells.

    References
    ----------
    Apache Arrow ``pyarrow.array``, ``FixedSizeListArray``.
    """
    import pyarrow as pa

    arrays, names = [], []
    for name in table.colnames:
        col = table[name]
        data = np.asarray(np.ma.getdata(col))
        mask = np.ma.getmaskarray(col) if hasattr(col, "mask") else None
        if mask is not None and mask.ndim > 1:
            mask = mask.reshape(len(col), -1).all(axis=1)
        if mask is not None and not mask.any():
            mask = None
        if data.dtype.kind == "S":
            data = np.char.decode(data, "utf-8", errors="replace")
        if data.dtype.byteorder not in ("=", "|"):  # FITS is big-endian
            data = data.astype(data.dtype.newbyteorder("="))
        if data.ndim > 1:
            flat = pa.array(data.reshape(-1))
            arr = pa.FixedSizeListArray.from_arrays(flat, int(np.prod(data.shape[1:])))
            if mask is not None:
                arr = pa.array(arr.to_pylist(), type=arr.type, mask=mask)
        else:
            arr = pa.array(data, mask=mask)
        arrays.append(arr)
        names.append(name)
    return pa.Table.from_arrays(arrays, names=names)


def read_astropy(path: Path, fmt: str):
    """Read a whole catalogue file with astropy (``astropy.table.Table.read``).

    Parameters
    ----------
    path : Path
        The file.
    fmt : str
        Its format name (:func:`format_of`).

    Returns
    -------
    astropy.table.Table

    Raises
    ------
    starkiln.engine.errors.StarkilnError
        One line: the file, the format and the reader's first line.
    """
    import warnings

    try:
        with warnings.catch_warnings(record=True) as caught, astropy_guard():
            warnings.simplefilter("always")
            from astropy.table import Table

            if fmt == "votable":  # the names as written (Table.read renames repeats)
                from astropy.io.votable import parse

                vot = parse(str(path)).get_first_table()
                names = [f.name for f in vot.fields]
                table = vot.to_table(use_names_over_ids=True)
            else:
                table = Table.read(str(path), format=_ASTROPY_FORMATS[fmt])
                names = _ecsv_names(path) if fmt == "ecsv" else list(table.colnames)
        cut = [w for w in caught if "truncated" in str(w.message)]
        if cut:  # astropy reads what is there of a cut FITS file and only warns
            raise StarkilnError(f"{path}: cannot read as {fmt.upper()} (the file is cut "
                                f"short: {first_line(cut[0].message)})")
    except StarkilnError:
        raise
    except Exception as exc:  # astropy raises many kinds for unreadable files
        raise StarkilnError(f"{path}: cannot read as {fmt.upper()} ({first_line(exc)})") from None
    check_astropy_names(names, str(path))
    if list(table.colnames) != names:  # astropy renamed a column some other way
        raise StarkilnError(f"{path}: column names {names} would be read as "
                            f"{list(table.colnames)}; accepted: unique names")
    return table


def _ecsv_names(path: Path) -> list[str]:
    """The column names an ECSV header declares (its YAML ``datatype`` list)."""
    import yaml

    lines = []
    with open(path, encoding="utf-8") as fh:
        for line in fh:
            if not line.startswith("#"):
                break
            lines.append(line[1:].removeprefix(" "))
    text = "".join(lines)
    header = yaml.safe_load(text.split("---", 1)[1]) if "---" in text else None
    return [str(d["name"]) for d in header["datatype"]]


def check_astropy_names(names, where: str = "table", fmt: str | None = None) -> None:
    """Refuse column names astropy would change: repeated or empty names (astropy renames a
    repeated name to ``NAME_1``/``NAME_2``, and cannot write an empty one).

    Parameters
    ----------
    names : list of str
        Column names, in order.
    where : str
        What to name in the message (the input file).
    fmt : str, optional
        The output format, named in the message.

    Raises
    ------
    starkiln.engine.errors.StarkilnError
        One line naming the repeated or empty names.
    """
    seen, repeated = set(), []
    for n in names:
        if n in seen and n not in repeated:
            repeated.append(n)
        seen.add(n)
    empty = [i + 1 for i, n in enumerate(names) if not str(n).strip()]
    if not repeated and not empty:
        return
    into = f" into {fmt.upper()}" if fmt else ""
    what = []
    if repeated:
        what.append("repeated column name(s) " + ", ".join(repr(n) for n in repeated))
    if empty:
        what.append("empty column name(s) at position(s) " + ", ".join(map(str, empty)))
    raise StarkilnError(f"{where}: {'; '.join(what)} cannot be carried{into} unchanged; "
                        "accepted: unique, non-empty names (CSV and Parquet output keep them)")


def write_astropy(table, tmp: Path, fmt: str) -> None:
    """Write an astropy Table in format ``fmt`` (astropy ``Table.write``; warnings silenced).

    Parameters
    ----------
    table : astropy.table.Table
    tmp : Path
        A temporary path from :func:`starkiln.engine.atomic.atomic_path` (renamed over the
        output when the run succeeds).
    fmt : str
        Format name (:func:`format_of`).
    """
    import warnings

    with warnings.catch_warnings(), astropy_guard():
        warnings.simplefilter("ignore")
        try:
            table.write(str(tmp), format=_ASTROPY_FORMATS[fmt], overwrite=True)
        except UnicodeEncodeError:  # FITS holds ASCII text only (FITS Standard 4.0, 7.3.3)
            raise StarkilnError(f"a text column holds characters that are not ASCII, and "
                                f"{fmt.upper()} text is ASCII only; accepted: ASCII text, or "
                                "another output format (CSV, ECSV, VOTable, Parquet)") from None
