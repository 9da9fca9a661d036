"""Catalogue columns: cells to numbers, schema checks and the status column.

Every column a plan reads becomes ``(float64 values, missing mask or None)``,
whatever the file held:

- numbers pass through (nulls or masked entries are *missing*, NaN stays NaN);
- text is parsed by :func:`parse_number_text`, the one text-to-number parser of
  the catalogue: blank cells are *missing*, other text that is not a number is
  NaN (status ``not-a-number``).

Numbers are read by Arrow's string-to-double cast (Apache Arrow compute
documentation, ``cast``), leading and trailing white space ignored; in a column
that also holds other text, the cells that match :data:`NUMBER_PATTERN`
(decimal and exponent forms, ``nan``, ``inf``, ``infinity``, any case,
optional sign) are read and the others become NaN. :func:`output_schema` and :func:`check_columns` turn a missing
column, a clashing output name or a column type that holds no numbers into a
one-line error before any row is read.
"""

from __future__ import annotations

import numpy as np

from starkiln.engine.catalogue.plan import STATUSES, CataloguePlan
from starkiln.engine.errors import StarkilnError

#: A number as Arrow's string-to-double cast accepts it; used to blank out the cells that
#: are not numbers when the cast of a whole column fails.
NUMBER_PATTERN = r"^[+-]?(?:(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?|nan|inf|infinity)$"


def parse_number_text(arr):
    """Text cells to numbers: the catalogue's one parser for text columns.

    Parameters
    ----------
    arr : pyarrow.Array
        Text cells (any type Arrow can cast to string).

    Returns
    -------
    (numpy.ndarray, numpy.ndarray or None)
        float64 values (NaN for text that is not a number, and for blank cells) and the
        mask of blank cells (empty, white space only or null), or None when there is none.

    Notes
    -----
    The whole column is cast at once (vectorised); only when that fails are the cells
    matched against :data:`NUMBER_PATTERN` and the others blanked before casting again.

    References
    ----------
    Apache Arrow compute functions ``cast``, ``utf8_trim_whitespace``,
    ``match_substring_regex``.
    """
    import pyarrow as pa
    import pyarrow.compute as pc

    if not (pa.types.is_string(arr.type) or pa.types.is_large_string(arr.type)):
        arr = arr.cast(pa.string())
    text = pc.utf8_trim_whitespace(arr)
    blank = pc.or_kleene(pc.is_null(text), pc.equal(pc.utf8_length(text), 0))
    blank = pc.fill_null(blank, True)
    text = pc.if_else(blank, pa.scalar(None, text.type), text)
    try:
        numbers = pc.cast(text, pa.float64())
    except pa.ArrowInvalid:
        good = pc.fill_null(pc.match_substring_regex(text, NUMBER_PATTERN, ignore_case=True),
                            False)
        numbers = pc.cast(pc.if_else(good, text, pa.scalar(None, text.type)), pa.float64())
    values = np.asarray(numbers.to_numpy(zero_copy_only=False), dtype=np.float64)
    missing = np.asarray(blank.to_numpy(zero_copy_only=False), dtype=bool)
    return values, (missing if missing.any() else None)


def arrow_values(arr):
    """One pyarrow column -> ``(float64 values, missing mask or None)`` for the colouring.

    Parameters
    ----------
    arr : pyarrow.Array or pyarrow.ChunkedArray
        Numbers, text holding numbers (parsed by :func:`parse_number_text`), a
        dictionary of either, or nulls only.

    Returns
    -------
    (numpy.ndarray, numpy.ndarray or None)
        float64 values and the mask of missing cells (nulls, blank text), or None.

    References
    ----------
    Apache Arrow ``Array.to_numpy``; the parsing rules in the module docstring.
    """
    import pyarrow as pa

    if isinstance(arr, pa.ChunkedArray):
        arr = arr.combine_chunks()
    typ = arr.type
    if pa.types.is_dictionary(typ):
        arr = arr.cast(typ.value_type)
        typ = arr.type
    if pa.types.is_string(typ) or pa.types.is_large_string(typ):
        return parse_number_text(arr)
    if pa.types.is_null(typ):
        return np.full(len(arr), np.nan), np.ones(len(arr), dtype=bool)
    missing = None
    if arr.null_count:
        missing = np.asarray(arr.is_null().to_numpy(zero_copy_only=False), dtype=bool)
    values = np.asarray(arr.to_numpy(zero_copy_only=False), dtype=np.float64)
    return values, missing


def numpy_values(column):
    """One astropy/numpy column -> ``(float64 values, missing mask or None)``.

    Parameters
    ----------
    column : numpy.ndarray, numpy.ma.MaskedArray or astropy.table.Column
        One value per row: numbers, or text (str or UTF-8 bytes) parsed by
        :func:`parse_number_text`.

    Returns
    -------
    (numpy.ndarray, numpy.ndarray or None)
        float64 values and the mask of missing cells (masked entries, blank text), or None.

    References
    ----------
    The parsing rules in the module docstring.
    """
    import pyarrow as pa

    data = np.ma.getdata(column)
    mask = np.ma.getmaskarray(column) if np.ma.is_masked(column) or hasattr(column, "mask") \
        else None
    if data.ndim != 1:
        raise StarkilnError(f"column {getattr(column, 'name', '?')!r} is not one value per row")
    if data.dtype.kind in "iufb":
        values = data.astype(np.float64)
        missing = mask if mask is not None and mask.any() else None
        return values, missing
    if data.dtype.kind == "S":
        data = np.char.decode(data, "utf-8", errors="replace")
    text = pa.array(np.asarray(data, dtype=str), mask=mask if mask is not None else None)
    return parse_number_text(text)


def _check_arrow_type(name: str, typ, where: str) -> None:
    import pyarrow as pa

    if pa.types.is_dictionary(typ):
        typ = typ.value_type
    if (pa.types.is_integer(typ) or pa.types.is_floating(typ) or pa.types.is_decimal(typ)
            or pa.types.is_string(typ) or pa.types.is_large_string(typ) or pa.types.is_null(typ)):
        return
    raise StarkilnError(f"{where}: column {name!r} holds {typ}; accepted: numbers, or text "
                        "holding numbers")


def output_schema(schema, plan: CataloguePlan, where: str = "input"):
    """The input schema plus the appended columns (pyarrow), after checking names and types.

    Parameters
    ----------
    schema : pyarrow.Schema
        The input's columns.
    plan : CataloguePlan
    where : str
        What to name in an error message (usually the input file).

    Returns
    -------
    pyarrow.Schema
        The input fields, then r, g, b, intensity (float32) and status (string); the
        input's metadata without pandas' entry, and with a dust column the key
        ``starkiln_dust`` (``plan.dust_line``).

    Raises
    ------
    starkiln.engine.errors.StarkilnError
        A column the plan reads is missing or holds no numbers, or an output name clashes.
    """
    import pyarrow as pa

    check_columns(list(schema.names), plan, where)
    for name in plan.input_columns:
        _check_arrow_type(name, schema.field(name).type, where)
    fields = list(schema) + [pa.field(n, pa.float32()) for n in plan.output_columns[:4]]
    fields.append(pa.field(plan.output_columns[4], pa.string()))
    fields += [pa.field(n, pa.float32()) for n in plan.linear_names]
    meta = {k: v for k, v in (schema.metadata or {}).items() if k != b"pandas"}
    if plan.dust_line:
        meta[b"starkiln_dust"] = plan.dust_line.encode()
    return pa.schema(fields, metadata=meta or None)


def check_columns(names: list[str], plan: CataloguePlan, where: str = "input") -> None:
    """Raise a one-line error for missing input columns or clashing output names.

    Parameters
    ----------
    names : list of str
        The input's column names.
    plan : CataloguePlan
    where : str
        What to name in an error message.
    """
    missing = [n for n in plan.input_columns if n not in names]
    if missing:
        found = ", ".join(names[:60]) + (f", ... ({len(names) - 60} more)" if len(names) > 60
                                         else "")
        what = "column" if len(missing) == 1 else "columns"
        raise StarkilnError(f"{where}: no {what} {', '.join(repr(m) for m in missing)}; "
                            f"columns found: {found}")
    twice = [n for n in plan.input_columns if names.count(n) > 1]
    if twice:
        raise StarkilnError(f"{where}: column(s) {', '.join(repr(n) for n in twice)} appear "
                            "more than once; accepted: one column of each name the plan reads")
    clash = [n for n in plan.output_columns if n in names]
    if clash:
        raise StarkilnError(f"{where}: already has column(s) {', '.join(clash)}; choose a "
                            "--prefix for the new columns")


_STATUS_DICT = None


def status_array(codes: np.ndarray):
    """Status codes (uint8, indices into :data:`STATUSES`) as a pyarrow string array.

    Parameters
    ----------
    codes : numpy.ndarray
        uint8 codes, one per row.

    Returns
    -------
    pyarrow.StringArray
        The status text of every row (through a dictionary, without a Python loop).
    """
    import pyarrow as pa

    global _STATUS_DICT
    if _STATUS_DICT is None:
        _STATUS_DICT = pa.array(STATUSES, pa.string())
    return pa.DictionaryArray.from_arrays(pa.array(codes.view(np.int8)),
                                          _STATUS_DICT).cast(pa.string())
