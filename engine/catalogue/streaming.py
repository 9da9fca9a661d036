"""Streamed catalogue files: Parquet and large CSV read in chunks, written chunk by chunk (pyarrow).

:class:`StreamSource` reads Parquet files (a few row groups at a time) or one
CSV file (blocks of :data:`CSV_BLOCK_BYTES`) as RecordBatches of at most
``chunk_rows`` rows, so memory stays flat whatever the row count.
:func:`parquet_writer` and :class:`CsvWriter` write the coloured batches one
after the other. Every CSV column is read as text, kept exactly as written; only
the columns a plan reads are parsed as numbers.

References: Apache Arrow documentation, ``pyarrow.parquet.ParquetFile.iter_batches``,
``pyarrow.parquet.ParquetWriter``, ``pyarrow.csv.open_csv``, ``pyarrow.csv.CSVWriter``.
"""

from __future__ import annotations

from pathlib import Path

from starkiln.engine.catalogue.formats import first_line
from starkiln.engine.catalogue.plan import CataloguePlan
from starkiln.engine.errors import StarkilnError

#: Bytes of CSV text parsed per block by the streaming reader (types come from the first).
CSV_BLOCK_BYTES = 16 << 20


class StreamSource:
    """Parquet files or one CSV file, read in chunks through pyarrow.

    Every CSV column is read as text (``pyarrow.csv.ConvertOptions(column_types=...)``):
    the text of a cell is kept exactly as written (``007`` stays ``007``, ``1e3`` stays
    ``1e3``) and only the columns the plan reads are parsed as numbers, by
    :func:`starkiln.engine.catalogue.columns.parse_number_text`. Empty cells are nulls.

    Parameters
    ----------
    files : list of Path
        Parquet files (all with the same columns), or one CSV file.
    fmt : str
        ``parquet`` or ``csv``.
    plan : CataloguePlan
    chunk_rows : int
        Most rows per batch.
    whole : bool
        CSV only: read the whole file at once (small files), so that ``num_rows`` is known.

    Attributes
    ----------
    schema : pyarrow.Schema
        The input's columns.
    num_rows : int or None
        Rows of the input (None for a CSV file read in blocks: unknown until read).
    """

    def __init__(self, files: list[Path], fmt: str, plan: CataloguePlan, chunk_rows: int,
                 whole: bool = False):
        self.files, self.fmt, self.plan, self.chunk_rows = files, fmt, plan, chunk_rows
        self.num_rows = None
        self._table = None
        if fmt == "parquet":
            self._open_parquet()
        elif whole:
            self._table = read_csv_text(files[0])
            self.schema, self.num_rows = self._table.schema, self._table.num_rows
        else:
            self._csv_reader = open_csv_text(files[0])
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
                raise StarkilnError(f"{f}: cannot read as Parquet ({first_line(exc)})") from None
            s = pf.schema_arrow
            if schema is None:
                schema = s
            elif not s.remove_metadata().equals(schema.remove_metadata()):
                raise StarkilnError(f"{f}: its columns differ from those of {self.files[0]}; "
                                    "every file of a folder or glob needs the same columns")
            rows += pf.metadata.num_rows
            self._parquet.append(pf)
        self.schema, self.num_rows = schema, rows

    def batches(self):
        """Yield RecordBatches of at most ``chunk_rows`` rows, in file and row order."""
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
                                            f"({first_line(exc)})") from None
                    window, rows = [], 0
            return
        if self._table is not None:
            yield from self._table.to_batches(max_chunksize=self.chunk_rows)
            return
        reader = self._csv_reader
        while True:
            try:
                batch = reader.read_next_batch()
            except StopIteration:
                return
            except Exception as exc:  # pyarrow.ArrowInvalid and friends
                raise csv_error(self.files[0], exc) from None
            for start in range(0, batch.num_rows, self.chunk_rows):
                yield batch.slice(start, self.chunk_rows)


def csv_error(path, exc: BaseException) -> StarkilnError:
    """The one-line error for a CSV file pyarrow cannot read (not UTF-8 text named as such)."""
    text = str(exc).lower()
    if "utf8" in text or "utf-8" in text or "utf-16" in text:
        return StarkilnError(f"{path}: cannot read as CSV (not UTF-8 text; accepted: a CSV "
                             "file saved as UTF-8, with or without a byte-order mark)")
    return StarkilnError(f"{path}: cannot read as CSV ({first_line(exc)})")


def _csv_options(path, block_bytes: int):
    """Read and convert options that read every column of ``path`` as text."""
    import pyarrow as pa
    import pyarrow.csv as pcsv

    try:
        with open(path, "rb") as fh:
            start = fh.read(4)
    except OSError as exc:
        raise StarkilnError(f"{path}: cannot read ({exc.strerror or exc})") from None
    if start.startswith((b"\xff\xfe", b"\xfe\xff")):  # UTF-16 or UTF-32 byte-order marks
        raise csv_error(path, ValueError("UTF-16"))
    # The header first (pyarrow drops a UTF-8 byte-order mark): a small block is enough
    # for it, and the types pyarrow guesses for this first look are thrown away.
    for probe_bytes in (1 << 16, block_bytes):
        try:
            with pcsv.open_csv(path, read_options=pcsv.ReadOptions(block_size=probe_bytes),
                               convert_options=pcsv.ConvertOptions(
                                   column_types={}, strings_can_be_null=True)) as probe:
                names = probe.schema.names
            break
        except Exception as exc:
            if probe_bytes == block_bytes:
                raise csv_error(path, exc) from None
    convert = pcsv.ConvertOptions(column_types={n: pa.string() for n in names},
                                  null_values=[""], strings_can_be_null=True,
                                  quoted_strings_can_be_null=True)
    return pcsv.ReadOptions(block_size=block_bytes), convert


def read_csv_text(path):
    """A whole CSV file as a pyarrow Table with every column as text (see :class:`StreamSource`).

    Parameters
    ----------
    path : path
        The CSV file (UTF-8, with or without a byte-order mark).

    Returns
    -------
    pyarrow.Table
        One string column per CSV column, names exactly as in the header (duplicates and
        empty names kept); empty cells are nulls.

    Raises
    ------
    starkiln.engine.errors.StarkilnError
        One line: the file and what is wrong with it.

    References
    ----------
    Apache Arrow documentation, ``pyarrow.csv.read_csv``, ``ConvertOptions.column_types``.
    """
    import pyarrow.csv as pcsv

    read, convert = _csv_options(path, CSV_BLOCK_BYTES)
    try:
        return pcsv.read_csv(path, read_options=read, convert_options=convert)
    except Exception as exc:
        raise csv_error(path, exc) from None


def open_csv_text(path):
    """A streaming reader over a CSV file with every column as text (``pyarrow.csv.open_csv``).

    Parameters
    ----------
    path : path
        The CSV file.

    Returns
    -------
    pyarrow.csv.CSVStreamingReader
        Blocks of :data:`CSV_BLOCK_BYTES` bytes of text.
    """
    import pyarrow.csv as pcsv

    read, convert = _csv_options(path, CSV_BLOCK_BYTES)
    try:
        return pcsv.open_csv(path, read_options=read, convert_options=convert)
    except Exception as exc:
        raise csv_error(path, exc) from None


def parquet_writer(path, schema):
    """A ``pyarrow.parquet.ParquetWriter`` for catalogue output: snappy compression,
    dictionary encoding for the text columns (the status column among them).

    Parameters
    ----------
    path : path
        File to write (usually a temporary path, renamed when finished).
    schema : pyarrow.Schema
        The output schema.

    Returns
    -------
    pyarrow.parquet.ParquetWriter
    """
    import pyarrow as pa
    import pyarrow.parquet as pq

    dictionary = [f.name for f in schema
                  if pa.types.is_string(f.type) or pa.types.is_large_string(f.type)
                  or pa.types.is_dictionary(f.type)]
    return pq.ParquetWriter(str(path), schema, compression="snappy",
                            use_dictionary=dictionary or False)


#: Cells that a CSV writer must put between double quotes (RFC 4180, section 2).
_NEEDS_QUOTES = r'[",\r\n]'


def csv_cells(arr):
    """One column as CSV cell text: numbers as pyarrow writes them, text exactly as it is,
    double quotes only around the cells that need them (RFC 4180), nulls empty.

    Parameters
    ----------
    arr : pyarrow.Array or pyarrow.ChunkedArray

    Returns
    -------
    pyarrow.StringArray
        No nulls.

    References
    ----------
    RFC 4180, "Common Format and MIME Type for Comma-Separated Values (CSV) Files",
    section 2 (fields holding double quotes, commas or line breaks are quoted; a double
    quote inside is doubled); Apache Arrow compute functions ``cast``,
    ``match_substring_regex``, ``replace_substring``.
    """
    import pyarrow as pa
    import pyarrow.compute as pc

    if isinstance(arr, pa.ChunkedArray):
        arr = arr.combine_chunks()
    if pa.types.is_dictionary(arr.type):
        arr = arr.cast(arr.type.value_type)
    if not pa.types.is_string(arr.type):
        try:
            arr = pc.cast(arr, pa.string())
        except (pa.ArrowInvalid, pa.ArrowNotImplementedError):
            raise StarkilnError(f"a column holding {arr.type} cannot be written as CSV; "
                                "accepted: numbers, text, dates, true/false (or write "
                                "Parquet)") from None
    arr = pc.fill_null(arr, "")
    needs = pc.match_substring_regex(arr, _NEEDS_QUOTES)
    if pc.any(needs).as_py():
        quoted = pc.binary_join_element_wise('"', pc.replace_substring(arr, '"', '""'), '"',
                                             "")
        arr = pc.if_else(needs, quoted, arr)
    return arr


class CsvWriter:
    """CSV output written batch by batch: :func:`csv_cells` for every column, comma-separated,
    one line per row ending in ``\\n``; the header is the column names, written the same way.

    Both catalogue paths (small files and streamed ones) write CSV through this class, so a
    table comes out byte for byte the same whichever path it takes. A batch in which no cell
    needs quotes is written by ``pyarrow.csv.write_csv`` with ``quoting_style="none"`` (the
    same text: numbers through the same cast, text as it is; pyarrow refuses the batch when
    a cell needs quotes), the others cell by cell.

    Parameters
    ----------
    path : path
        File to write.
    schema : pyarrow.Schema
        The output schema (the header row).
    """

    def __init__(self, path, schema):
        import pyarrow as pa
        import pyarrow.csv as pcsv

        self._sink = pa.OSFile(str(path), "wb")
        self._plain = pcsv.WriteOptions(include_header=False, quoting_style="none")
        self._write_lines([pa.array([name], pa.string()) for name in schema.names])

    def _write_lines(self, columns):
        import numpy as np
        import pyarrow as pa
        import pyarrow.compute as pc

        cells = [csv_cells(c) for c in columns]
        if not cells or len(cells[0]) == 0:
            return
        lines = pc.binary_join_element_wise(*cells, ",")
        # Each line, then "\n" (the separator before an empty last piece): one buffer of text.
        data = pc.binary_join_element_wise(lines, "", "\n").cast(pa.large_string())
        bounds = np.frombuffer(data.buffers()[1], dtype=np.int64)[
            data.offset: data.offset + len(data) + 1]
        self._sink.write(memoryview(data.buffers()[2])[int(bounds[0]): int(bounds[-1])])

    def write_batch(self, batch):
        """Append the rows of a RecordBatch or Table."""
        import pyarrow.csv as pcsv

        import pyarrow as pa

        if batch.num_rows == 0:
            return
        # pyarrow refuses (ArrowInvalid) a cell holding a comma, a quote or a line break
        # when asked for no quotes: then this batch is written cell by cell.
        buf = pa.BufferOutputStream()
        try:
            pcsv.write_csv(batch, buf, self._plain)
        except (pa.ArrowInvalid, pa.ArrowNotImplementedError, pa.ArrowTypeError):
            self._write_lines(list(batch.columns))
        else:
            self._sink.write(buf.getvalue())

    write_table = write_batch

    def close(self):
        """Finish the file."""
        self._sink.close()
