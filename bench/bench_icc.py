"""Importing an ICC display profile: `starkiln displays import` against start-up alone.

Goal (issue 11): importing a profile costs < 0.5 s beyond start-up. Measured two ways, side by
side: cold runs of `starkiln displays import PROFILE.icc -o OUT.json --force` against cold runs
of `starkiln displays` (the same start-up, listing only), median of N; and the engine call
alone (`display_from_icc`) in this process, for LittleCMS's built-in sRGB profile and for a
profile with a 4096-entry table curve (the slowest kind to fit).
"""

from __future__ import annotations

import argparse
import statistics
import struct
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np


def cold(cmd, runs: int) -> float:
    times = []
    for _ in range(runs):
        t0 = time.perf_counter()
        subprocess.run(cmd, check=True, stdout=subprocess.DEVNULL)
        times.append(time.perf_counter() - t0)
    return statistics.median(times)


def table_profile(srgb: bytes, n: int = 4096) -> bytes:
    """The sRGB profile with its three TRC tags pointing at one n-entry 'curv' table appended
    ([ICC1] 7.3 tag table, 10.6 curveType) whose curve no formula fits."""
    v = np.linspace(0, 1, n)
    entries = np.round((0.02 * v + 0.98 * v ** 2.6) * 65535).astype(">u2")
    curv = b"curv" + b"\0" * 4 + struct.pack(">I", n) + entries.tobytes()
    data = bytearray(srgb + b"\0" * (-len(srgb) % 4))
    offset = len(data)
    data += curv
    count = struct.unpack(">I", data[128:132])[0]
    for i in range(count):
        at = 132 + 12 * i
        if bytes(data[at:at + 4]) in (b"rTRC", b"gTRC", b"bTRC"):
            data[at + 4:at + 12] = struct.pack(">II", offset, len(curv))
    data[0:4] = struct.pack(">I", len(data))
    return bytes(data)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="fewer runs")
    args = ap.parse_args()
    from PIL import ImageCms

    from starkiln.engine.colour.icc_profiles import display_from_icc

    runs = 5 if args.quick else 9
    folder = Path(tempfile.mkdtemp(prefix="starkiln-bench-icc-"))
    srgb = ImageCms.ImageCmsProfile(ImageCms.createProfile("sRGB")).tobytes()
    (folder / "srgb.icc").write_bytes(srgb)
    (folder / "table.icc").write_bytes(table_profile(srgb))
    assert display_from_icc(folder / "table.icc").display.transfer == "table"

    print(f"{'engine call (median of 50)':<44}{'seconds':>12}")
    engine = {}
    for name in ("srgb.icc", "table.icc"):
        display_from_icc(folder / name)
        times = []
        for _ in range(50):
            t0 = time.perf_counter()
            display_from_icc(folder / name)
            times.append(time.perf_counter() - t0)
        engine[name] = statistics.median(times)
        print(f"{'display_from_icc ' + name:<44}{engine[name]:>12.4f}")
    print()
    base = [sys.executable, "-m", "starkiln", "displays"]
    t_list = cold(base, runs)
    t_import = {n: cold(base + ["import", str(folder / n), "-o", str(folder / "out.json"),
                                "--force"], runs) for n in ("srgb.icc", "table.icc")}
    print(f"{'cold start (median of %d)' % runs:<44}{'import s':>12}{'listing s':>12}"
          f"{'beyond s':>10}")
    for n, t in t_import.items():
        print(f"{'starkiln displays import ' + n:<44}{t:>12.3f}{t_list:>12.3f}{t - t_list:>10.3f}")
    worst = max(t_import.values()) - t_list
    for name, goal, value, ref, ref_label, ratio, sense in (
            ("icc_import_beyond_start", "`starkiln displays import` beyond start-up (goal < 0.5 s)",
             max(worst, 0.0), 0.5, "goal", max(worst, 0.0) / 0.5, "of the goal"),
            ("icc_import_engine", "display_from_icc, 4096-entry table curve", engine["table.icc"],
             engine["srgb.icc"], "sRGB built-in profile", engine["table.icc"] / engine["srgb.icc"],
             "x the sRGB profile's time")):
        print(f'RESULT name={name} goal="{goal}" value={value:.4g} unit=s reference={ref:.4g} '
              f'reference_label="{ref_label}" ratio={ratio:.4g} sense="{sense}"')


if __name__ == "__main__":
    main()
