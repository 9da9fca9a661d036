"""Benchmark: the 4096-swatch contact sheet against the per-access route it replaced.

Run: ``python bench/bench_palette.py`` (from the repository, with the project installed).

Figures, measured side by side in one run:

1. ``starkiln palette --steps 4096 OUT.png`` end to end in a fresh process, and the same
   beyond the start-up of ``starkiln --version``; best of three. Goal: under 2 s.
2. The per-access route, reconstructed here: a palette whose ``hex`` is rebuilt from the
   rendered colours on every access (a Python loop formatting all N strings), read once a
   swatch by the JSON metadata and once a swatch by the sheet; the sheet drawn by Pillow,
   one rectangle and two ``ImageDraw.text`` calls a swatch; the PNG encoded by Pillow at
   zlib level 6. The hex accesses and the drawing are timed on a sample of swatches and
   scaled to 4096; the encoding is timed on the full-size image.
3. The ratio of the two, and how the new sheet's time splits (render, drawing, encoding).

Ends with two ``RESULT`` lines for ``bench/report.py``: the end-to-end time against the
per-access route (ratio, times faster) and against the 2 s goal.
"""

from __future__ import annotations

import io
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent))
from bench_lut import _best  # noqa: E402 (one way to time a fresh starkiln process)

STEPS = 4096
HEX_SAMPLE = 48  # per-access hex rebuilds timed (each formats all 4096 strings)
DRAW_SAMPLE = 256  # swatches drawn by the per-swatch Pillow route
GOAL_S = 2.0


def per_access_hex(rgb_encoded) -> list[str]:
    """The replaced ``Palette.hex``: every access formats every swatch's string in Python.

    As the replaced code did it: 8-bit values, a ``<U7`` array of f-strings, then a list of
    ``str`` of its items.
    """
    q = np.floor(np.clip(rgb_encoded, 0.0, 1.0) * 255.0 + 0.5).astype(np.uint8)
    arr = np.array([f"#{r:02x}{g:02x}{b:02x}" for r, g, b in q.tolist()], dtype="<U7")
    return [str(h) for h in arr]


def per_access_route_s(palette) -> tuple[float, dict]:
    """Seconds of the reconstructed per-access route for the whole palette (see module docstring)."""
    from PIL import Image, ImageDraw, ImageFont

    from starkiln.engine.exports import contact_sheets as cs

    enc = palette.rendered.rgb_encoded
    n = len(palette.names)
    t0 = time.perf_counter()
    for k in range(HEX_SAMPLE):
        per_access_hex(enc)[k]
    hex_s = (time.perf_counter() - t0) / HEX_SAMPLE * 2 * n  # JSON + sheet: two reads a swatch

    cols = 8
    sw, sh = cs.SHEET_SWATCH
    cell_w, cell_h = sw + cs.SHEET_GAP, sh + cs.SHEET_LABEL_H + cs.SHEET_GAP
    img = Image.new("RGB", (1120, DRAW_SAMPLE // cols * cell_h + 200), cs.SHEET_BACKGROUND)
    draw = ImageDraw.Draw(img)
    font = ImageFont.load_default(size=12)
    q = palette.rgb_8bit.tolist()
    hexes = list(palette.hex)
    t0 = time.perf_counter()
    for k in range(DRAW_SAMPLE):
        cx, cy = 24 + (k % cols) * cell_w, 68 + (k // cols) * cell_h
        draw.rectangle([cx, cy, cx + sw - 1, cy + sh - 1], fill=tuple(q[k]))
        draw.text((cx, cy + sh + 4), palette.names[k], fill=cs.SHEET_TEXT, font=font)
        draw.text((cx, cy + sh + 20), hexes[k], fill=cs.SHEET_FAINT_TEXT, font=font)
    draw_s = (time.perf_counter() - t0) / DRAW_SAMPLE * n

    full = Image.fromarray(cs.sheet_pixels(palette))
    t0 = time.perf_counter()
    full.save(io.BytesIO(), format="PNG", compress_level=6)
    encode_s = time.perf_counter() - t0
    parts = {"hex rebuilt per access": hex_s, "Pillow drawing": draw_s,
             "Pillow PNG encoding": encode_s}
    return hex_s + draw_s + encode_s, parts


def new_route_parts(settings) -> dict:
    """In-process split of the new sheet: render, strips (drawing), PNG encoding with the JSON."""
    from starkiln.engine.exports import image_files
    from starkiln.engine.exports.contact_sheets import SHEET_COMPRESSION, sheet_size, sheet_strips
    from starkiln.engine.exports.palettes import build_palette, palette_dict

    t0 = time.perf_counter()
    palette = build_palette(settings, steps=STEPS)
    t1 = time.perf_counter()
    strips = list(sheet_strips(palette))
    t2 = time.perf_counter()
    import json

    text = json.dumps(palette_dict(palette), sort_keys=True, separators=(",", ":"))
    w, h = sheet_size(STEPS)
    with tempfile.TemporaryDirectory() as tmp:
        image_files.write_png_strips(Path(tmp) / "s.png", strips, w, h, {"starkiln": text},
                                     SHEET_COMPRESSION)
    t3 = time.perf_counter()
    return {"render": t1 - t0, "drawing (strips)": t2 - t1, "metadata + PNG encoding": t3 - t2}


def main() -> None:
    from starkiln.engine.exports.palettes import build_palette
    from starkiln.engine.pipeline.settings import Settings

    settings = Settings()
    with tempfile.TemporaryDirectory() as tmp:
        out = str(Path(tmp) / "sheet.png")
        startup = _best(["--version"])
        end_to_end = _best(["palette", "--steps", str(STEPS), out, "--force"])
    palette = build_palette(settings, steps=STEPS)
    old_s, old_parts = per_access_route_s(palette)
    new_parts = new_route_parts(settings)

    print(f"starkiln palette --steps {STEPS} sheet.png (one run, side by side)")
    print(f"  process start-up (starkiln --version), best of 3:   {startup:8.3f} s")
    print(f"  new route, end to end, best of 3:                    {end_to_end:8.3f} s"
          f"  (goal < {GOAL_S:g} s: {'met' if end_to_end < GOAL_S else 'NOT met'})")
    print(f"    beyond start-up:                                   {end_to_end - startup:8.3f} s")
    print(f"  per-access route, in process (scaled from samples):  {old_s:8.3f} s")
    print(f"  ratio per-access / new end to end:                   {old_s / end_to_end:8.1f}x")
    print("  per-access route parts:  " + " | ".join(f"{k} {v:.3f} s" for k, v in old_parts.items()))
    print("  new route parts (warm):  " + " | ".join(f"{k} {v:.3f} s" for k, v in new_parts.items()))
    # Machine-readable summary for bench/report.py (same figures as above).
    print(f'RESULT name=palette_sheet_{STEPS} goal="starkiln palette --steps {STEPS} contact '
          f'sheet, end to end (goal < {GOAL_S:g} s)" value={end_to_end:.4g} unit=s '
          f'reference={old_s:.4g} reference_label="per-access route, scaled" '
          f'ratio={old_s / end_to_end:.3g} sense="x faster"')
    print(f'RESULT name=palette_sheet_{STEPS}_goal goal="the same against its goal" '
          f'value={end_to_end:.4g} unit=s reference={GOAL_S:g} reference_label="goal" '
          f'ratio={end_to_end / GOAL_S:.3g} sense="of the goal (below 1 meets it)"')


if __name__ == "__main__":
    main()
