"""Star plates on a Dask cluster: partitions drawn on the workers, images summed in a tree.

``dask.dataframe.read_parquet`` splits a Parquet file, folder or glob into partitions (only
the RA, Dec and colour columns are read). Each partition is drawn by a worker into a plate of
its own with the same :func:`starkiln.engine.plates.run.draw_chunk` as the single-machine
command (the one render path, the same projection and drawing), and the partial plates are
summed, with their skip counts, by a tree reduction on the cluster
(``dask.bag.Bag.reduction`` with ``split_every``, :data:`SPLIT_EVERY` plates per sum): no task
receives more than ``split_every`` plates, the client never holds the partial plates, and
only the finished plate comes back to it.

Memory: every worker holds the plate it is drawing and the plates it is summing (about
``split_every + 1`` plates at once); the client holds the finished plate. The cluster comes
from :func:`starkiln.engine.catalogue.dask_engine.dask_client` (a local cluster on 127.0.0.1
unless an address is given), as for ``starkiln catalogue --engine dask``.
"""

from __future__ import annotations

import dataclasses

import numpy as np

#: Plates summed by one reduction task: 2 makes a binary tree, depth ceil(log2 partitions).
SPLIT_EVERY = 2


def draw_partition(frame, shape, dtype, plan, names, ra_column, dec_column, spec, draw_kw):
    """Draw one Dask partition into a new plate (run on a worker).

    Parameters
    ----------
    frame : pandas.DataFrame
        The partition (pyarrow-backed columns, as ``read_parquet`` gives them).
    shape : tuple of int
        The plate's array shape (the same as the client's image).
    dtype : numpy dtype
        The plate's element type.
    plan : CataloguePlan
    names : list of str
        The columns the drawing reads (RA, Dec and the plan's input columns).
    ra_column, dec_column : str
    spec : PlateSpec
    draw_kw : dict
        The remaining keywords of :func:`starkiln.engine.plates.run.draw_chunk`
        (``psf_sigma_px``, ``values``, ``frame``).

    Returns
    -------
    list of (numpy.ndarray, dict)
        One pair, this partition's plate and its counts (a bag partition is a sequence).

    References
    ----------
    :func:`starkiln.engine.plates.run.draw_chunk`; Dask documentation:
    ``dask.bag.from_delayed``.
    """
    import pyarrow as pa

    from starkiln.engine.catalogue.columns import arrow_values
    from starkiln.engine.plates.run import draw_chunk

    table = pa.Table.from_pandas(frame, preserve_index=False)
    columns = {n: arrow_values(table.column(n)) for n in names}
    image = np.zeros(shape, dtype=dtype)
    counts = draw_chunk(image, plan, columns, ra_column, dec_column, spec, **draw_kw)
    return [(image, counts)]


def sum_plates(items):
    """Sum plates and their counts (one step of the tree reduction; never changes its inputs).

    Parameters
    ----------
    items : iterable of (numpy.ndarray, dict)
        Plates of one shape and their counts.

    Returns
    -------
    (numpy.ndarray, dict)
        The summed plate (the input itself when there is only one) and the summed counts.

    References
    ----------
    Dask documentation: ``dask.bag.Bag.reduction`` (``perpartition`` and ``aggregate``).
    """
    total, owned, counts = None, False, {}
    for image, part_counts in items:
        if total is None:
            total = image
        elif owned:
            total += image
        else:
            total = total + image
            owned = True
        merge_counts(counts, part_counts)
    return total, counts


def merge_counts(counts: dict, more: dict) -> dict:
    """Add the counts ``more`` into ``counts`` (in place) and return it."""
    for key, n in more.items():
        counts[key] = counts.get(key, 0) + n
    return counts


def plate_reduction(files, plan, names, ra_column, dec_column, spec, shape, dtype, *,
                    blocksize=None, split_every: int = SPLIT_EVERY, **draw_kw):
    """The lazy plate: partitions drawn, then summed by a tree reduction.

    Parameters
    ----------
    files : list of path
        Parquet files (:func:`starkiln.engine.catalogue.dask_engine.parquet_inputs`).
    plan, names, ra_column, dec_column, spec, shape, dtype
        As for :func:`draw_partition`.
    blocksize : str, optional
        Target partition size for ``dask.dataframe.read_parquet`` (e.g. ``"64MiB"``).
    split_every : int
        Plates per reduction task (>= 2).
    **draw_kw
        Keywords of :func:`starkiln.engine.plates.run.draw_chunk`.

    Returns
    -------
    (dask.bag.Item, int)
        The lazy ``(plate, counts)`` pair and the number of partitions.

    References
    ----------
    Dask documentation: ``dask.dataframe.read_parquet``, ``DataFrame.to_delayed``,
    ``dask.bag.from_delayed``, ``dask.bag.Bag.reduction`` (``split_every``).
    """
    import dask
    import dask.bag as db
    import dask.dataframe as dd

    kwargs = {"blocksize": blocksize} if blocksize else {}
    with dask.config.set({"dataframe.convert-string": False}):
        ddf = dd.read_parquet([str(f) for f in files], columns=list(names),
                              dtype_backend="pyarrow", index=False, **kwargs)
        parts = ddf.to_delayed()
    draw = dask.delayed(draw_partition)
    drawn = [draw(p, tuple(shape), np.dtype(dtype), plan, list(names), ra_column, dec_column,
                  spec, draw_kw, dask_key_name=f"plate-partition-{i}")
             for i, p in enumerate(parts)]
    bag = db.from_delayed(drawn)
    item = bag.reduction(sum_plates, sum_plates, split_every=max(2, int(split_every)),
                         name="plate-sum")
    return item, len(parts)


def draw_plate_dask(image, input_spec, plan, names, ra_column, dec_column, spec, *,
                    counts=None, scheduler=None, n_workers=None, processes=True,
                    blocksize=None, split_every: int = SPLIT_EVERY, **draw_kw):
    """Draw a Parquet catalogue into ``image`` (in place) on a Dask cluster.

    Parameters
    ----------
    image : ndarray
        The plate (zeros, or a plate to add to), as for
        :func:`starkiln.engine.plates.run.draw_chunk`; the workers draw into plates of its
        shape and type.
    input_spec : path
        A Parquet file, a folder of ``*.parquet`` files, or a glob.
    plan : CataloguePlan
    names : list of str
        The columns to read (RA, Dec and the plan's input columns).
    ra_column, dec_column : str
    spec : PlateSpec
    counts : dict, optional
        Updated in place with the summed counts (``drawn``, the skip reasons).
    scheduler, n_workers, processes
        The cluster, as :func:`starkiln.engine.catalogue.dask_engine.dask_client` takes them.
    blocksize : str, optional
        Target partition size for ``dask.dataframe.read_parquet``.
    split_every : int
        Plates per reduction task (default :data:`SPLIT_EVERY`).
    **draw_kw
        ``psf_sigma_px``, ``values``, ``frame``: as for ``draw_chunk``.

    Returns
    -------
    (dict, int)
        ``counts`` and the number of partitions drawn.

    Raises
    ------
    StarkilnError
        An input that is not Parquet or not readable, files with different columns, a
        missing column, Dask not installed or a scheduler not reachable (all before any
        drawing).

    References
    ----------
    :func:`plate_reduction`; Dask documentation: ``distributed.Client.compute``.
    """
    from starkiln.engine.catalogue.dask_engine import (dask_client, parquet_inputs,
                                                       parquet_schema_rows)
    from starkiln.engine.plates.run import check_names

    counts = {} if counts is None else counts
    files = parquet_inputs(input_spec)
    schema, _rows = parquet_schema_rows(files)
    check_names(list(schema.names), list(names), files[0])
    # One thread per partition on a worker: the workers are the parallelism (the colours
    # do not depend on the split, colour_values).
    plan = dataclasses.replace(plan, threads=1)
    with dask_client(scheduler, n_workers, processes) as client:
        item, n_parts = plate_reduction(files, plan, names, ra_column, dec_column, spec,
                                        image.shape, image.dtype, blocksize=blocksize,
                                        split_every=split_every, **draw_kw)
        total, part_counts = client.compute(item).result()
    if total is not None:
        image += total
    merge_counts(counts, part_counts)
    return counts, n_parts
