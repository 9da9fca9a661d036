"""Benchmark: lookup-texture export from the command line against a per-texel spectral route.

Run: ``python bench/bench_lut.py`` (from the repository, with the project installed).

Figures, measured side by side in one run:

1. ``starkiln lut OUT.exr --size 1024x256 --magnitudes -1:7`` end to end in a
   fresh process, minus the start-up of the same process doing nothing
   (``starkiln --version``); best of three.
2. The per-texel colour-science route, ``colour.sd_blackbody`` ->
   ``colour.sd_to_XYZ`` -> ``colour.XYZ_to_RGB``, timed on a sample of 200
   texels and scaled to 1024 x 256. It computes colour only (no magnitudes, no
   gamut mapping, no file), so the ratio understates the difference.
3. The ratio (goal >= 500x) and a 4096 x 1024 texture end to end (goal < 2 s).
"""

from __future__ import annotations

import os
import subprocess
import sys
import tempfile
import time
import warnings
from pathlib import Path

import numpy as np

REPO = Path(__file__).resolve().parent.parent
SAMPLE = 200
GOAL_RATIO = 500.0
GOAL_LARGE_S = 2.0


def _run(args) -> float:
    t0 = time.perf_counter()
    proc = subprocess.run([sys.executable, "-m", "starkiln", *args], cwd=REPO,
                          capture_output=True, text=True)
    dt = time.perf_counter() - t0
    if proc.returncode != 0:
        raise SystemExit(f"starkiln {' '.join(args)} failed: {proc.stderr.strip()}")
    return dt


def _best(args, repeats=3) -> float:
    return min(_run(args) for _ in range(repeats))


def colour_route_per_texel_s(temperatures_K) -> float:
    """Seconds per texel of colour-science's spectral route (sRGB, D65, 1 nm, 360-830 nm)."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        import colour

        cmfs = colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"]
        shape = colour.SpectralShape(360, 830, 1)
        d65 = colour.CCS_ILLUMINANTS["CIE 1931 2 Degree Standard Observer"]["D65"]
        srgb = colour.RGB_COLOURSPACES["sRGB"]
        colour.sd_to_XYZ(colour.sd_blackbody(5000.0, shape), cmfs, method="Integration")  # warm
        t0 = time.perf_counter()
        for t in temperatures_K:
            sd = colour.sd_blackbody(float(t), shape)
            XYZ = colour.sd_to_XYZ(sd, cmfs, method="Integration") / 100.0
            rgb = colour.XYZ_to_RGB(XYZ, srgb, illuminant=d65,
                                    chromatic_adaptation_transform="Bradford")
            rgb = np.clip(rgb / np.max(rgb), 0.0, 1.0)
        return (time.perf_counter() - t0) / len(temperatures_K)


def main() -> int:
    mags = ["--magnitudes", "-1:7"]
    with tempfile.TemporaryDirectory() as tmp:
        out = os.path.join(tmp, "lut.exr")
        big = os.path.join(tmp, "big.exr")
        _run(["lut", out, "--size", "8x2", "--force"])  # warm the CIE table cache
        startup = _best(["--version"])
        ours_total = _best(["lut", out, "--size", "1024x256", "--force", *mags])
        big_total = _best(["lut", big, "--size", "4096x1024", "--force", *mags])
        size_mb = os.path.getsize(big) / 1e6

    from starkiln.engine.exports.texture_spec import TextureSpec, lut_axes

    t, _ = lut_axes(TextureSpec(width=1024, height=256))
    rng = np.random.default_rng(2024)
    sample = t[rng.integers(0, t.size, SAMPLE)]
    per_texel = colour_route_per_texel_s(sample)
    colour_total = per_texel * 1024 * 256

    split = _in_process_split(4096, 1024)

    ours = ours_total - startup
    big_s = big_total - startup
    ratio = colour_total / ours
    print("starkiln lut benchmark (one run, side by side)")
    print("  magnitudes: -1:7 (night-vision model)")
    print(f"  process start-up (starkiln --version), best of 3:  {startup:8.3f} s")
    print(f"  starkiln lut 1024x256 .exr, end to end, best of 3: {ours_total:8.3f} s")
    print(f"    beyond start-up:                                {ours:8.3f} s")
    print(f"  colour-science per-texel route, {SAMPLE} texels:       {per_texel * 1e3:8.3f} ms/texel")
    print(f"    scaled to 1024x256 = {1024 * 256} texels:          {colour_total:8.1f} s")
    print(f"  ratio colour-science / starkiln:                  {ratio:8.0f}x  "
          f"(goal >= {GOAL_RATIO:.0f}x: {'met' if ratio >= GOAL_RATIO else 'NOT met'})")
    print(f"  starkiln lut 4096x1024 .exr beyond start-up:      {big_s:8.3f} s  "
          f"({size_mb:.1f} MB; goal < {GOAL_LARGE_S:g} s: "
          f"{'met' if big_s < GOAL_LARGE_S else 'NOT met'})")
    print("  4096x1024 in-process split (warm): "
          f"render {split['render']:.3f} s | build_lut {split['build']:.3f} s | "
          f"write_lut {split['write']:.3f} s")
    # Machine-readable summary for bench/report.py (same figures as above).
    print(f'RESULT name=lut_1024 goal="starkiln lut 1024 x 256 EXR with magnitudes, beyond '
          f'start-up (goal >= {GOAL_RATIO:.0f}x)" value={ours:.4g} unit=s '
          f'reference={colour_total:.4g} reference_label="colour-science per-texel route, '
          f'scaled" ratio={ratio:.3g} sense="x faster"')
    print(f'RESULT name=lut_4096 goal="starkiln lut 4096 x 1024 EXR with magnitudes, beyond '
          f'start-up (goal < {GOAL_LARGE_S:g} s)" value={big_s:.4g} unit=s '
          f'reference={GOAL_LARGE_S:g} reference_label="goal" ratio={big_s / GOAL_LARGE_S:.3g} '
          f'sense="of the goal (below 1 meets it)"')
    return 0


def _in_process_split(width: int, height: int) -> dict:
    """Where the time of a large texture goes: the render call, the whole build, the write."""
    from starkiln.engine.exports.texture_spec import TextureSpec, lut_axes
    from starkiln.engine.exports.textures import build_lut, write_lut
    from starkiln.engine.pipeline.render import render
    from starkiln.engine.pipeline.settings import Settings

    s = Settings()
    spec = TextureSpec(width=width, height=height, file_format="exr", depth=32,
                   magnitude_range=(-1.0, 7.0))
    build_lut(s, TextureSpec(width=8, height=2))  # warm caches
    t, m = lut_axes(spec)
    t0 = time.perf_counter()
    render(s, t[None, :], None if m is None else m[:, None])
    t1 = time.perf_counter()
    array, meta = build_lut(s, spec)
    t2 = time.perf_counter()
    with tempfile.TemporaryDirectory() as tmp:
        write_lut(os.path.join(tmp, "split.exr"), array, meta, spec)
    t3 = time.perf_counter()
    return {"render": t1 - t0, "build": t2 - t1, "write": t3 - t2}


if __name__ == "__main__":
    sys.exit(main())
