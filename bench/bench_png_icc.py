"""PNG textures with the embedded ICC profile (iCCP) against the same textures without it.

Goal (issue 11): embedding the display's ICC profile must not make a 1024x256 PNG texture
measurably slower. Measured side by side in one run, interleaved: ``export_texture`` of a
1024x256 8-bit PNG with magnitudes for display-p3 and rec2100-pq (the 4096-entry PQ curve, the
largest profile), once as written (with ``iCCP``) and once with ``png_colour_chunks`` patched
to leave ``iCCP`` out; median of N each. Also printed: building one profile and its chunk
uncached (``icc_profile_bytes.__wrapped__``), the cost the cache keeps to once per display.

Run: ``python bench/bench_png_icc.py [--quick]`` (from the repository, with the project
installed).
"""

from __future__ import annotations

import argparse
import statistics
import tempfile
import time
import zlib
from pathlib import Path


def main(argv=None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="fewer runs")
    runs = 7 if parser.parse_args(argv).quick else 21
    from starkiln.engine.colour.displays import get_display
    from starkiln.engine.colour.icc_writer import icc_profile_bytes
    from starkiln.engine.exports import image_files
    from starkiln.engine.exports.texture_spec import TextureSpec
    from starkiln.engine.exports.textures import export_texture
    from starkiln.engine.pipeline.settings import Settings

    folder = Path(tempfile.mkdtemp(prefix="starkiln-bench-png-icc-"))
    spec = TextureSpec(width=1024, height=256, magnitude_range=(-1.0, 7.0))
    real = image_files.png_colour_chunks

    def without_iccp(display):
        return [c for c in real(display) if c[0] != b"iCCP"]

    print(f"{'1024x256 PNG texture (median of %d)' % runs:<40}{'iCCP s':>10}{'none s':>10}"
          f"{'ratio':>8}")
    ratios = {}
    for name in ("display-p3", "rec2100-pq"):
        settings = Settings(display=name)
        export_texture(settings, spec, folder / "warm.png", overwrite=True)
        with_t, without_t = [], []
        for _ in range(runs):
            for patch, times in ((real, with_t), (without_iccp, without_t)):
                image_files.png_colour_chunks = patch
                try:
                    t0 = time.perf_counter()
                    export_texture(settings, spec, folder / "t.png", overwrite=True)
                    times.append(time.perf_counter() - t0)
                finally:
                    image_files.png_colour_chunks = real
        a, b = statistics.median(with_t), statistics.median(without_t)
        ratios[name] = a / b
        print(f"{name:<40}{a:>10.4f}{b:>10.4f}{a / b:>8.3f}")
    print()
    build = {}
    for name in ("display-p3", "rec2100-pq"):
        display = get_display(name)
        times = []
        for _ in range(runs):
            t0 = time.perf_counter()
            zlib.compress(icc_profile_bytes.__wrapped__(display), 9)
            times.append(time.perf_counter() - t0)
        build[name] = statistics.median(times)
        print(f"{'uncached profile + chunk, ' + name:<40}{build[name]:>10.5f} s "
              f"({len(icc_profile_bytes(display))} bytes)")
    worst = max(ratios, key=ratios.get)
    print(f'RESULT name=png_icc_texture goal="1024x256 PNG texture with iCCP, not measurably '
          f'slower ({worst})" value={ratios[worst]:.4g} unit=x reference=1 '
          f'reference_label="the same texture without iCCP" ratio={ratios[worst]:.4g} '
          f'sense="x the time without iCCP"')
    print(f'RESULT name=png_icc_build goal="one ICC profile and its iCCP chunk, uncached '
          f'(rec2100-pq)" value={build["rec2100-pq"]:.4g} unit=s')


if __name__ == "__main__":
    main()
