"""``starkiln plate --engine dask``: partitions drawn on workers, summed by a tree on the cluster.

Every cluster here is a ``distributed.LocalCluster`` on this machine only: in-process workers
(``processes=False``, in-process transport), or worker processes on 127.0.0.1 for the one
command-line run that starts its own. Plates are read back with the OpenEXR bindings (the
reference EXR reader) and compared with the single-machine plate of the same stars.

Tolerance (dask plate against local plate): the local command adds every star into one float32
plate chunk after chunk; the dask engine draws each partition into a plate of its own and sums
the partial plates, so the same non-negative float32 terms are added in another order. Each
addition rounds by at most one unit roundoff 2^-24 ~ 6e-8 of the running sum (IEEE 754
binary32), so a pixel of k terms differs by at most about k * 6e-8 relative; the pixels here
have well under 100 terms: rtol 1e-5 (and atol 1e-9 for pixels that are zero in both). The
counts are integers and must agree exactly.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

pa = pytest.importorskip("pyarrow")
pq = pytest.importorskip("pyarrow.parquet")
pytest.importorskip("dask.dataframe")
pytest.importorskip("dask.bag")
distributed = pytest.importorskip("distributed")
pytestmark = pytest.mark.filterwarnings("ignore:The inplace keyword")

from starkiln.cli.main import main  # noqa: E402
from starkiln.engine.catalogue.plan import CataloguePlan  # noqa: E402
from starkiln.engine.pipeline.settings import Settings  # noqa: E402
from starkiln.engine.plates.dask_engine import (draw_plate_dask,  # noqa: E402
                                                plate_reduction)
from starkiln.engine.plates.projection import PlateSpec  # noqa: E402
from starkiln.engine.plates.run import draw_chunk, plate_chunks  # noqa: E402

RTOL, ATOL = 1e-5, 1e-9
BASE = ["--temperature-column", "teff", "--magnitude-column", "mag"]


def _stars(rng, n, first_id=0):
    """Invented stars, uniform on the sphere, with a few bad rows of each kind."""
    ra = rng.uniform(0.0, 360.0, n)
    dec = np.degrees(np.arcsin(rng.uniform(-1.0, 1.0, n)))
    teff = rng.uniform(2500.0, 30000.0, n)
    mag = rng.uniform(-1.0, 9.0, n)
    ids = np.arange(n) + first_id
    ra[ids % 97 == 5] = np.nan          # missing RA/Dec
    ra[ids % 89 == 7] = 400.0           # RA outside 0-360
    dec[ids % 83 == 9] = -95.0          # Dec outside -90..90
    teff[ids % 79 == 3] = 50.0          # the render path's range is 500-100000 K
    return pa.table({"ra": ra, "dec": dec, "teff": teff,
                     "mag": pa.array(mag, mask=(ids % 71 == 2))})


@pytest.fixture(scope="module")
def catalogue(tmp_path_factory):
    """The same 24 000 invented stars as one Parquet file and as a folder of 8 files."""
    root = tmp_path_factory.mktemp("plate-dask")
    rng = np.random.default_rng(13)
    parts = [_stars(rng, 3000, 3000 * i) for i in range(8)]
    folder = root / "parts"
    folder.mkdir()
    for i, t in enumerate(parts):
        pq.write_table(t, folder / f"stars-{i}.parquet")
    single = root / "all.parquet"
    pq.write_table(pa.concat_tables(parts), single)
    return single, folder


@pytest.fixture(scope="module")
def cluster():
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=False,
                                  dashboard_address="127.0.0.1:0") as c:
        yield c


def _plan():
    return CataloguePlan(Settings(), "temperature", "teff", magnitude_column="mag")


def _local(single, spec, **draw_kw):
    """The single-machine plate: the command's loop over streamed chunks."""
    plan = _plan()
    image = np.zeros((spec.height_px, spec.width_px, 3), np.float32)
    counts = {}
    for _, chunk in plate_chunks(single, plan, ["ra", "dec", "teff", "mag"], chunk_rows=5000):
        draw_chunk(image, plan, chunk, "ra", "dec", spec, counts=counts, **draw_kw)
    return image, counts


def _read_exr(path):
    import OpenEXR

    with OpenEXR.File(str(path), separate_channels=True) as f:
        ch = f.channels()
        return np.stack([ch[c].pixels for c in "RGB"], axis=-1)


@pytest.mark.parametrize("spec, draw_kw", [
    (PlateSpec("equirect", 256, 128), {"psf_sigma_px": 0.7}),
    (PlateSpec("fisheye", 160, 160, fov_deg=200.0), {"psf_sigma_px": 1.3}),
])
def test_dask_plate_equals_the_local_plate(catalogue, cluster, spec, draw_kw):
    single, folder = catalogue
    want, want_counts = _local(single, spec, **draw_kw)
    image = np.zeros_like(want)
    counts, n_parts = draw_plate_dask(image, folder, _plan(), ["ra", "dec", "teff", "mag"],
                                      "ra", "dec", spec, scheduler=cluster.scheduler_address,
                                      **draw_kw)
    assert n_parts == 8
    assert counts == want_counts
    # Every bad-row reason of _stars is counted, and every row is accounted for once.
    for reason in ("missing RA/Dec", "RA outside 0-360", "Dec outside -90..90",
                   "render-flagged"):
        assert counts[reason] > 0
    assert sum(counts.values()) == 24000
    assert want.max() > 0
    np.testing.assert_allclose(image, want, rtol=RTOL, atol=ATOL)


def test_the_reduction_is_a_tree_on_the_cluster(catalogue):
    # Dask's own graph (HighLevelGraph.get_all_dependencies): every plate-carrying task takes
    # at most split_every plates, none takes all partitions' plates, and the sums form
    # ceil(log2 8) = 3 levels of pairwise sums above the partitions.
    _, folder = catalogue
    spec = PlateSpec("equirect", 64, 32)
    files = sorted(folder.glob("*.parquet"))
    item, n_parts = plate_reduction(files, _plan(), ["ra", "dec", "teff", "mag"], "ra", "dec",
                                    spec, (32, 64, 3), np.float32, split_every=2,
                                    psf_sigma_px=0.7)
    assert n_parts == 8
    deps = {k: set(v) for k, v in item.__dask_graph__().get_all_dependencies().items()}
    drawn = {k for k in deps if str(k).startswith("plate-partition-")}
    assert len(drawn) == 8
    # Which partitions' plates flow into each task (transitively).
    carries = {}

    def carried(key):
        if key not in carries:
            carries[key] = ({key} if key in drawn else set()).union(
                *(carried(d) for d in deps[key])) if deps[key] or key in drawn else set()
        return carries[key]

    for key in deps:
        carried(key)
    plate_tasks = [k for k in deps if carries[k]]
    for key in plate_tasks:
        inputs = [d for d in deps[key] if carries[d]]
        assert len(inputs) <= 2, (key, inputs)
        assert not drawn <= set(inputs), key
    final = item.key
    assert carries[final] == drawn

    def depth(key):
        inputs = [d for d in deps[key] if carries[d]]
        merges = len(inputs) > 1
        return 0 if key in drawn else max(depth(d) for d in inputs) + merges

    assert depth(final) == math.ceil(math.log2(8))


def test_command_line_dask_plate_equals_the_local_plate(catalogue, cluster, tmp_path, capsys):
    single, folder = catalogue
    local, dask_out = tmp_path / "local.exr", tmp_path / "dask.exr"
    common = ["--size", "200", "--values", "flux", *BASE]
    assert main(["plate", str(single), str(local), *common]) == 0
    assert main(["plate", str(folder), str(dask_out), *common, "--engine", "dask",
                 "--scheduler", cluster.scheduler_address]) == 0
    captured = capsys.readouterr()
    assert "8 partitions drawn on the cluster" in captured.err
    from starkiln.engine.exports.image_files import read_embedded_json

    assert read_embedded_json(local)["counts"] == read_embedded_json(dask_out)["counts"]
    np.testing.assert_allclose(_read_exr(dask_out), _read_exr(local), rtol=RTOL, atol=ATOL)


def test_command_line_local_cluster_on_loopback_horizon_frame(catalogue, tmp_path, capsys):
    # Worker processes on 127.0.0.1: the plan, the site and the astropy Time travel to them.
    single, folder = catalogue
    local, dask_out = tmp_path / "local.exr", tmp_path / "dask.exr"
    common = ["--size", "96", "--projection", "fisheye", "--site=-12.25,40.5,300",
              "--time", "2026-09-02T03:15:00", *BASE]
    assert main(["plate", str(single), str(local), *common]) == 0
    assert main(["plate", str(folder / "*.parquet"), str(dask_out), *common,
                 "--engine", "dask", "--workers", "1"]) == 0
    capsys.readouterr()
    from starkiln.engine.exports.image_files import read_embedded_json

    counts = read_embedded_json(dask_out)["counts"]
    assert counts == read_embedded_json(local)["counts"] and counts["below horizon"] > 0
    np.testing.assert_allclose(_read_exr(dask_out), _read_exr(local), rtol=RTOL, atol=ATOL)


@pytest.mark.parametrize("make, extra, fragment", [
    (lambda p: p / "all.parquet", ["--workers", "2"], "--engine dask"),
    (lambda p: (p / "s.csv").write_text("ra,dec,teff,mag\n1,2,5000,3\n") and p / "s.csv",
     ["--engine", "dask"], "Parquet"),
    (lambda p: p / "all.parquet", ["--engine", "spark"], "--engine"),
    (lambda p: p / "all.parquet", ["--engine", "dask", "--scheduler", "tcp://x:1",
                                   "--workers", "2"], "--scheduler"),
    (lambda p: p / "all.parquet", ["--engine", "dask", "--scheduler", "nowhere"],
     "tcp://HOST:PORT"),
])
def test_bad_engine_input_exits_2_with_one_line(catalogue, tmp_path, capsys, make, extra,
                                                fragment):
    single, _ = catalogue
    src = make(single.parent)
    out = tmp_path / "plate.exr"
    assert main(["plate", str(src), str(out), "--size", "32", *BASE, *extra]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and fragment in err[0], err
    assert not out.exists()
