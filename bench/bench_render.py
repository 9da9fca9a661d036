"""Render-path benchmark: Starkiln's vectorised render against colour-science's per-sample route.

Prints, in one run and side by side:

1. A 1024 x 256 grid of temperatures through ``starkiln.engine.pipeline.render.render``:
   (a) lookup-texture layout, 1024 temperatures repeated on 256 rows;
   (b) 262 144 distinct temperatures (the hard case: no sharing).
   Against the per-sample colour-science route ``sd_blackbody -> sd_to_XYZ -> XYZ_to_RGB``
   timed on a sample and scaled to the grid. Goal: >= 500x.
2. The night-vision model on the same grids (temperature x magnitude): the ratio of
   night / colour-only render time. Goal: <= 2x.
3. Cold start of ``starkiln colour --temperature 5800 --json`` against a bare
   ``python -c "import colour"``, median of several runs. Goal: < 0.6.
4. The path of the light: the night render of the same grids with a fixed path (the
   settings' E(B-V) 0.3 and altitude 30 degrees) against no path, per star. Goal: no more
   cost (ratio <= 1.1x, the timing noise of a shared machine). And, for the record, 262 144
   stars each with its own E(B-V) (64 distinct values) and altitude (90 distinct values).

Usage: ``python bench/bench_render.py [--quick]``.
"""

from __future__ import annotations

import argparse
import statistics
import subprocess
import sys
import time
import warnings

import numpy as np


def best_of(fn, repeats: int) -> float:
    """Best wall time of ``repeats`` calls (the least disturbed by other processes)."""
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return min(times)


def colour_science_per_sample(n_samples: int) -> float:
    """Seconds per sample of the colour-science spectral route (sRGB, D65)."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        import colour

        shape = colour.SpectralShape(360, 830, 1)
        cmfs = colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"]
        temps = np.geomspace(1000, 40000, n_samples)
        colour.XYZ_to_RGB(colour.sd_to_XYZ(colour.sd_blackbody(5000.0, shape), cmfs), "sRGB")
        t0 = time.perf_counter()
        for t in temps:
            xyz = colour.sd_to_XYZ(colour.sd_blackbody(float(t), shape), cmfs)
            colour.XYZ_to_RGB(xyz / 100.0, "sRGB")
        return (time.perf_counter() - t0) / n_samples


def cold_start(cmd: list[str], runs: int) -> float:
    """Median wall time of a fresh process."""
    times = []
    for _ in range(runs):
        t0 = time.perf_counter()
        subprocess.run(cmd, check=True, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        times.append(time.perf_counter() - t0)
    return statistics.median(times)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="fewer repeats")
    args = ap.parse_args()
    repeats = 3 if args.quick else 7

    from starkiln.engine.pipeline.render import render
    from starkiln.engine.pipeline.settings import Settings

    settings = Settings()
    w, h = 1024, 256
    row = np.geomspace(1000.0, 40000.0, w)
    lut_grid = np.broadcast_to(row, (h, w))
    distinct = np.geomspace(1000.0, 40000.0, w * h).reshape(h, w)
    mags_col = np.linspace(-1.0, 7.0, h)[:, None]
    mags_distinct = np.random.default_rng(0).uniform(-1.0, 7.0, (h, w))
    render(settings, row[:8])  # warm the tables cache and the settings chain

    # Each timing includes reading rgb_encoded, which the night path computes on first use.
    t_lut = best_of(lambda: render(settings, lut_grid).rgb_encoded, repeats)
    t_distinct = best_of(lambda: render(settings, distinct).rgb_encoded, repeats)
    t_lut_night = best_of(lambda: render(settings, row[None, :], mags_col).rgb_encoded, repeats)
    t_distinct_night = best_of(lambda: render(settings, distinct, mags_distinct).rgb_encoded,
                               repeats)
    path_settings = Settings(dust_ebv=0.3, altitude_deg=30.0)
    render(path_settings, row[:8], 1.0)  # warm the path's transmission cache
    t_lut_path = best_of(lambda: render(path_settings, row[None, :], mags_col).rgb_encoded,
                         repeats)
    t_distinct_path = best_of(lambda: render(path_settings, distinct, mags_distinct).rgb_encoded,
                              repeats)
    rng = np.random.default_rng(1)
    ebv_levels = rng.integers(0, 64, (h, w)) * (1.0 / 64.0)
    alt_levels = rng.integers(0, 90, (h, w)) + 0.5
    t_per_star = best_of(lambda: render(settings, lut_grid, mags_distinct, dust_ebv=ebv_levels,
                                        altitude_deg=alt_levels).rgb_encoded,
                         max(1, repeats // 3))
    per_sample = colour_science_per_sample(100 if args.quick else 300)
    t_ref = per_sample * w * h

    print(f"grid {w} x {h} = {w * h} samples; colour-science route {per_sample * 1e3:.3f} ms/sample "
          f"-> {t_ref:.1f} s for the grid (scaled from a sample)")
    print(f"{'case':<44}{'starkiln s':>12}{'colour-sci s':>14}{'speed-up':>10}")
    print(f"{'(a) texture layout, 1024 temps x 256 rows':<44}{t_lut:>12.4f}{t_ref:>14.1f}"
          f"{t_ref / t_lut:>9.0f}x")
    print(f"{'(b) 262144 distinct temperatures':<44}{t_distinct:>12.4f}{t_ref:>14.1f}"
          f"{t_ref / t_distinct:>9.0f}x")
    print()
    print(f"{'night vision on the same grids':<44}{'colour s':>12}{'night s':>14}{'ratio':>10}")
    print(f"{'(a) 1024 temps x 256 magnitudes':<44}{t_lut:>12.4f}{t_lut_night:>14.4f}"
          f"{t_lut_night / t_lut:>9.2f}x")
    print(f"{'(b) 262144 distinct (T, m) pairs':<44}{t_distinct:>12.4f}{t_distinct_night:>14.4f}"
          f"{t_distinct_night / t_distinct:>9.2f}x")
    print()
    print(f"{'path of the light (night render)':<44}{'no path s':>12}{'fixed path s':>14}{'ratio':>10}")
    print(f"{'(a) 1024 temps x 256 magnitudes':<44}{t_lut_night:>12.4f}{t_lut_path:>14.4f}"
          f"{t_lut_path / t_lut_night:>9.2f}x")
    print(f"{'(b) 262144 distinct (T, m) pairs':<44}{t_distinct_night:>12.4f}"
          f"{t_distinct_path:>14.4f}{t_distinct_path / t_distinct_night:>9.2f}x")
    print(f"{'(c) 262144 stars, own E(B-V) and altitude':<44}{t_lut_night:>12.4f}"
          f"{t_per_star:>14.4f}{t_per_star / t_lut_night:>9.2f}x  "
          f"({w * h / t_per_star / 1e6:.2f} M stars/s)")
    print()
    runs = 5 if args.quick else 9
    starkiln = [sys.executable, "-m", "starkiln", "colour", "--temperature", "5800", "--json"]
    bare_colour = [sys.executable, "-W", "ignore", "-c", "import colour"]
    subprocess.run(starkiln, check=True, stdout=subprocess.DEVNULL)  # make sure tables are cached
    t_cli = cold_start(starkiln, runs)
    t_colour = cold_start(bare_colour, runs)
    print(f"{'cold start (median of %d)' % runs:<44}{'starkiln s':>12}{'import colour s':>16}{'ratio':>8}")
    print(f"{'starkiln colour --temperature 5800 --json':<44}{t_cli:>12.3f}{t_colour:>16.3f}"
          f"{t_cli / t_colour:>8.2f}")
    # Machine-readable summary for bench/report.py (one line per goal; same figures as above).
    for name, goal, value, unit, ref, ref_label, ratio, sense in (
            ("render_texture", "render 1024 x 256, texture layout", t_lut, "s", t_ref,
             "colour-science per-sample route, scaled", t_ref / t_lut, "x faster"),
            ("render_distinct", "render 262 144 distinct temperatures", t_distinct, "s", t_ref,
             "colour-science per-sample route, scaled", t_ref / t_distinct, "x faster"),
            ("render_night_texture", "night vision added, 1024 temperatures x 256 magnitudes",
             t_lut_night, "s", t_lut, "colour only", t_lut_night / t_lut, "x the colour-only time"),
            ("render_night_distinct", "night vision added, 262 144 distinct (T, m) pairs",
             t_distinct_night, "s", t_distinct, "colour only", t_distinct_night / t_distinct,
             "x the colour-only time"),
            ("render_path_texture", "fixed path (E(B-V) 0.3, altitude 30), 1024 x 256 night",
             t_lut_path, "s", t_lut_night, "no path", t_lut_path / t_lut_night,
             "x the no-path time"),
            ("render_path_distinct", "fixed path, 262 144 distinct (T, m) pairs, night",
             t_distinct_path, "s", t_distinct_night, "no path", t_distinct_path / t_distinct_night,
             "x the no-path time"),
            ("cli_cold_start", "cold `starkiln colour --temperature 5800 --json`", t_cli, "s",
             t_colour, "`import colour` alone", t_cli / t_colour, "x the `import colour` time")):
        print(f'RESULT name={name} goal="{goal}" value={value:.4g} unit={unit} '
              f'reference={ref:.4g} reference_label="{ref_label}" ratio={ratio:.4g} '
              f'sense="{sense}"')


if __name__ == "__main__":
    main()
