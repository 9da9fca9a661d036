"""Star catalogues: read, colour every row through the render path, write; streamed.

A catalogue is any table with a column the temperature comes from (kelvin,
Johnson B-V, or Gaia BP-RP) and, optionally, a magnitude column (V, or Gaia G
converted to V). Every input column and row is kept, in order, and five
columns are appended:

========== ===============================================================
r, g, b    display-encoded colour, 0-1 floats (``Rendered.rgb_encoded``)
intensity  0-1 from the magnitude tone curve (1 without magnitudes)
status     ``ok`` or a short reason (:data:`STATUSES`); rows that are not
           coloured keep empty r, g, b and intensity; no row is dropped
========== ===============================================================

Formats go by extension. CSV (small files), ECSV, FITS and VOTable are read
and written whole through astropy (``astropy.table``); Parquet, and CSV files
above :data:`CSV_STREAM_BYTES`, are streamed through pyarrow in chunks of
``chunk_rows`` rows, so memory stays flat whatever the row count when the
output is Parquet or CSV. Writing is atomic (:mod:`starkiln.engine.atomic`).

Colours come from :func:`starkiln.engine.catalogue.colour_grid.colour_table`, a fine table built
by :func:`starkiln.engine.pipeline.render.render` (CIEDE2000 <= 0.2 against the exact path,
proven in the tests), or from ``render`` itself with ``exact=True``. The
per-chunk function is :func:`colour_values` (numpy arrays in, arrays out);
:func:`colour_arrow` and :func:`colour_partition` wrap it for pyarrow
batches and pandas partitions (Dask, :mod:`starkiln.engine.catalogue.dask_engine`).

Temperature sources: kelvin (500-100 000 K, the render path's range);
B-V through :func:`starkiln.engine.stars.temperature.temperature_from_bv` (Ballesteros 2012);
BP-RP through :func:`starkiln.engine.stars.gaia.temperature_from_bp_rp`
(Mucciarelli, Bellazzini & Massari 2021, dwarfs, [Fe/H] = 0 assumed).
Gaia G becomes V through :func:`starkiln.engine.stars.gaia.v_from_g` (Riello et
al. 2021, Table C.2).
"""

from __future__ import annotations

import dataclasses
import glob as _glob
import os
import re
import sys
import time
from contextlib import contextmanager
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from starkiln.engine.errors import StarkilnError
from starkiln.engine.pipeline.settings import Settings
from starkiln.engine.eye.vision import MAGNITUDE_RANGE

#: Row statuses, in the order of their codes (uint8 in memory, text in files).
STATUSES = (
    "ok",                      # coloured
    "extrapolated",            # coloured, BP-RP outside the calibrated range (on request)
    "missing-temperature",     # the temperature source cell is empty / null
    "missing-magnitude",       # the magnitude (or the BP-RP that G-to-V needs) is empty
    "not-a-number",            # a cell that is text, NaN or infinite
    "out-of-range",            # temperature source outside its accepted range
    "magnitude-out-of-range",  # V outside -30..30, or BP-RP outside the G-to-V range
)
OK, EXTRAPOLATED, MISSING_TEMPERATURE, MISSING_MAGNITUDE, NOT_A_NUMBER, OUT_OF_RANGE, \
    MAGNITUDE_OUT_OF_RANGE = range(len(STATUSES))

SOURCES = ("temperature", "bv", "bp-rp")
BANDS = ("V", "G")
#: Magnitudes the render path accepts (defined once, in starkiln.engine.eye.vision).
MAGNITUDE_MIN, MAGNITUDE_MAX = MAGNITUDE_RANGE

#: File extensions -> format names.
FORMATS = {
    ".csv": "csv", ".ecsv": "ecsv", ".fits": "fits", ".fit": "fits", ".fts": "fits",
    ".vot": "votable", ".votable": "votable", ".xml": "votable",
    ".parquet": "parquet", ".pq": "parquet",
}
_ASTROPY_FORMATS = {"csv": "ascii.csv", "ecsv": "ascii.ecsv", "fits": "fits",
                    "votable": "votable", "parquet": "parquet"}
#: CSV files larger than this are streamed through pyarrow instead of read whole by astropy.
CSV_STREAM_BYTES = 32 * 1024 * 1024
DEFAULT_CHUNK_ROWS = 1 << 17
#: Runs with magnitudes and at most this many rows call the render path for every row:
#: cheaper than building the 2-D table (about 1.5 s), and exactly the window's colours.
EXACT_ROWS_WITH_MAGNITUDE = 250_000
#: Bytes of CSV text parsed per block by the streaming reader (types come from the first).
CSV_BLOCK_BYTES = 16 << 20
OUTPUT_NAMES = ("r", "g", "b", "intensity", "status")

# A number as pyarrow's string-to-double cast accepts it (used only after a cast failed).
_NUMBER_RE = r"^[+-]?(?:(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?|nan|inf|infinity)$"


# --- the plan: which columns mean what -------------------------------------------------------


@dataclass(frozen=True)
class CataloguePlan:
    """What to read from each row and how to colour it (validated, picklable).

    Attributes
    ----------
    settings : Settings
        The one settings object (same as the window and ``starkiln colour``).
    source : ``temperature`` (K), ``bv`` (Johnson B-V) or ``bp-rp`` (Gaia BP-RP).
    source_column : column holding the temperature source.
    magnitude_column : column of apparent magnitudes, or None.
    magnitude_band : ``V`` (Johnson V) or ``G`` (Gaia G, converted to V).
    bp_rp_column : BP-RP column used by the G-to-V relation (defaults to
        ``source_column`` when the source is ``bp-rp``).
    magnitude : one magnitude for every row (instead of a column), or None.
    extrapolate_bp_rp : colour BP-RP outside 0.39-1.50 (status ``extrapolated``).
    exact : call the render path for every row instead of the table.
    prefix : text put before the names of the appended columns.
    threads : threads that colour parts of a chunk at once (numpy releases the GIL);
        0 (default) means one per core, up to 4. Dask workers use 1.
    """

    settings: Settings
    source: str
    source_column: str
    magnitude_column: str | None = None
    magnitude_band: str = "V"
    bp_rp_column: str | None = None
    magnitude: float | None = None
    extrapolate_bp_rp: bool = False
    exact: bool = False
    prefix: str = ""
    threads: int = 0

    def __post_init__(self):
        if self.source not in SOURCES:
            raise StarkilnError(f"unknown temperature source {self.source!r}; accepted: "
                                f"{', '.join(SOURCES)}")
        band = str(self.magnitude_band).strip().upper()
        if band not in BANDS:
            raise StarkilnError(f"magnitude band {self.magnitude_band!r} unknown; accepted: V, G")
        object.__setattr__(self, "magnitude_band", band)
        if self.magnitude_column is not None and self.magnitude is not None:
            raise StarkilnError("give either a magnitude column or one magnitude, not both")
        if self.magnitude is not None:
            m = float(self.magnitude)
            if not (np.isfinite(m) and MAGNITUDE_MIN <= m <= MAGNITUDE_MAX):
                raise StarkilnError(f"magnitude {self.magnitude!r} is outside the accepted range "
                                    f"{MAGNITUDE_MIN:g} to {MAGNITUDE_MAX:g}")
            object.__setattr__(self, "magnitude", m)
        if self.source == "bp-rp" and self.bp_rp_column is None:
            object.__setattr__(self, "bp_rp_column", self.source_column)
        if band == "G":
            if not self.with_magnitude:
                raise StarkilnError("--magnitude-band G needs --magnitude-column")
            if self.bp_rp_column is None:
                raise StarkilnError("--magnitude-band G needs --bp-rp-column: the G-to-V "
                                    "relation (Riello et al. 2021) uses BP-RP")

    def for_rows(self, rows: int | None) -> "CataloguePlan":
        """This plan for a run of ``rows`` rows: exact for small runs with magnitudes.

        Both engines call this with the total row count, so they colour alike.
        """
        if (self.with_magnitude and not self.exact and rows is not None
                and rows <= EXACT_ROWS_WITH_MAGNITUDE):
            return dataclasses.replace(self, exact=True)
        return self

    @property
    def with_magnitude(self) -> bool:
        """True when rows carry magnitudes (night-vision colours and intensities)."""
        return self.magnitude_column is not None or self.magnitude is not None

    @property
    def input_columns(self) -> list[str]:
        """Names of the columns this plan reads, without repeats."""
        names = [self.source_column, self.magnitude_column,
                 self.bp_rp_column if self.magnitude_band == "G" else None]
        out = []
        for n in names:
            if n is not None and n not in out:
                out.append(n)
        return out

    @property
    def output_columns(self) -> list[str]:
        """Names of the appended columns (with the prefix)."""
        return [self.prefix + n for n in OUTPUT_NAMES]


# --- the per-chunk colouring function -----------------------------------------------------------


@dataclass
class Coloured:
    """Colours of one chunk of rows.

    Attributes
    ----------
    r, g, b, intensity : float32 arrays; NaN where the row is not coloured.
    codes : uint8 status codes (indices into :data:`STATUSES`).
    blank : bool array, True where the row is not coloured; None when every row is.
    """

    r: np.ndarray
    g: np.ndarray
    b: np.ndarray
    intensity: np.ndarray
    codes: np.ndarray
    blank: np.ndarray | None

    def counts(self) -> np.ndarray:
        """Rows per status (aligned with :data:`STATUSES`)."""
        return np.bincount(self.codes, minlength=len(STATUSES))[: len(STATUSES)]


def _flag(codes: np.ndarray, condition, code: int) -> None:
    """Set ``code`` where ``condition`` holds and no earlier reason was found
    (``extrapolated`` is not a reason: a later one replaces it)."""
    if condition is None or not condition.any():
        return
    np.copyto(codes, np.uint8(code), where=condition & (codes <= EXTRAPOLATED))


#: Rows below which a chunk is coloured by one thread.
_MIN_ROWS_PER_THREAD = 1 << 15
_POOL = None


def _pool(threads: int):
    global _POOL
    from concurrent.futures import ThreadPoolExecutor

    if _POOL is None or _POOL._max_workers < threads:
        _POOL = ThreadPoolExecutor(max_workers=threads, thread_name_prefix="starkiln-colour")
    return _POOL


def colour_values(plan: CataloguePlan, columns: dict) -> Coloured:
    """Colour one chunk of rows (split over ``plan.threads`` threads): see
    :func:`colour_values_serial` for the parameters, rules and references."""
    n = next(iter(columns.values()))[0].shape[0]
    threads = plan.threads or min(4, os.cpu_count() or 1)
    parts = min(threads, n // _MIN_ROWS_PER_THREAD)
    if parts < 2:
        return colour_values_serial(plan, columns)
    if not plan.exact:  # build (or load) the table once, before the threads need it
        from starkiln.engine.catalogue.colour_grid import colour_table

        colour_table(plan.settings, plan.with_magnitude)
    bounds = np.linspace(0, n, parts + 1).astype(int)
    out = [np.empty(n, dtype=np.float32) for _ in range(4)]
    codes = np.empty(n, dtype=np.uint8)

    def work(p):
        a, b = bounds[p], bounds[p + 1]
        sub = {k: (v[a:b], None if m is None else m[a:b]) for k, (v, m) in columns.items()}
        res = colour_values_serial(plan, sub)
        for dst, src in zip(out, (res.r, res.g, res.b, res.intensity)):
            dst[a:b] = src
        codes[a:b] = res.codes

    for f in [_pool(threads).submit(work, p) for p in range(parts)]:
        f.result()
    blank = codes > EXTRAPOLATED
    return Coloured(*out, codes, blank if blank.any() else None)


def colour_values_serial(plan: CataloguePlan, columns: dict) -> Coloured:
    """Colour one chunk of rows: status per row, then colours from the render path.

    Parameters
    ----------
    plan : CataloguePlan
        Column meanings and settings.
    columns : dict
        ``name -> (values, missing)`` for every name in ``plan.input_columns``:
        ``values`` a float64 array (NaN for text that is not a number),
        ``missing`` a bool array of empty cells, or None when there are none.

    Returns
    -------
    Coloured
        Colours, intensities and status codes, one per row, in order.

    Notes
    -----
    The first reason found wins, in this order: temperature source missing,
    not a number, out of range; then magnitude missing, not a number, out of
    range. Accepted ranges: 500-100 000 K; B-V -0.40 to 2.00 (Ballesteros
    2012); BP-RP 0.39-1.50 (Mucciarelli et al. 2021; -0.5 to 5.0 with
    ``extrapolate_bp_rp``); V -30 to 30; BP-RP for G-to-V -0.5 to 5.0 (Riello
    et al. 2021).

    References
    ----------
    :func:`starkiln.engine.pipeline.render.render` (the colours), :mod:`starkiln.engine.catalogue.colour_grid` (the
    table), :mod:`starkiln.engine.stars.temperature`, :mod:`starkiln.engine.stars.gaia` (relations).
    """
    from starkiln.engine.stars import gaia as pg
    from starkiln.engine.stars.temperature import BV_MAX, BV_MIN, TEMPERATURE_MAX_K, TEMPERATURE_MIN_K

    src, src_missing = columns[plan.source_column]
    n = src.shape[0]
    codes = np.zeros(n, dtype=np.uint8)
    _flag(codes, src_missing, MISSING_TEMPERATURE)
    finite = np.isfinite(src)
    _flag(codes, ~finite, NOT_A_NUMBER)
    with np.errstate(invalid="ignore"):
        if plan.source == "temperature":
            inside = (src >= TEMPERATURE_MIN_K) & (src <= TEMPERATURE_MAX_K)
        elif plan.source == "bv":
            inside = (src >= BV_MIN) & (src <= BV_MAX)
        else:
            inside = pg.bp_rp_in_range(src, extrapolate=plan.extrapolate_bp_rp)
        _flag(codes, ~inside, OUT_OF_RANGE)
        if plan.source == "bp-rp" and plan.extrapolate_bp_rp:
            _flag(codes, ~pg.bp_rp_in_range(src), EXTRAPOLATED)

    v_mag = None
    if plan.with_magnitude:
        if plan.magnitude is not None:
            mag = np.full(n, plan.magnitude)
        else:
            mag, mag_missing = columns[plan.magnitude_column]
            _flag(codes, mag_missing, MISSING_MAGNITUDE)
            _flag(codes, ~np.isfinite(mag), NOT_A_NUMBER)
        if plan.magnitude_band == "G":
            c, c_missing = columns[plan.bp_rp_column]
            _flag(codes, c_missing, MISSING_MAGNITUDE)
            _flag(codes, ~np.isfinite(c), NOT_A_NUMBER)
            with np.errstate(invalid="ignore"):
                c_ok = (c >= pg.BP_RP_G_TO_V_MIN) & (c <= pg.BP_RP_G_TO_V_MAX)
            _flag(codes, ~c_ok, MAGNITUDE_OUT_OF_RANGE)
            mag = mag - pg.g_minus_v(np.where(c_ok, c, 0.8))
        with np.errstate(invalid="ignore"):
            _flag(codes, ~((mag >= MAGNITUDE_MIN) & (mag <= MAGNITUDE_MAX)),
                  MAGNITUDE_OUT_OF_RANGE)
        v_mag = mag

    coloured = codes <= EXTRAPOLATED
    all_coloured = bool(coloured.all())
    blank = None if all_coloured else ~coloured
    if not coloured.any():
        nan = np.full(n, np.nan, dtype=np.float32)
        return Coloured(nan, nan.copy(), nan.copy(), nan.copy(), codes, blank)

    safe = src if all_coloured else np.where(coloured, src, _SAFE[plan.source])
    if plan.source == "temperature":
        temperature_K = safe
    elif plan.source == "bv":
        from starkiln.engine.stars.temperature import temperature_from_bv

        temperature_K = temperature_from_bv(safe)
    else:
        temperature_K = pg.temperature_from_bp_rp(safe, extrapolate=True)
    if v_mag is not None and not all_coloured:
        v_mag = np.where(coloured, v_mag, 0.0)

    r, g, b, intensity = _colours(plan, temperature_K, v_mag)
    if blank is not None:
        for a in (r, g, b, intensity):
            a[blank] = np.nan
    return Coloured(r, g, b, intensity, codes, blank)


#: Stand-in values for rows that are not coloured (their results are discarded).
_SAFE = {"temperature": 5772.0, "bv": 0.65, "bp-rp": 0.82}


def _colours(plan: CataloguePlan, temperature_K, v_mag):
    """r, g, b, intensity (float32) from the table or, with ``exact``, from render."""
    if plan.exact:
        from starkiln.engine.pipeline.render import render

        rendered = render(plan.settings, temperature_K, v_mag)
        rgb = rendered.rgb_encoded.astype(np.float32)
        inten = np.broadcast_to(rendered.intensity, temperature_K.shape).astype(np.float32)
        return (np.ascontiguousarray(rgb[:, 0]), np.ascontiguousarray(rgb[:, 1]),
                np.ascontiguousarray(rgb[:, 2]), inten)
    from starkiln.engine.catalogue.colour_grid import colour_table

    table = colour_table(plan.settings, v_mag is not None)
    return table.lookup(temperature_K, v_mag)


# --- cells to numbers ----------------------------------------------------------------------


def _parse_text(arr):
    """Text cells -> (float64 values, missing mask): blank is missing, other non-numbers NaN."""
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
        good = pc.fill_null(pc.match_substring_regex(text, _NUMBER_RE, ignore_case=True), False)
        numbers = pc.cast(pc.if_else(good, text, pa.scalar(None, text.type)), pa.float64())
    values = np.asarray(numbers.to_numpy(zero_copy_only=False), dtype=np.float64)
    missing = np.asarray(blank.to_numpy(zero_copy_only=False), dtype=bool)
    return values, (missing if missing.any() else None)


def _check_arrow_type(name: str, typ, where: str) -> None:
    import pyarrow as pa

    if pa.types.is_dictionary(typ):
        typ = typ.value_type
    if (pa.types.is_integer(typ) or pa.types.is_floating(typ) or pa.types.is_decimal(typ)
            or pa.types.is_string(typ) or pa.types.is_large_string(typ) or pa.types.is_null(typ)):
        return
    raise StarkilnError(f"{where}: column {name!r} holds {typ}; accepted: numbers, or text "
                        "holding numbers")


def arrow_values(arr):
    """One pyarrow column -> ``(float64 values, missing mask or None)`` for :func:`colour_values`.

    Numbers pass through (nulls are missing, NaN stays NaN); text is parsed
    (blank cells are missing, text that is not a number becomes NaN).
    """
    import pyarrow as pa

    if isinstance(arr, pa.ChunkedArray):
        arr = arr.combine_chunks()
    typ = arr.type
    if pa.types.is_dictionary(typ):
        arr = arr.cast(typ.value_type)
        typ = arr.type
    if pa.types.is_string(typ) or pa.types.is_large_string(typ):
        return _parse_text(arr)
    if pa.types.is_null(typ):
        return np.full(len(arr), np.nan), np.ones(len(arr), dtype=bool)
    missing = None
    if arr.null_count:
        missing = np.asarray(arr.is_null().to_numpy(zero_copy_only=False), dtype=bool)
    values = np.asarray(arr.to_numpy(zero_copy_only=False), dtype=np.float64)
    return values, missing


def numpy_values(column):
    """One astropy/numpy column -> ``(float64 values, missing mask or None)``.

    Masked entries are missing; text columns (str or bytes) are parsed as in
    :func:`arrow_values`.
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
    return _parse_text(text)


# --- pyarrow and pandas wrappers ----------------------------------------------------------


def output_schema(schema, plan: CataloguePlan, where: str = "input"):
    """The input schema plus the appended columns (pyarrow), after checking names and types."""
    import pyarrow as pa

    check_columns(list(schema.names), plan, where)
    for name in plan.input_columns:
        _check_arrow_type(name, schema.field(name).type, where)
    fields = list(schema) + [pa.field(n, pa.float32()) for n in plan.output_columns[:4]]
    fields.append(pa.field(plan.output_columns[4], pa.string()))
    meta = {k: v for k, v in (schema.metadata or {}).items() if k != b"pandas"} or None
    return pa.schema(fields, metadata=meta)


def check_columns(names: list[str], plan: CataloguePlan, where: str = "input") -> None:
    """Raise a one-line error for missing input columns or clashing output names."""
    missing = [n for n in plan.input_columns if n not in names]
    if missing:
        found = ", ".join(names[:60]) + (f", ... ({len(names) - 60} more)" if len(names) > 60
                                         else "")
        what = "column" if len(missing) == 1 else "columns"
        raise StarkilnError(f"{where}: no {what} {', '.join(repr(m) for m in missing)}; "
                            f"columns found: {found}")
    clash = [n for n in plan.output_columns if n in names]
    if clash:
        raise StarkilnError(f"{where}: already has column(s) {', '.join(clash)}; choose a "
                            "--prefix for the new columns")


_STATUS_DICT = None


def _status_array(codes: np.ndarray):
    import pyarrow as pa

    global _STATUS_DICT
    if _STATUS_DICT is None:
        _STATUS_DICT = pa.array(STATUSES, pa.string())
    return pa.DictionaryArray.from_arrays(pa.array(codes.view(np.int8)),
                                          _STATUS_DICT).cast(pa.string())


def colour_arrow(batch, plan: CataloguePlan, schema=None):
    """Colour a pyarrow RecordBatch or Table: the same columns plus r, g, b, intensity, status.

    Parameters
    ----------
    batch : pyarrow.RecordBatch or pyarrow.Table
    plan : CataloguePlan
    schema : pyarrow.Schema, optional
        The output schema (from :func:`output_schema`); computed when omitted.

    Returns
    -------
    (pyarrow.RecordBatch or pyarrow.Table, numpy.ndarray)
        The coloured rows and the row counts per status.
    """
    import pyarrow as pa

    if schema is None:
        schema = output_schema(batch.schema, plan)
    cols = {name: arrow_values(batch.column(name)) for name in plan.input_columns}
    res = colour_values(plan, cols)
    mask = res.blank
    new = [pa.array(a, mask=mask) if mask is not None else pa.array(a)
           for a in (res.r, res.g, res.b, res.intensity)]
    new.append(_status_array(res.codes))
    if isinstance(batch, pa.Table):
        arrays = [batch.column(i) for i in range(batch.num_columns)] + new
        return pa.Table.from_arrays(arrays, schema=schema), res.counts()
    return pa.RecordBatch.from_arrays(list(batch.columns) + new, schema=schema), res.counts()


def colour_partition(frame, plan: CataloguePlan):
    """Colour a pandas DataFrame (a Dask partition): the same per-chunk function, via pyarrow.

    Parameters
    ----------
    frame : pandas.DataFrame
        Rows of a catalogue (any index; it is kept).
    plan : CataloguePlan

    Returns
    -------
    pandas.DataFrame
        The same columns plus r, g, b, intensity, status, with pyarrow-backed
        dtypes (``pandas.ArrowDtype``).
    """
    import pandas as pd
    import pyarrow as pa

    table = pa.Table.from_pandas(frame, preserve_index=False)
    out, _ = colour_arrow(table, plan)
    result = out.to_pandas(types_mapper=pd.ArrowDtype)
    result.index = frame.index
    return result


# --- files ---------------------------------------------------------------------------------


def format_of(path, what: str = "file") -> str:
    """Format name from a file's extension, or a one-line error listing the accepted ones."""
    suffix = Path(str(path)).suffix.lower()
    fmt = FORMATS.get(suffix)
    if fmt is None:
        raise StarkilnError(f"{path}: extension {suffix or '(none)'!r} not supported for the "
                            f"{what}; accepted: {', '.join(sorted(FORMATS))}")
    return fmt


def _natural_key(text: str):
    return [int(t) if t.isdigit() else t for t in re.split(r"(\d+)", text)]


def input_files(spec) -> list[Path]:
    """A single file, every ``*.parquet`` file in a folder, or the files a glob matches.

    Files of a folder or glob come in natural order (``part.2`` before ``part.10``).
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


def _first_line(exc: BaseException) -> str:
    text = str(exc).strip().splitlines()
    return text[0] if text else type(exc).__name__


class _TypeDrift(Exception):
    """A CSV column changed type after the first block (restart with text columns)."""


class _StreamSource:
    """Parquet files or one large CSV file, read in chunks through pyarrow."""

    def __init__(self, files: list[Path], fmt: str, plan: CataloguePlan, chunk_rows: int):
        self.files, self.fmt, self.plan, self.chunk_rows = files, fmt, plan, chunk_rows
        self.text_columns = False
        self.num_rows = None
        if fmt == "parquet":
            self._open_parquet()
        else:
            self._csv_reader = self._open_csv()
            self.schema = self._csv_reader.schema

    def _open_parquet(self):
        import pyarrow.parquet as pq

        self._parquet = []
        schema = None
        rows = 0
        for f in self.files:
            try:
                pf = pq.ParquetFile(f)
            except Exception as exc:  # pyarrow raises several kinds for a bad file
                raise StarkilnError(f"{f}: cannot read as Parquet ({_first_line(exc)})") from None
            s = pf.schema_arrow
            if schema is None:
                schema = s
            elif not s.remove_metadata().equals(schema.remove_metadata()):
                raise StarkilnError(f"{f}: its columns differ from those of {self.files[0]}; "
                                    "every file of a folder or glob needs the same columns")
            rows += pf.metadata.num_rows
            self._parquet.append(pf)
        self.schema, self.num_rows = schema, rows

    def _open_csv(self):
        import pyarrow as pa
        import pyarrow.csv as pcsv

        path = self.files[0]
        # Types are inferred from the first block; a column that changes type later
        # (text below numbers) makes the run start again with every column as text.
        text_types = {n: pa.string() for n in self.schema.names} if self.text_columns else {}
        try:
            return pcsv.open_csv(
                path,
                read_options=pcsv.ReadOptions(block_size=CSV_BLOCK_BYTES),
                convert_options=pcsv.ConvertOptions(column_types=text_types, null_values=[""],
                                                    strings_can_be_null=True))
        except Exception as exc:
            raise StarkilnError(f"{path}: cannot read as CSV ({_first_line(exc)})") from None

    def text_version(self) -> "_StreamSource":
        """The same CSV source with every column read as text (after a type drift)."""
        clone = object.__new__(_StreamSource)
        clone.__dict__.update(self.__dict__)
        clone.text_columns = True
        clone._csv_reader = clone._open_csv()
        clone.schema = clone._csv_reader.schema
        return clone

    def batches(self):
        """Yield RecordBatches of at most ``chunk_rows`` rows, in file and row order."""
        import pyarrow as pa

        if self.fmt == "parquet":
            # A few row groups at a time: one reader over a whole file keeps what it has
            # read in memory (measured with pyarrow 26), so memory would grow with the file.
            for path, pf in zip(self.files, self._parquet):
                meta = pf.metadata
                window, rows = [], 0
                groups = list(range(meta.num_row_groups))
                for g in groups:
                    window.append(g)
                    rows += meta.row_group(g).num_rows
                    if rows < self.chunk_rows and g != groups[-1]:
                        continue
                    try:
                        yield from pf.iter_batches(batch_size=self.chunk_rows,
                                                   row_groups=window, use_threads=True)
                    except Exception as exc:
                        raise StarkilnError(f"{path}: cannot read as Parquet "
                                            f"({_first_line(exc)})") from None
                    window, rows = [], 0
            return
        reader = self._csv_reader
        while True:
            try:
                batch = reader.read_next_batch()
            except StopIteration:
                return
            except pa.ArrowInvalid as exc:
                if "conversion error" in str(exc) and not self.text_columns:
                    raise _TypeDrift(str(exc)) from None
                raise StarkilnError(f"{self.files[0]}: cannot read as CSV "
                                    f"({_first_line(exc)})") from None
            for start in range(0, batch.num_rows, self.chunk_rows):
                yield batch.slice(start, self.chunk_rows)


def _parquet_writer(path, schema):
    import pyarrow as pa
    import pyarrow.parquet as pq

    dictionary = [f.name for f in schema
                  if pa.types.is_string(f.type) or pa.types.is_large_string(f.type)
                  or pa.types.is_dictionary(f.type)]
    return pq.ParquetWriter(str(path), schema, compression="snappy",
                            use_dictionary=dictionary or False)


class _CsvWriter:
    def __init__(self, path, schema):
        import pyarrow.csv as pcsv

        self._w = pcsv.CSVWriter(str(path), schema,
                                 write_options=pcsv.WriteOptions(quoting_style="needed"))

    def write_batch(self, batch):
        self._w.write_batch(batch)

    def close(self):
        self._w.close()


def arrow_to_astropy(table):
    """A pyarrow Table as an astropy Table (nulls become masked entries)."""
    with astropy_guard():
        return _arrow_to_astropy(table)


def _arrow_to_astropy(table):
    import pyarrow as pa
    from astropy.table import Column, MaskedColumn, Table

    cols = []
    for name in table.column_names:
        arr = table.column(name).combine_chunks()
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
    """An astropy Table as a pyarrow Table (masked entries become nulls; units are dropped)."""
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


def _read_astropy(path: Path, fmt: str):
    import warnings

    try:
        with warnings.catch_warnings(), astropy_guard():
            warnings.simplefilter("ignore")
            from astropy.table import Table

            return Table.read(str(path), format=_ASTROPY_FORMATS[fmt])
    except Exception as exc:  # astropy raises many kinds for unreadable files
        raise StarkilnError(f"{path}: cannot read as {fmt.upper()} ({_first_line(exc)})") from None


def _write_astropy(table, tmp: Path, fmt: str) -> None:
    import warnings

    with warnings.catch_warnings(), astropy_guard():
        warnings.simplefilter("ignore")
        table.write(str(tmp), format=_ASTROPY_FORMATS[fmt], overwrite=True)


# --- running a catalogue -------------------------------------------------------------------


@dataclass
class Summary:
    """What a catalogue run did: rows, rows per status, time, output."""

    rows: int
    counts: dict
    seconds: float
    output: str
    engine: str = "local"
    parts: int = 1
    notes: list = field(default_factory=list)

    def lines(self) -> list[str]:
        """Human-readable summary lines."""
        rate = self.rows / self.seconds if self.seconds > 0 else float("inf")
        speed = (f"{rate / 1e6:.2f} M rows/s" if rate >= 1e6 else
                 f"{rate / 1e3:.1f} k rows/s" if rate >= 1e3 else f"{rate:.0f} rows/s")
        out = [f"{self.rows:,} rows -> {self.output} in {self.seconds:.2f} s "
               f"({speed}, engine {self.engine}"
               + (f", {self.parts} parts)" if self.engine != "local" else ")")]
        width = max(len(s) for s in STATUSES)
        for s in STATUSES:
            if self.counts.get(s):
                out.append(f"  {s:<{width}}  {self.counts[s]:>12,}")
        out.extend(self.notes)
        return out


def _counts_dict(counts: np.ndarray) -> dict:
    return {s: int(c) for s, c in zip(STATUSES, counts)}


def _progress(total, enabled, unit="star"):
    from tqdm import tqdm

    return tqdm(total=total, unit=f" {unit}", unit_scale=True, file=sys.stderr,
                disable=None if enabled else True, delay=1.0, mininterval=0.5,
                dynamic_ncols=True, leave=False)


def colour_catalogue(input_spec, output, plan: CataloguePlan, *, overwrite: bool = False,
                     progress: bool = False, chunk_rows: int = DEFAULT_CHUNK_ROWS,
                     csv_stream_bytes: int = CSV_STREAM_BYTES) -> Summary:
    """Colour every row of a catalogue file on this machine and write the result atomically.

    Parameters
    ----------
    input_spec : path
        A CSV, ECSV, FITS, VOTable or Parquet file; or a folder / glob of Parquet files
        (streamed in natural order into one output).
    output : path
        Output file; the format follows its extension (same list).
    plan : CataloguePlan
    overwrite : bool
        Replace an existing output (``--force``).
    progress : bool
        Show a progress bar on stderr (for runs longer than a second).
    chunk_rows : int
        Rows per chunk for streamed formats.
    csv_stream_bytes : int
        CSV files above this size are streamed through pyarrow.

    Returns
    -------
    Summary

    Raises
    ------
    starkiln.engine.errors.StarkilnError
        Bad input (unreadable file, unknown extension, missing columns, existing
        output without ``overwrite``); nothing is written.
    """
    from starkiln.engine.atomic import check_writable

    t0 = time.perf_counter()
    if int(chunk_rows) < 1:
        raise StarkilnError(f"chunk rows {chunk_rows!r} must be a positive whole number")
    files = input_files(input_spec)
    fmts = {format_of(f, "input") for f in files}
    fmt_in = fmts.pop()
    if fmts or (len(files) > 1 and fmt_in != "parquet"):
        raise StarkilnError(f"{input_spec}: a folder or glob must hold Parquet files only")
    fmt_out = format_of(output, "output")
    check_writable(output, overwrite)
    streamed = fmt_in == "parquet" or (fmt_in == "csv"
                                       and files[0].stat().st_size > csv_stream_bytes)
    if streamed:
        rows, counts = _run_stream(files, fmt_in, Path(output), fmt_out, plan, overwrite,
                                   progress, int(chunk_rows))
    else:
        rows, counts = _run_astropy(files[0], fmt_in, Path(output), fmt_out, plan, overwrite,
                                    progress, int(chunk_rows))
    return Summary(rows, _counts_dict(counts), time.perf_counter() - t0, str(output))


def _run_stream(files, fmt_in, output, fmt_out, plan, overwrite, progress, chunk_rows):
    from starkiln.engine.atomic import atomic_path

    source = _StreamSource(files, fmt_in, plan, chunk_rows)
    schema = output_schema(source.schema, plan, str(files[0]))
    plan = plan.for_rows(source.num_rows)
    source.plan = plan
    with atomic_path(output, overwrite) as tmp:
        for attempt in (0, 1):
            try:
                return _stream_once(source, schema, tmp, fmt_out, plan, progress)
            except _TypeDrift:
                if attempt:
                    raise StarkilnError(f"{files[0]}: cannot read as CSV (column types "
                                        "change within the file)") from None
                source = source.text_version()
                schema = output_schema(source.schema, plan, str(files[0]))
    raise AssertionError("unreachable")  # pragma: no cover


def _stream_once(source, schema, tmp, fmt_out, plan, progress):
    import pyarrow as pa

    counts = np.zeros(len(STATUSES), dtype=np.int64)
    rows = 0
    with _progress(source.num_rows, progress) as bar:
        if fmt_out in ("parquet", "csv"):
            from concurrent.futures import ThreadPoolExecutor

            writer = _parquet_writer(tmp, schema) if fmt_out == "parquet" else \
                _CsvWriter(tmp, schema)
            # One chunk is written (pyarrow, without the GIL) while the next is read and
            # coloured: two chunks in memory at most.
            pending = None
            try:
                with ThreadPoolExecutor(max_workers=1) as pool:
                    for batch in source.batches():
                        out, c = colour_arrow(batch, plan, schema)
                        if pending is not None:
                            pending.result()
                        pending = pool.submit(writer.write_batch, out)
                        counts += c
                        rows += batch.num_rows
                        bar.update(batch.num_rows)
                    if pending is not None:
                        pending.result()
            finally:
                writer.close()
        else:  # ECSV, FITS, VOTable are written whole by astropy
            parts = []
            for batch in source.batches():
                out, c = colour_arrow(batch, plan, schema)
                parts.append(out)
                counts += c
                rows += batch.num_rows
                bar.update(batch.num_rows)
            table = pa.Table.from_batches(parts, schema=schema)
            _write_astropy(arrow_to_astropy(table), tmp, fmt_out)
    return rows, counts


def _float32_text(value) -> str:
    return str(np.float32(value))


def _run_astropy(path, fmt_in, output, fmt_out, plan, overwrite, progress, chunk_rows):
    with astropy_guard():
        return _run_astropy_guarded(path, fmt_in, output, fmt_out, plan, overwrite, progress,
                                    chunk_rows)


def _run_astropy_guarded(path, fmt_in, output, fmt_out, plan, overwrite, progress, chunk_rows):
    from astropy.table import MaskedColumn

    from starkiln.engine.atomic import atomic_path

    table = _read_astropy(path, fmt_in)
    check_columns(list(table.colnames), plan, str(path))
    n = len(table)
    plan = plan.for_rows(n)
    values = {name: numpy_values(table[name]) for name in plan.input_columns}
    outs = [np.empty(n, dtype=np.float32) for _ in range(4)]
    codes = np.empty(n, dtype=np.uint8)
    with atomic_path(output, overwrite) as tmp:
        with _progress(n, progress) as bar:
            for start in range(0, n, chunk_rows):
                stop = min(start + chunk_rows, n)
                chunk = {k: (v[start:stop], None if m is None else m[start:stop])
                         for k, (v, m) in values.items()}
                res = colour_values(plan, chunk)
                for dst, src in zip(outs, (res.r, res.g, res.b, res.intensity)):
                    dst[start:stop] = src
                codes[start:stop] = res.codes
                bar.update(stop - start)
        blank = codes > EXTRAPOLATED
        for name, data in zip(plan.output_columns[:4], outs):
            table[name] = MaskedColumn(data, mask=blank)
        table[plan.output_columns[4]] = np.array(STATUSES)[codes] if n else \
            np.array([], dtype="<U22")
        if fmt_out == "csv":  # shortest text of the float32 values, not of their float64 form
            for name in plan.output_columns[:4]:
                table[name].format = _float32_text
        if fmt_out == "parquet":  # the same writer as the streamed path (nulls, not masks)
            arrow = astropy_to_arrow(table)
            writer = _parquet_writer(tmp, arrow.schema)
            try:
                writer.write_table(arrow)
            finally:
                writer.close()
        else:
            _write_astropy(table, tmp, fmt_out)
    counts = np.bincount(codes, minlength=len(STATUSES))[: len(STATUSES)]
    return n, counts
