"""Benchmark: drawing star plates (issue 13, the engine core: projection + deposit).

Prints measured figures beside the goals, with ratios, in one run:

- 120 000 stars into a 4096 x 4096 fisheye (ARC), float32 RGB: goal < 1 s;
- 1 M and 10 M stars into an 8192 x 4096 equirectangular (CAR) float32 RGB plate, the stars
  streamed in chunks of 1 M (bounded memory: the image plus a chunk): goal 10 M < 20 s, peak
  resident memory < 2 GB (the 10 M run in a separate process);
- the slope in stars (s per million between 1 M and 10 M) and in pixels (the same 1 M stars on
  a plate of a quarter of the pixels);
- side by side, a plain per-star loop (each star its own small numpy slice, the same
  pixel-integrated Gaussian), timed on a sample and scaled: goal >= 50x. The drawing (numba's
  compiled loop, compiled and cached before the timing) runs each chunk on two threads
  (``drawing.THREADS``); the 1 M plate is also timed on one thread, so
  the ratio can be read either way (the loop is one thread);
- 1 M stars on a cube of six 2048^2 faces (footprints spilling over the edges), no goal;
- allocating and zeroing the 8192 x 4096 plate, timed apart (page faults of a fresh 400 MB
  array): the 1 M figures and the loop ratio are the drawing alone; the 10 M goal includes it.
- ``starkiln plate`` end to end (Parquet in, float EXR out, the colours through the render
  path) on this machine against ``--engine dask`` (the same stars as 8 Parquet files, each a
  partition drawn on a worker, the plates summed by the tree reduction on the cluster) on a
  local cluster of 2 worker processes: once with the cluster's start-up, once on a cluster
  already running (``--scheduler``);
- ``starkiln plate`` over a site at a moment with ``--through-air`` (each star's own altitude
  into the render path) against the same plate without it: goal at most 1.5x the time.

The stars are invented (uniform on the sphere, random colours), not catalogue rows.

Usage::

    python bench/bench_plates.py [--big-stars 10000000] [--sample 3000] [--dask-stars 1000000]
    python bench/bench_plates.py --only-air [--air-stars 120000]
"""

from __future__ import annotations

import argparse
import math
import os
import resource
import subprocess
import sys
import time

import numpy as np

GOAL_FISHEYE_S = 1.0
GOAL_BIG_S = 20.0
GOAL_RSS_MB = 2048.0
GOAL_LOOP_RATIO = 50.0
GOAL_AIR_RATIO = 1.5
SIGMA_PX = 0.7
CHUNK = 1_000_000


def _stars(rng, n):
    lon = rng.uniform(0.0, 360.0, n)
    lat = np.degrees(np.arcsin(rng.uniform(-1.0, 1.0, n)))
    values = rng.uniform(0.0, 1.0, (n, 3)).astype(np.float32)
    return lon, lat, values


def make_plate(shape):
    """A zeroed float32 plate, its memory touched, and the seconds that took.

    The first touch of a fresh large array costs page faults (about a second for the
    400 MB 8192 x 4096 plate in a fresh process here): a cost of the plate's own size, paid
    once per plate, timed here apart from the drawing so that the per-star loop (whose
    sample touches few pages) is compared with the drawing alone."""
    t0 = time.perf_counter()
    image = np.zeros(shape, np.float32)
    image[...] = 0.0
    return image, time.perf_counter() - t0


def draw_equirect(n_stars, height, seed=1, timings=None):
    """Seconds to draw ``n_stars`` into a 2h x h float32 plate, streamed in chunks (the
    plate's allocation not included: it goes to ``timings["alloc"]``)."""
    from starkiln.engine.plates.drawing import deposit
    from starkiln.engine.plates.projection import PlateSpec, project
    spec = PlateSpec("equirect", 2 * height, height)
    image, t_alloc = make_plate((height, 2 * height, 3))
    if timings is not None:
        timings["alloc"] = t_alloc
    rng = np.random.default_rng(seed)
    t = 0.0
    for lo in range(0, n_stars, CHUNK):
        lon, lat, values = _stars(rng, min(CHUNK, n_stars - lo))
        t0 = time.perf_counter()
        x, y, _, inside = project(lon, lat, spec)
        deposit(image, x[inside], y[inside], values[inside], SIGMA_PX, wrap_x=True)
        t += time.perf_counter() - t0
    return t, image


def draw_equirect_threads(n_stars, height, threads):
    """:func:`draw_equirect` with the drawing on ``threads`` threads."""
    from starkiln.engine.plates import drawing
    before = drawing.THREADS
    drawing.THREADS = threads
    try:
        return draw_equirect(n_stars, height)
    finally:
        drawing.THREADS = before


def draw_cube(n_stars, size, seed=4):
    """Seconds to draw ``n_stars`` onto six ``size``^2 float32 cube faces."""
    from starkiln.engine.plates.drawing import deposit
    from starkiln.engine.plates.projection import PlateSpec, project
    spec = PlateSpec("cube", size, size)
    image, _ = make_plate((6, size, size, 3))
    lon, lat, values = _stars(np.random.default_rng(seed), n_stars)
    t0 = time.perf_counter()
    x, y, face, _ = project(lon, lat, spec)
    deposit(image, x, y, values, SIGMA_PX, face=face)
    return time.perf_counter() - t0


def draw_fisheye(n_stars, size, seed=2):
    from starkiln.engine.plates.drawing import deposit
    from starkiln.engine.plates.projection import PlateSpec, fisheye_valid_pixels, project
    spec = PlateSpec("fisheye", size, size)
    rng = np.random.default_rng(seed)
    lon, lat, values = _stars(rng, n_stars)
    image = np.zeros((size, size, 3), np.float32)
    t0 = time.perf_counter()
    valid = fisheye_valid_pixels(spec)
    x, y, _, inside = project(lon, lat, spec)
    deposit(image, x[inside], y[inside], values[inside], SIGMA_PX, valid=valid)
    return time.perf_counter() - t0, int(inside.sum())


def per_star_loop(n_sample, height, seed=3):
    """Seconds per star for a plain loop: each star its own small numpy slice."""
    from scipy.special import erf
    from starkiln.engine.plates.projection import PlateSpec, project
    spec = PlateSpec("equirect", 2 * height, height)
    image = np.zeros((height, 2 * height, 3), np.float32)
    rng = np.random.default_rng(seed)
    lon, lat, values = _stars(rng, n_sample)
    x, y, _, _ = project(lon, lat, spec)
    k = math.ceil(4 * SIGMA_PX)
    offs = np.arange(-k, k + 2)
    t0 = time.perf_counter()
    for i in range(n_sample):
        cx, cy = int(x[i]), int(y[i])
        ex = erf((cx + offs - x[i]) / (SIGMA_PX * math.sqrt(2)))
        ey = erf((cy + offs - y[i]) / (SIGMA_PX * math.sqrt(2)))
        wx = np.diff(ex) / (ex[-1] - ex[0])
        wy = np.diff(ey) / (ey[-1] - ey[0])
        r0, r1 = max(cy - k, 0), min(cy + k + 1, height)
        c0, c1 = max(cx - k, 0), min(cx + k + 1, 2 * height)
        patch = np.outer(wy, wx)[r0 - (cy - k):r1 - (cy - k), c0 - (cx - k):c1 - (cx - k)]
        image[r0:r1, c0:c1] += patch[:, :, None] * values[i]
    return (time.perf_counter() - t0) / n_sample


def local_vs_dask(n_stars, width, parts=8, workers=2, seed=4):
    """Seconds for ``starkiln plate`` locally and with ``--engine dask`` (same stars)."""
    import os
    import tempfile

    import pyarrow as pa
    import pyarrow.parquet as pq
    from distributed import LocalCluster

    from starkiln.cli.main import main

    rng = np.random.default_rng(seed)
    with tempfile.TemporaryDirectory() as tmp:
        folder = os.path.join(tmp, "parts")
        os.mkdir(folder)
        tables = []
        for i in range(parts):
            n = n_stars // parts
            lon, lat, _ = _stars(rng, n)
            t = pa.table({"ra": lon, "dec": lat, "teff": rng.uniform(2500.0, 30000.0, n),
                          "mag": rng.uniform(-1.0, 12.0, n)})
            pq.write_table(t, os.path.join(folder, f"stars-{i}.parquet"))
            tables.append(t)
        single = os.path.join(tmp, "all.parquet")
        pq.write_table(pa.concat_tables(tables), single)
        args = ["--temperature-column", "teff", "--magnitude-column", "mag", "--size",
                str(width), "--force"]
        out = os.path.join(tmp, "plate.exr")

        def run(*extra, src=single):
            t0 = time.perf_counter()
            assert main(["plate", src, out, *args, *extra]) == 0
            return time.perf_counter() - t0

        run()                                               # warm imports and colour grid
        t_local = run()
        t_dask_cold = run("--engine", "dask", "--workers", str(workers), src=folder)
        with LocalCluster(n_workers=workers, threads_per_worker=1, host="127.0.0.1",
                          dashboard_address=None) as cluster:
            run("--engine", "dask", "--scheduler", cluster.scheduler_address, src=folder)
            t_dask = run("--engine", "dask", "--scheduler", cluster.scheduler_address,
                         src=folder)
    return t_local, t_dask_cold, t_dask


def through_air_vs_not(n_stars, width, seed=6, repeat=3):
    """Median seconds of ``starkiln plate`` over a site (a 180-degree dome, horizon frame)
    without and with ``--through-air``, run in turn (the same stars, magnitudes given)."""
    import os
    import tempfile

    import pyarrow as pa
    import pyarrow.parquet as pq

    from starkiln.cli.main import main

    rng = np.random.default_rng(seed)
    lon, lat, _ = _stars(rng, n_stars)
    with tempfile.TemporaryDirectory() as tmp:
        src = os.path.join(tmp, "stars.parquet")
        pq.write_table(pa.table({"ra": lon, "dec": lat,
                                 "teff": rng.uniform(2500.0, 30000.0, n_stars),
                                 "mag": rng.uniform(-1.0, 8.0, n_stars),
                                 "ebv": rng.uniform(0.0, 1.0, n_stars)}), src)
        args = ["plate", src, os.path.join(tmp, "dome.exr"), "--temperature-column", "teff",
                "--magnitude-column", "mag", "--projection", "fisheye", "--size", str(width),
                "--site", "52.1,5.1,30", "--time", "2026-03-20T21:00:00", "--force"]
        cases = {"plain": [], "air": ["--through-air"], "dust": ["--ebv-column", "ebv"],
                 "dust+air": ["--ebv-column", "ebv", "--through-air"]}
        times = {k: [] for k in cases}
        for k in cases:                                      # warm imports and grids
            assert main(args + cases[k]) == 0
        for i in range(repeat):
            for k in (list(cases) if i % 2 == 0 else list(cases)[::-1]):  # interleaved
                t0 = time.perf_counter()
                assert main(args + cases[k]) == 0
                times[k].append(time.perf_counter() - t0)
    return {k: float(np.median(v)) for k, v in times.items()}


def report_air(air, n_stars, width):
    """The through-air figures and their RESULT line."""
    label = f"{n_stars:,} stars, {width}^2 dome over a site"
    ratio = air["air"] / air["plain"]
    print(f"{'starkiln plate, %s, s' % label:<52}{air['plain']:>12.3f}")
    print(f"{'  --through-air (own altitude per star), s':<52}{air['air']:>12.3f}"
          f"{GOAL_AIR_RATIO:>9.2g}x{ratio:>7.2f}x")
    dust_ratio = air["dust+air"] / air["dust"]
    print(f"{'  with a per-star E(B-V) column (0-1 mag), s':<52}{air['dust']:>12.3f}")
    print(f"{'  the column and --through-air, s':<52}{air['dust+air']:>12.3f}"
          f"{GOAL_AIR_RATIO:>9.2g}x{dust_ratio:>7.2f}x")
    print(f'RESULT name=plate_through_air goal="starkiln plate --through-air, {label}, within '
          f'{GOAL_AIR_RATIO:g}x of the same plate without" value={air["air"]:.4g} unit=s '
          f'reference={air["plain"]:.4g} reference_label="the same plate without air" '
          f'ratio={ratio:.4g} sense="x the time without (at most {GOAL_AIR_RATIO:g} meets '
          f'it)"')
    print(f'RESULT name=plate_through_air_dust goal="the same with a per-star E(B-V) column, '
          f'within {GOAL_AIR_RATIO:g}x of the plate with the column and without air" '
          f'value={air["dust+air"]:.4g} unit=s reference={air["dust"]:.4g} '
          f'reference_label="the plate with the column, without air" ratio={dust_ratio:.4g} '
          f'sense="x the time without (at most {GOAL_AIR_RATIO:g} meets it)"')


def _child(n_stars):
    before = resource.getrusage(resource.RUSAGE_SELF)
    timings = {}
    t, _ = draw_equirect(n_stars, 4096, timings=timings)
    t += timings["alloc"]                       # the 10 M goal counts the plate's memory too
    usage = resource.getrusage(resource.RUSAGE_SELF)
    rss_mb = usage.ru_maxrss / 1024.0
    cpu = (usage.ru_utime + usage.ru_stime) - (before.ru_utime + before.ru_stime)
    print(f"{t} {rss_mb} {cpu} {timings['alloc']}")


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--big-stars", type=int, default=10_000_000)
    ap.add_argument("--sample", type=int, default=3000)
    ap.add_argument("--dask-stars", type=int, default=1_000_000)
    ap.add_argument("--air-stars", type=int, default=120_000)
    ap.add_argument("--only-air", action="store_true", help="only the --through-air rows")
    ap.add_argument("--child", type=int, default=0, help=argparse.SUPPRESS)
    args = ap.parse_args()
    if args.child:
        _child(args.child)
        return
    import contextlib
    import io

    with contextlib.redirect_stdout(io.StringIO()), contextlib.redirect_stderr(io.StringIO()):
        air = through_air_vs_not(args.air_stars, 2048)
    if args.only_air:
        report_air(air, args.air_stars, 2048)
        return
    load_start = os.getloadavg()[0]
    draw_fisheye(1000, 256)                                 # warm imports
    draw_equirect(CHUNK, 256)          # start-up: the chunks' working memory, both threads
    t_fish, n_in = draw_fisheye(120_000, 4096)
    timings = {}
    t_1m, _ = draw_equirect(1_000_000, 4096, timings=timings)
    t_1m_small, _ = draw_equirect(1_000_000, 2048)
    t_1m_one, _ = draw_equirect_threads(1_000_000, 4096, 1)
    t_cube = draw_cube(1_000_000, 2048)
    out = subprocess.run([sys.executable, __file__, "--child", str(args.big_stars)],
                         check=True, capture_output=True, text=True).stdout.split()
    t_big, rss_mb, cpu_big, alloc_big = (float(v) for v in out[:4])
    slope_stars = (t_big - alloc_big - t_1m) / ((args.big_stars - 1_000_000) / 1e6)
    pixels_big, pixels_small = 8192 * 4096, 4096 * 2048
    slope_pixels = (t_1m - t_1m_small) / ((pixels_big - pixels_small) / 1e6)
    per_star = per_star_loop(args.sample, 4096)
    t_loop_1m = per_star * 1_000_000
    with contextlib.redirect_stdout(io.StringIO()), contextlib.redirect_stderr(io.StringIO()):
        t_local, t_dask_cold, t_dask = local_vs_dask(args.dask_stars, 4096)
    dask_label = f"{args.dask_stars / 1e6:g} M stars, 4096x2048 plate"
    print(f"{'case':<52}{'measured':>12}{'goal':>10}{'ratio':>8}")
    print(f"{'fisheye 4096^2, 120 000 stars (%d inside), s' % n_in:<52}{t_fish:>12.3f}"
          f"{GOAL_FISHEYE_S:>10.3g}{GOAL_FISHEYE_S / t_fish:>8.2f}")
    print(f"{'allocating + zeroing the 8192x4096 plate, s':<52}{timings['alloc']:>12.3f}")
    print(f"{'equirect 8192x4096, 1 M stars (plate made), s':<52}{t_1m:>12.3f}")
    print(f"{'equirect 8192x4096, 1 M stars, one thread, s':<52}{t_1m_one:>12.3f}")
    print(f"{'cube 6 x 2048^2, 1 M stars, s':<52}{t_cube:>12.3f}")
    print(f"{'equirect 8192x4096, %d stars, plate incl., s' % args.big_stars:<52}{t_big:>12.3f}"
          f"{GOAL_BIG_S:>10.3g}{GOAL_BIG_S / t_big:>8.2f}")
    print(f"{'  CPU time of that process (all threads), s':<52}{cpu_big:>12.3f}")
    print(f"{'peak resident memory of that run, MB':<52}{rss_mb:>12.0f}{GOAL_RSS_MB:>10.0f}"
          f"{GOAL_RSS_MB / rss_mb:>8.2f}")
    print(f"{'slope in stars, s per million':<52}{slope_stars:>12.3f}")
    print(f"{'slope in pixels (1 M stars), s per megapixel':<52}{slope_pixels:>12.4f}")
    print(f"{'per-star loop, 1 M stars (scaled from %d), s' % args.sample:<52}{t_loop_1m:>12.1f}"
          f"{'':>10}{t_loop_1m / t_1m:>8.1f}x")
    print(f"{'  the same against the one-thread drawing':<52}{'':>12}{'':>10}"
          f"{t_loop_1m / t_1m_one:>8.1f}x")
    print(f"load average (1 min) at the start and the end: {load_start:.1f}, "
          f"{os.getloadavg()[0]:.1f} on {os.cpu_count()} cores (others' work slows the wall "
          "times; the CPU time less so)")
    print(f"{'starkiln plate, %s, local, s' % dask_label:<52}{t_local:>12.3f}")
    print(f"{'  --engine dask, 8 parts, 2 workers (with start), s':<52}{t_dask_cold:>12.3f}"
          f"{'':>10}{t_local / t_dask_cold:>8.2f}x")
    print(f"{'  --engine dask, cluster already running, s':<52}{t_dask:>12.3f}"
          f"{'':>10}{t_local / t_dask:>8.2f}x")
    report_air(air, args.air_stars, 2048)
    for name, goal, value, unit, ref, ref_label, ratio, sense in (
            ("plate_fisheye_120k", "120 000 stars into a 4096 x 4096 fisheye", t_fish, "s",
             GOAL_FISHEYE_S, "goal", GOAL_FISHEYE_S / t_fish, "x under the goal"),
            ("plate_alloc", "allocating and zeroing an 8192 x 4096 float32 RGB plate",
             timings["alloc"], "s", None, None, None, None),
            ("plate_equirect_1m", "1 M stars into an 8192 x 4096 equirect plate (plate made)",
             t_1m, "s", None, None, None, None),
            ("plate_equirect_10m", "10 M stars into an 8192 x 4096 equirect plate, making the "
             "plate included", t_big, "s",
             GOAL_BIG_S, "goal", GOAL_BIG_S / t_big, "x under the goal"),
            ("plate_equirect_10m_cpu", "CPU time of the 10 M star run (both threads)", cpu_big,
             "s", None, None, None, None),
            ("plate_equirect_10m_rss", "peak memory, 10 M stars equirect", rss_mb, "MB",
             GOAL_RSS_MB, "goal", GOAL_RSS_MB / rss_mb, "x under the goal"),
            ("plate_slope_stars", "time per million stars (1 M to 10 M)", slope_stars, "s",
             None, None, None, None),
            ("plate_slope_pixels", "time per megapixel of plate (1 M stars)", slope_pixels, "s",
             None, None, None, None),
            ("plate_cube_1m", "1 M stars onto six 2048 x 2048 cube faces", t_cube, "s",
             None, None, None, None),
            ("plate_vs_loop", "1 M stars equirect against a per-star loop", t_1m, "s",
             t_loop_1m, "per-star loop, scaled from a sample", t_loop_1m / t_1m, "x faster"),
            ("plate_vs_loop_one_thread", "1 M stars equirect, drawing on one thread, against "
             "a per-star loop", t_1m_one, "s", t_loop_1m, "per-star loop, scaled from a sample",
             t_loop_1m / t_1m_one, "x faster"),
            ("plate_dask", f"starkiln plate --engine dask, {dask_label}, 8 partitions, "
             "2 local workers (running cluster), against the local command", t_dask, "s",
             t_local, "starkiln plate on this machine", t_local / t_dask,
             "x the local speed"),
            ("plate_dask_cold", f"the same with the local cluster's start-up "
             f"(--workers 2)", t_dask_cold, "s", t_local, "starkiln plate on this machine",
             t_local / t_dask_cold, "x the local speed")):
        line = f'RESULT name={name} goal="{goal}" value={value:.4g} unit={unit}'
        if ref is not None:
            line += (f' reference={ref:.4g} reference_label="{ref_label}" ratio={ratio:.4g} '
                     f'sense="{sense}"')
        print(line)


if __name__ == "__main__":
    main()
