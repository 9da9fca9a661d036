"""Colouring a catalogue file on this machine: read, colour every row, write atomically.

:func:`colour_catalogue` picks the route by format: Parquet files (one, a
folder or a glob) and CSV files go through pyarrow
(:mod:`starkiln.engine.catalogue.streaming`; every CSV column read as text, kept
exactly as written). CSV files above :data:`CSV_STREAM_BYTES` and Parquet are
streamed in chunks of ``chunk_rows`` rows, so memory stays flat whatever the
row count when the output is Parquet or CSV; ECSV, FITS and VOTable files are
read whole by astropy (:mod:`starkiln.engine.catalogue.formats`) and coloured
chunk by chunk. CSV output is written by one writer whatever the route. The
output may not be one of the inputs
(:func:`starkiln.engine.catalogue.output_guard.refuse_same_file`).
Every chunk goes through the same per-chunk function
(:func:`starkiln.engine.catalogue.colouring.colour_values`); every write goes
through :mod:`starkiln.engine.atomic` (a temporary file beside the output,
then a rename). :class:`Summary` says what a run did, for this engine and the
Dask engine alike; :func:`progress_bar` is their progress bar (tqdm).
"""

from __future__ import annotations

import sys
import time
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from starkiln.engine.catalogue.colouring import colour_arrow, colour_values
from starkiln.engine.catalogue.columns import check_columns, numpy_values, output_schema
from starkiln.engine.catalogue.formats import (astropy_guard, astropy_to_arrow,
                                               arrow_to_astropy, check_astropy_names,
                                               format_of, input_files, read_astropy,
                                               write_astropy)
from starkiln.engine.catalogue.output_guard import refuse_same_file
from starkiln.engine.catalogue.plan import LAST_COLOURED, STATUSES, CataloguePlan, status_counts
from starkiln.engine.catalogue.streaming import CsvWriter, StreamSource, parquet_writer
from starkiln.engine.errors import StarkilnError

#: CSV files larger than this are read in blocks (streamed) instead of whole.
CSV_STREAM_BYTES = 32 * 1024 * 1024
DEFAULT_CHUNK_ROWS = 1 << 17


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


def progress_bar(total, enabled, unit="star"):
    """A tqdm progress bar on stderr that shows itself only for runs longer than a second.

    Parameters
    ----------
    total : int or None
        Units to come (None when unknown, as for a streamed CSV).
    enabled : bool
        False: no bar at all (``--no-progress``).
    unit : str
        What is counted (``star``, ``part``).

    Returns
    -------
    tqdm.tqdm
        Use as a context manager; ``update(n)`` after each chunk.
    """
    from tqdm import tqdm

    return tqdm(total=total, unit=f" {unit}", unit_scale=True, file=sys.stderr,
                disable=None if enabled else True, delay=1.0, mininterval=0.5,
                dynamic_ncols=True, leave=False)


def colour_catalogue(input_spec, output, plan: CataloguePlan, *, overwrite: bool = False,
                     progress: bool = False, chunk_rows: int = DEFAULT_CHUNK_ROWS,
                     csv_stream_bytes: int | None = None) -> Summary:
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
    csv_stream_bytes : int, optional
        CSV files above this size are streamed through pyarrow (default
        :data:`CSV_STREAM_BYTES`).

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
    if Path(output).is_dir():
        raise StarkilnError(f"{output} is a folder; accepted: a file path (a folder of parts "
                            "only with --engine dask)")
    check_writable(output, overwrite)
    refuse_same_file(files, output)
    if csv_stream_bytes is None:
        csv_stream_bytes = CSV_STREAM_BYTES
    if fmt_in in ("parquet", "csv"):
        whole = fmt_in == "csv" and files[0].stat().st_size <= csv_stream_bytes
        rows, counts = _run_stream(files, fmt_in, Path(output), fmt_out, plan, overwrite,
                                   progress, int(chunk_rows), whole)
    else:
        rows, counts = _run_astropy(files[0], fmt_in, Path(output), fmt_out, plan, overwrite,
                                    progress, int(chunk_rows))
    return Summary(rows, status_counts(counts), time.perf_counter() - t0, str(output))


def _run_stream(files, fmt_in, output, fmt_out, plan, overwrite, progress, chunk_rows,
                whole=False):
    from starkiln.engine.atomic import atomic_path

    source = StreamSource(files, fmt_in, plan, chunk_rows, whole=whole)
    schema = output_schema(source.schema, plan, str(files[0]))
    if fmt_out not in ("parquet", "csv"):
        check_astropy_names(schema.names, str(files[0]), fmt_out)
    plan = plan.for_rows(source.num_rows)
    source.plan = plan
    with atomic_path(output, overwrite) as tmp:
        return _stream_once(source, schema, tmp, fmt_out, plan, progress)


def _stream_once(source, schema, tmp, fmt_out, plan, progress):
    import pyarrow as pa

    counts = np.zeros(len(STATUSES), dtype=np.int64)
    rows = 0
    with progress_bar(source.num_rows, progress) as bar:
        if fmt_out in ("parquet", "csv"):
            from concurrent.futures import ThreadPoolExecutor

            writer = parquet_writer(tmp, schema) if fmt_out == "parquet" else \
                CsvWriter(tmp, schema)
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
            write_astropy(arrow_to_astropy(table), tmp, fmt_out)
    return rows, counts


def _run_astropy(path, fmt_in, output, fmt_out, plan, overwrite, progress, chunk_rows):
    with astropy_guard():
        return _run_astropy_guarded(path, fmt_in, output, fmt_out, plan, overwrite, progress,
                                    chunk_rows)


def _run_astropy_guarded(path, fmt_in, output, fmt_out, plan, overwrite, progress, chunk_rows):
    from astropy.table import MaskedColumn

    from starkiln.engine.atomic import atomic_path

    table = read_astropy(path, fmt_in)
    check_columns(list(table.colnames), plan, str(path))
    n = len(table)
    plan = plan.for_rows(n)
    values = {name: numpy_values(table[name]) for name in plan.input_columns}
    outs = [np.empty(n, dtype=np.float32) for _ in range(4 + len(plan.linear_names))]
    codes = np.empty(n, dtype=np.uint8)
    with atomic_path(output, overwrite) as tmp:
        with progress_bar(n, progress) as bar:
            for start in range(0, n, chunk_rows):
                stop = min(start + chunk_rows, n)
                chunk = {k: (v[start:stop], None if m is None else m[start:stop])
                         for k, (v, m) in values.items()}
                res = colour_values(plan, chunk)
                for dst, src in zip(outs, (res.r, res.g, res.b, res.intensity) + res.linear):
                    dst[start:stop] = src
                codes[start:stop] = res.codes
                bar.update(stop - start)
        blank = codes > LAST_COLOURED
        for name, data in zip(plan.output_columns[:4], outs):
            table[name] = MaskedColumn(data, mask=blank)
        table[plan.output_columns[4]] = np.array(STATUSES)[codes] if n else \
            np.array([], dtype="<U22")
        for name, data in zip(plan.linear_names, outs[4:]):
            table[name] = MaskedColumn(data, mask=blank)
        if fmt_out in ("parquet", "csv"):  # the same writers as the streamed path
            arrow = astropy_to_arrow(table)
            writer = parquet_writer(tmp, arrow.schema) if fmt_out == "parquet" else \
                CsvWriter(tmp, arrow.schema)
            try:
                writer.write_table(arrow)
            finally:
                writer.close()
        else:
            write_astropy(table, tmp, fmt_out)
    counts = np.bincount(codes, minlength=len(STATUSES))[: len(STATUSES)]
    return n, counts
