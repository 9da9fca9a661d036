"""Streamed catalogue files: Parquet and large CSV read in chunks, written chunk by chunk (pyarrow).

:class:`StreamSource` reads Parquet files (a few row groups at a time) or one
CSV file (blocks of :data:`CSV_BLOCK_BYTES`) as RecordBatches of at most
``chunk_rows`` rows, so memory stays flat whatever the row count.
:func:`parquet_writer` and :class:`CsvWriter` write the coloured batches one
after the other. A CSV column whose type changes after the first block raises
:class:`CsvTypeDrift`, and the run starts again reading every column as text.

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


class CsvTypeDrift(Exception):
    """A CSV column changed type after the first block (restart with text columns)."""


class StreamSource:
    """Parquet files or one large CSV file, read in chunks through pyarrow.

    Parameters
    ----------
    files : list of Path
        Parquet files (all with the same columns), or one CSV file.
    fmt : str
        ``parquet`` or ``csv``.
    plan : CataloguePlan
    chunk_rows : int
        Most rows per batch.

    Attributes
    ----------
    schema : pyarrow.Schema
        The input's columns.
    num_rows : int or None
        Rows of the Parquet files (None for CSV: unknown until read).
    """

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
            raise StarkilnError(f"{path}: cannot read as CSV ({first_line(exc)})") from None

    def text_version(self) -> "StreamSource":
        """The same CSV source with every column read as text (after a type drift)."""
        clone = object.__new__(StreamSource)
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
                                            f"({first_line(exc)})") from None
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
                    raise CsvTypeDrift(str(exc)) from None
                raise StarkilnError(f"{self.files[0]}: cannot read as CSV "
                                    f"({first_line(exc)})") from None
            for start in range(0, batch.num_rows, self.chunk_rows):
                yield batch.slice(start, self.chunk_rows)


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


class CsvWriter:
    """CSV output written batch by batch (``pyarrow.csv.CSVWriter``, quoting only where needed).

    Parameters
    ----------
    path : path
        File to write.
    schema : pyarrow.Schema
        The output schema (the header row).
    """

    def __init__(self, path, schema):
        import pyarrow.csv as pcsv

        self._w = pcsv.CSVWriter(str(path), schema,
                                 write_options=pcsv.WriteOptions(quoting_style="needed"))

    def write_batch(self, batch):
        """Append the rows of a RecordBatch."""
        self._w.write_batch(batch)

    def close(self):
        """Finish the file."""
        self._w.close()
