"""Catalogues on a Dask cluster: the same per-partition function over Parquet parts.

``dask.dataframe.read_parquet`` splits a Parquet file, folder or glob into
partitions (files in natural order); every partition goes through
:func:`starkiln.engine.catalogue.colouring.colour_partition` (which calls the same
:func:`starkiln.engine.catalogue.colouring.colour_values` as the single-machine path) and is
written by its worker as ``part.NNNNN.parquet`` into a new folder beside the
output (made by ``mkdir``, so it follows the umask); when every part is written,
the manifest :data:`starkiln.engine.catalogue.output_guard.MANIFEST_NAME` that lists
them is added and the folder is renamed to the output name. ``--force`` replaces
only a folder a run like this wrote (marked, nothing else in it), and never an
input (:mod:`starkiln.engine.catalogue.output_guard`). Read in order, the parts hold the rows of the single-machine
output, in the same order, with the same values.

The scheduler is a ``distributed.LocalCluster`` on this machine (loopback
only) unless an address ``tcp://HOST:PORT`` of a running scheduler is given.
Workers of a real cluster need the same version of Starkiln installed and
must see the input and output paths (a shared file system).
"""

from __future__ import annotations

import contextlib
import dataclasses
import os
import shutil
import time
from pathlib import Path

import numpy as np

from starkiln.engine.catalogue.colouring import colour_partition
from starkiln.engine.catalogue.columns import output_schema
from starkiln.engine.catalogue.formats import FORMATS, first_line, format_of, input_files
from starkiln.engine.catalogue.output_guard import (check_replaceable, folder_beside,
                                                    refuse_same_file, remove_marked_folder,
                                                    write_manifest)
from starkiln.engine.catalogue.plan import STATUSES, CataloguePlan, status_counts
from starkiln.engine.catalogue.run import Summary, progress_bar
from starkiln.engine.catalogue.streaming import parquet_writer
from starkiln.engine.errors import StarkilnError


def _check_output_folder(output: Path, overwrite: bool) -> None:
    from starkiln.engine.atomic import check_writable

    check_writable(output, overwrite, folder_output=True)
    if output.exists() and not output.is_dir():
        raise StarkilnError(f"{output} exists and is not a folder; --engine dask writes a "
                            "folder of Parquet parts")
    if FORMATS.get(output.suffix.lower(), "parquet") != "parquet":
        raise StarkilnError(f"{output}: --engine dask writes a folder of Parquet parts, not "
                            f"a {output.suffix} file")


def parquet_inputs(input_spec) -> list[Path]:
    """The Parquet files of a file, folder or glob, for ``--engine dask``.

    Parameters
    ----------
    input_spec : path
        A Parquet file, a folder of ``*.parquet`` files, or a glob.

    Returns
    -------
    list of Path
        In natural order (:func:`starkiln.engine.catalogue.formats.input_files`).

    Raises
    ------
    StarkilnError
        Nothing matches, or a file is not Parquet.

    References
    ----------
    Dask documentation: ``dask.dataframe.read_parquet`` (file, folder or glob).
    """
    files = input_files(input_spec)
    for f in files:
        if format_of(f, "input") != "parquet":
            raise StarkilnError(f"{f}: --engine dask reads Parquet (a file, a folder or a "
                                "glob of .parquet files)")
    return files


def parquet_schema_rows(files):
    """The shared schema and the total row count of Parquet files (footers only).

    Parameters
    ----------
    files : list of Path
        From :func:`parquet_inputs`.

    Returns
    -------
    (pyarrow.Schema, int)

    Raises
    ------
    StarkilnError
        A file is not readable as Parquet, or its columns differ from the first file's.

    References
    ----------
    Apache Parquet file format (schema and row counts in the footer), read by pyarrow.
    """
    import pyarrow.parquet as pq

    schema_in, rows = None, 0
    for f in files:
        try:
            schema = pq.read_schema(f)
            n = pq.ParquetFile(f).metadata.num_rows
        except Exception as exc:
            raise StarkilnError(f"{f}: cannot read as Parquet ({first_line(exc)})") from None
        if schema_in is None:
            schema_in = schema
        elif not schema.remove_metadata().equals(schema_in.remove_metadata()):
            raise StarkilnError(f"{f}: its columns differ from those of {files[0]}; every "
                                "file needs the same columns")
        rows += n
    return schema_in, rows



def check_scheduler_address(scheduler: str) -> str:
    """Check the form of a scheduler address (``tcp://``, ``tls://`` or ``inproc://``).

    Parameters
    ----------
    scheduler : str

    Returns
    -------
    str
        The address.

    Raises
    ------
    StarkilnError
        Another form.

    References
    ----------
    Dask documentation: ``distributed.Client`` (scheduler addresses, comm protocols).
    """
    if not str(scheduler).startswith(("tcp://", "tls://", "inproc://")):
        raise StarkilnError(f"scheduler {scheduler!r} not understood; accepted: "
                            "tcp://HOST:PORT")
    return scheduler

@contextlib.contextmanager
def dask_client(scheduler: str | None = None, n_workers: int | None = None,
                processes: bool = True):
    """A ``distributed.Client``: to a running scheduler, or to a new local cluster.

    Parameters
    ----------
    scheduler : str, optional
        Address ``tcp://HOST:PORT`` (or ``tls://``, ``inproc://``) of a running scheduler.
    n_workers : int, optional
        Without ``scheduler``: local workers, one thread each (default: one per core).
    processes : bool
        Local workers as processes on 127.0.0.1 (default) or threads in this process.

    Yields
    ------
    distributed.Client
        Closed (and the local cluster with it) when the block ends.

    Raises
    ------
    StarkilnError
        Dask is not installed, the address is not understood or not reachable.

    References
    ----------
    Dask documentation: ``distributed.LocalCluster``, ``distributed.Client``.
    """
    try:
        import dask  # noqa: F401
        import dask.dataframe  # noqa: F401
        from distributed import Client, LocalCluster
    except ImportError:
        raise StarkilnError("--engine dask needs Dask: install it with "
                            "'pip install \"starkiln[cluster]\"' (dask[dataframe], distributed)"
                            ) from None
    if scheduler:
        check_scheduler_address(scheduler)
        try:
            client = Client(scheduler, timeout="10s")
        except (OSError, TimeoutError) as exc:
            raise StarkilnError(f"cannot reach the Dask scheduler at {scheduler} "
                                f"({first_line(exc)})") from None
        cluster = None
    else:
        workers = n_workers or os.cpu_count() or 1
        # Loopback only: worker processes talk over 127.0.0.1; thread workers in-process.
        where = {"host": "127.0.0.1"} if processes else {}
        cluster = LocalCluster(n_workers=workers, threads_per_worker=1, processes=processes,
                               dashboard_address=None, **where)
        client = Client(cluster)
    try:
        yield client
    finally:
        client.close()
        if cluster is not None:
            cluster.close()


def write_part(frame, path: str, schema) -> np.ndarray:
    """Write one coloured partition as Parquet (run on a worker); returns rows per status.

    Parameters
    ----------
    frame : pandas.DataFrame
        A partition from :func:`starkiln.engine.catalogue.colouring.colour_partition`.
    path : str
        Part file to write.
    schema : pyarrow.Schema
        The output schema (the same as the single-machine path's).

    Returns
    -------
    numpy.ndarray
        Rows per status, aligned with :data:`starkiln.engine.catalogue.plan.STATUSES`.
    """
    import pyarrow as pa
    import pyarrow.compute as pc

    table = pa.Table.from_pandas(frame, preserve_index=False).cast(schema)
    writer = parquet_writer(path, schema)
    try:
        writer.write_table(table)
    finally:
        writer.close()
    counts = np.zeros(len(STATUSES), dtype=np.int64)
    status = table.column(schema.names[-1])
    for item in pc.value_counts(status).to_pylist():
        counts[STATUSES.index(item["values"])] = item["counts"]
    return counts


def colour_catalogue_dask(input_spec, output, plan: CataloguePlan, *, overwrite: bool = False,
                          scheduler: str | None = None, n_workers: int | None = None,
                          processes: bool = True, progress: bool = False,
                          blocksize: str | None = None) -> Summary:
    """Colour a Parquet file, folder or glob with Dask; write a folder of Parquet parts.

    Parameters
    ----------
    input_spec : path
        A Parquet file, a folder of ``*.parquet`` files, or a glob.
    output : path
        Output folder (created; replaced with ``overwrite``).
    plan : CataloguePlan
    overwrite : bool
        Replace an existing output folder.
    scheduler : str, optional
        Address of a running scheduler (``tcp://HOST:PORT``); default a local cluster.
    n_workers : int, optional
        Workers of the local cluster (default: one per core, one thread each).
    processes : bool
        Local cluster workers as processes (default) or threads in this process.
    progress : bool
        Progress bar over the parts on stderr.
    blocksize : str, optional
        Target partition size handed to ``dask.dataframe.read_parquet`` (e.g. "64MiB");
        default one partition per row group group chosen by Dask.

    Returns
    -------
    Summary

    References
    ----------
    Dask documentation: ``dask.dataframe.read_parquet``, ``DataFrame.map_partitions``,
    ``distributed.LocalCluster``, ``distributed.Client``.
    """
    t0 = time.perf_counter()
    files = parquet_inputs(input_spec)
    output = Path(output)
    _check_output_folder(output, overwrite)
    refuse_same_file(files, output, folder_output=True)
    if output.is_symlink():
        raise StarkilnError(f"{output} is a symbolic link; accepted: a folder path that is "
                            "not a link (--force replaces a folder, never a link's target)")
    if output.exists():
        check_replaceable(output)
    schema_in, rows = parquet_schema_rows(files)
    schema = output_schema(schema_in, plan, str(files[0]))
    # One thread per partition on a worker: the workers are the parallelism.
    plan = dataclasses.replace(plan.for_rows(rows), threads=1)

    with dask_client(scheduler, n_workers, processes) as client:
        import dask
        import dask.dataframe as dd
        from distributed import as_completed

        tmp = folder_beside(output)
        try:
            with dask.config.set({"dataframe.convert-string": False}):
                kwargs = {"blocksize": blocksize} if blocksize else {}
                ddf = dd.read_parquet([str(f) for f in files], dtype_backend="pyarrow",
                                      index=False, **kwargs)
                meta = colour_partition(ddf._meta, plan)
                coloured = ddf.map_partitions(colour_partition, plan, meta=meta)
                parts = coloured.to_delayed()
            names = [f"part.{i:05d}.parquet" for i in range(len(parts))]
            tasks = [dask.delayed(write_part)(p, str(tmp / name), schema)
                     for name, p in zip(names, parts)]
            futures = client.compute(tasks)
            counts = np.zeros(len(STATUSES), dtype=np.int64)
            with progress_bar(len(futures), progress, unit="part") as bar:
                for fut in as_completed(futures):
                    counts += fut.result()
                    bar.update(1)
            write_manifest(tmp, names, plan)
            _replace_folder(tmp, output, overwrite)
        except BaseException:
            shutil.rmtree(tmp, ignore_errors=True)
            raise
    rows = int(counts.sum())
    return Summary(rows, status_counts(counts), time.perf_counter() - t0, str(output),
                   engine="dask", parts=len(tasks))


def _replace_folder(tmp: Path, output: Path, overwrite: bool) -> None:
    """Rename the finished folder ``tmp`` to ``output``; an old output (checked again here:
    marked, nothing unlisted) is moved aside first and only its listed files are deleted."""
    if output.exists() or output.is_symlink():
        if not overwrite:
            raise StarkilnError(f"{output} exists; pass --force to overwrite it")
        if output.is_symlink() or not output.is_dir():
            raise StarkilnError(f"{output} is not a folder; --engine dask writes a folder of "
                                "Parquet parts")
        names = check_replaceable(output)
        old = folder_beside(output, "old")
        os.replace(output, old / output.name)
        os.replace(tmp, output)
        remove_marked_folder(old / output.name, names)
        try:
            os.rmdir(old)
        except OSError:
            pass
    else:
        os.replace(tmp, output)
