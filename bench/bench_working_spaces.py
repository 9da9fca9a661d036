"""Benchmark: outputs in a working space against the same outputs for a display.

Run: ``python bench/bench_working_spaces.py`` (from the repository, with the project installed).

Figures, measured side by side in one run, in this process, warm (the CIE tables and the
colour grids already built), the two sides interleaved (so that load from other processes on
the shared machine falls on both alike), best of nine:

1. A 1024 x 256 float EXR texture with magnitudes (-1..7) written by ``export_texture``
   into the ``srgb`` display and into the ``acescg`` working space; the ratio acescg / srgb
   (goal: at most 1, a working space is no slower than a display).
2. A 1 M-row invented catalogue, Parquet to Parquet through ``colour_catalogue``, with the
   encoded columns only and with ``linear_columns=("acescg",)`` added (three more float32
   columns from a second colour grid); the ratio with / without; and the same catalogue
   with ``acescg`` as the target of its r, g, b columns instead of ``srgb``.
"""

from __future__ import annotations

import sys
import tempfile
import time
from pathlib import Path

REPO = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(REPO / "bench"))

from bench_catalogue import write_parquet  # noqa: E402  (the same invented catalogue)

ROWS = 1_000_000
GOAL_RATIO = 1.0


def best_interleaved(fns: dict, repeat: int = 9) -> dict:
    """Best wall time of each function over ``repeat`` rounds, one call of each per round."""
    times = {k: [] for k in fns}
    for _ in range(repeat):
        for key, fn in fns.items():
            t0 = time.perf_counter()
            fn()
            times[key].append(time.perf_counter() - t0)
    return {k: min(v) for k, v in times.items()}


def bench_textures(tmp: Path) -> dict:
    from starkiln.engine.exports.texture_spec import TextureSpec
    from starkiln.engine.exports.textures import export_texture
    from starkiln.engine.pipeline.settings import Settings

    spec = TextureSpec(width=1024, height=256, magnitude_range=(-1.0, 7.0), file_format="exr",
                       depth=32)
    fns = {}
    for target in ("srgb", "acescg"):
        settings = Settings(display=target)
        path = tmp / f"{target}.exr"
        export_texture(settings, spec, path, overwrite=True)  # warm
        fns[target] = (lambda s=settings, p=path: export_texture(s, spec, p, overwrite=True))
    return best_interleaved(fns)


def bench_catalogue(tmp: Path) -> dict:
    from starkiln.engine.catalogue.plan import CataloguePlan
    from starkiln.engine.catalogue.run import colour_catalogue
    from starkiln.engine.pipeline.settings import Settings

    src = tmp / "cat.parquet"
    write_parquet(src, ROWS, seed=7)
    fns = {}
    for label, target, spaces in (("encoded", "srgb", ()), ("linear", "srgb", ("acescg",)),
                                  ("working", "acescg", ())):
        plan = CataloguePlan(Settings(display=target), "temperature", "teff",
                             linear_columns=spaces)
        dst = tmp / f"out-{label}.parquet"
        colour_catalogue(src, dst, plan, overwrite=True, progress=False)  # builds the grids
        fns[label] = (lambda p=plan, o=dst: colour_catalogue(src, o, p, overwrite=True,
                                                             progress=False))
    return best_interleaved(fns, repeat=5)


def main() -> int:
    with tempfile.TemporaryDirectory() as d:
        tmp = Path(d)
        tex = bench_textures(tmp)
        cat = bench_catalogue(tmp)
    tex_ratio = tex["acescg"] / tex["srgb"]
    cat_ratio = cat["linear"] / cat["encoded"]
    print("working-space outputs benchmark (one run, side by side, warm, in process)")
    print(f"  1024x256 EXR with magnitudes, into srgb (display):      {tex['srgb']:8.3f} s")
    print(f"  1024x256 EXR with magnitudes, into acescg (working):    {tex['acescg']:8.3f} s")
    print(f"    ratio acescg / srgb:                                  {tex_ratio:8.3f}  "
          f"(goal <= {GOAL_RATIO:g}: {'met' if tex_ratio <= GOAL_RATIO else 'NOT met'})")
    print(f"  1 M-row catalogue, Parquet to Parquet, encoded columns: {cat['encoded']:8.3f} s")
    print(f"  the same with --linear-columns acescg:                  {cat['linear']:8.3f} s")
    print(f"    ratio with / without:                                 {cat_ratio:8.3f}")
    work_ratio = cat["working"] / cat["encoded"]
    print(f"  the same, r, g, b into acescg instead of srgb:          {cat['working']:8.3f} s")
    print(f"    ratio acescg / srgb:                                  {work_ratio:8.3f}  "
          f"(goal <= {GOAL_RATIO:g}: {'met' if work_ratio <= GOAL_RATIO else 'NOT met'})")
    print(f'RESULT name=ws_exr_1024 goal="1024 x 256 EXR with magnitudes into acescg '
          f'(goal: no slower than srgb)" value={tex["acescg"]:.4g} unit=s '
          f'reference={tex["srgb"]:.4g} reference_label="the same into srgb" '
          f'ratio={tex_ratio:.3g} sense="x the display time (at most 1 meets it)"')
    print(f'RESULT name=ws_catalogue_1m goal="1 M rows Parquet to Parquet with linear acescg '
          f'columns" value={cat["linear"]:.4g} unit=s reference={cat["encoded"]:.4g} '
          f'reference_label="encoded columns only" ratio={cat_ratio:.3g} '
          f'sense="x the time without them"')
    print(f'RESULT name=ws_catalogue_target goal="1 M rows Parquet to Parquet, r, g, b into '
          f'acescg (goal: no slower than srgb)" value={cat["working"]:.4g} unit=s '
          f'reference={cat["encoded"]:.4g} reference_label="the same into srgb" '
          f'ratio={work_ratio:.3g} sense="x the display time (at most 1 meets it)"')
    return 0


if __name__ == "__main__":
    sys.exit(main())
