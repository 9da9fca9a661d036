"""``--engine dask``: the same per-partition function on a Dask cluster equals the local path.

Every cluster here is a ``distributed.LocalCluster`` on this machine only: in-process
workers (``processes=False``, in-process transport) or worker processes on 127.0.0.1.
Outputs are read back with pyarrow (the reference Parquet reader).
"""

from __future__ import annotations

import os
from pathlib import Path

import numpy as np
import pytest

pa = pytest.importorskip("pyarrow")
pq = pytest.importorskip("pyarrow.parquet")
pytest.importorskip("dask.dataframe")
distributed = pytest.importorskip("distributed")
pd = pytest.importorskip("pandas")
pytestmark = pytest.mark.filterwarnings("ignore:The inplace keyword")

from starkiln.engine.catalogue.plan import CataloguePlan  # noqa: E402
from starkiln.engine.catalogue.run import colour_catalogue  # noqa: E402
from starkiln.engine.catalogue.dask_engine import colour_catalogue_dask  # noqa: E402
from starkiln.cli.main import main  # noqa: E402
from starkiln.engine.pipeline.settings import Settings  # noqa: E402


def make_parts(folder, n_files=3, rows=4000, seed=3):
    """Parquet files with several row groups, nulls, NaN, text and out-of-range values."""
    folder.mkdir()
    rng = np.random.default_rng(seed)
    for i in range(n_files):
        teff = rng.uniform(300, 110000, rows)
        teff[::53] = np.nan
        bv = rng.uniform(-0.6, 2.2, rows)
        ids = np.arange(rows) + i * rows
        table = pa.table({
            "star": [f"star-{k}" for k in ids],
            "teff": pa.array(teff, mask=(ids % 61 == 0)),
            "bv": bv,
            "n": pa.array(ids, pa.int64()),
        })
        # names sort naturally, not as text: part-2 before part-10
        pq.write_table(table, folder / f"part-{i * 5}.parquet", row_group_size=1500)
    return folder


def read_parts(path):
    # The parts, and beside them the folder's mark (a hidden manifest, see test_catalogue_safety).
    files = sorted(f for f in os.listdir(path) if f != ".starkiln-parts.json")
    assert files == [f"part.{i:05d}.parquet" for i in range(len(files))]
    assert (Path(path) / ".starkiln-parts.json").is_file()
    return pq.read_table(path).to_pandas(types_mapper=pd.ArrowDtype)


def assert_same(local_file, dask_folder):
    a = pq.read_table(local_file).to_pandas(types_mapper=pd.ArrowDtype)
    b = read_parts(dask_folder)
    pd.testing.assert_frame_equal(a, b, check_exact=True)


@pytest.mark.parametrize("source,column", [("temperature", "teff"), ("bv", "bv")])
def test_dask_equals_the_single_machine_path(tmp_path, source, column):
    src = make_parts(tmp_path / "in")
    plan = CataloguePlan(Settings(display="display-p3"), source, column)
    local = colour_catalogue(src, tmp_path / "local.parquet", plan)
    summary = colour_catalogue_dask(src, tmp_path / "out", plan, n_workers=1, processes=False)
    assert summary.rows == local.rows == 12000
    assert summary.counts == local.counts
    assert summary.parts >= 3
    assert_same(tmp_path / "local.parquet", tmp_path / "out")


def test_dask_dereddens_as_the_single_machine_path(tmp_path):
    # --deredden (a fixed E(B-V)) on the workers: the same rows, colours and statuses.
    src = make_parts(tmp_path / "in", n_files=2, rows=2000)
    plan = CataloguePlan(Settings(), "bv", "bv", deredden_ebv=0.25)
    local = colour_catalogue(src, tmp_path / "local.parquet", plan)
    summary = colour_catalogue_dask(src, tmp_path / "out", plan, n_workers=1, processes=False)
    assert summary.counts == local.counts and local.counts["too-blue-for-dust"] > 0
    assert_same(tmp_path / "local.parquet", tmp_path / "out")


def test_dask_equals_the_single_machine_path_with_magnitudes(tmp_path, monkeypatch):
    import starkiln.engine.catalogue.plan as catalogue_plan
    monkeypatch.setattr(catalogue_plan, "EXACT_ROWS_WITH_MAGNITUDE", 0)  # through the 2-D grid
    src = tmp_path / "in"
    src.mkdir()
    rng = np.random.default_rng(8)
    for i in range(2):
        n = 3000
        bp = rng.uniform(-0.3, 3.2, n)
        g = rng.uniform(-2.0, 12.0, n)
        g[::41] = np.nan
        pq.write_table(pa.table({"bp_rp": bp, "gmag": g}), src / f"p{i}.parquet",
                       row_group_size=1000)
    for k, plan in enumerate((
            CataloguePlan(Settings(), "bp-rp", "bp_rp", magnitude_column="gmag",
                          magnitude_band="G", extrapolate_bp_rp=True, index_model="relation"),
            CataloguePlan(Settings(), "bp-rp", "bp_rp", magnitude_column="gmag",
                          magnitude_band="G"))):  # synthetic photometry, the default
        colour_catalogue(src, tmp_path / f"local{k}.parquet", plan)
        colour_catalogue_dask(src, tmp_path / f"out{k}", plan, n_workers=1, processes=False)
        assert_same(tmp_path / f"local{k}.parquet", tmp_path / f"out{k}")


def test_existing_scheduler_address_and_force(tmp_path):
    src = make_parts(tmp_path / "in", n_files=2, rows=2000)
    plan = CataloguePlan(Settings(), "temperature", "teff")
    colour_catalogue(src, tmp_path / "local.parquet", plan)
    with distributed.LocalCluster(n_workers=1, threads_per_worker=1, processes=False,
                                  dashboard_address=None) as cluster:
        out = tmp_path / "out"
        # An earlier run's folder (more parts than this run writes): --force replaces it.
        colour_catalogue_dask(make_parts(tmp_path / "earlier", n_files=3, rows=300), out, plan,
                              scheduler=cluster.scheduler_address)
        stale = "part.00002.parquet"
        assert (out / stale).exists()
        with pytest.raises(Exception, match="--force"):
            colour_catalogue_dask(src, out, plan, scheduler=cluster.scheduler_address)
        colour_catalogue_dask(str(src / "*.parquet"), out, plan,
                              scheduler=cluster.scheduler_address, overwrite=True)
    assert not (out / stale).exists()
    assert_same(tmp_path / "local.parquet", out)
    # No temporary folder is left beside the output.
    assert sorted(os.listdir(tmp_path)) == ["earlier", "in", "local.parquet", "out"]


def test_cli_local_cluster_on_loopback(tmp_path, capsys):
    src = make_parts(tmp_path / "in", n_files=2, rows=1000)
    code = main(["catalogue", str(src), str(tmp_path / "out"), "--engine", "dask",
                 "--workers", "1", "--temperature-column", "teff", "--no-progress"])
    assert code == 0, capsys.readouterr().err
    assert "2,000 rows" in capsys.readouterr().out
    assert len(read_parts(tmp_path / "out")) == 2000


@pytest.mark.parametrize("make,out,fragment", [
    (lambda p: (p / "in.csv").write_text("teff\n5000\n") and p / "in.csv", "out", "Parquet"),
    (lambda p: make_parts(p / "in", 1, 10), "out.csv", "folder of Parquet parts"),
    (lambda p: make_parts(p / "in", 1, 10), "missing/out", "does not exist"),
])
def test_dask_bad_input_exits_2_before_any_cluster(tmp_path, capsys, make, out, fragment):
    src = make(tmp_path)
    code = main(["catalogue", str(src), str(tmp_path / out), "--engine", "dask",
                 "--temperature-column", "teff", "--no-progress"])
    err = capsys.readouterr().err.strip().splitlines()
    assert code == 2 and len(err) == 1 and fragment in err[0], err
    assert not (tmp_path / out).exists()
