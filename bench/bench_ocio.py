"""Benchmark: ``starkiln ocio`` end to end, beyond the command line's start-up.

Run: ``python bench/bench_ocio.py`` (from the repository, with the project installed).

Figures, measured side by side in one run (best of three fresh processes each):

1. ``starkiln --version``: the process start-up every command pays.
2. ``starkiln ocio assets/dome_projector.json OUT`` (the exact gamma curve, config only) and
   the same with ``--curve sampled`` (plus the 65 536-entry half-domain CLF curve, the form
   every transfer without an exact OCIO transform takes), each into a new folder.
3. Each beyond the start-up, against the goal of 0.5 s (issue 11).

Ends with one ``RESULT`` line a curve for ``bench/report.py``: the time beyond start-up and
its ratio to the goal (below 1 meets it).
"""

from __future__ import annotations

import sys
import tempfile
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))
from bench_lut import _run  # noqa: E402 (one way to time a fresh starkiln process)

REPO = Path(__file__).resolve().parent.parent
DOME = REPO / "assets" / "dome_projector.json"
GOAL_S = 0.5


def best_write_s(curve: str, repeats: int = 3) -> float:
    """Best of ``repeats`` runs of ``starkiln ocio DOME NEW_FOLDER --curve CURVE``, seconds."""
    times = []
    with tempfile.TemporaryDirectory() as tmp:
        for k in range(repeats):
            times.append(_run(["ocio", str(DOME), str(Path(tmp) / f"cfg{k}"), "--curve", curve]))
    return min(times)


def main() -> None:
    startup = min(_run(["--version"]) for _ in range(3))
    print("starkiln ocio (dome projector profile), best of 3 fresh processes")
    print(f"  process start-up (starkiln --version):          {startup:8.3f} s")
    results = []
    for curve in ("exact", "sampled"):
        total = best_write_s(curve)
        beyond = total - startup
        results.append((curve, total, beyond))
        print(f"  --curve {curve:<8} end to end:                  {total:8.3f} s")
        print(f"    beyond start-up:                              {beyond:8.3f} s  (goal < "
              f"{GOAL_S:g} s: {'met' if beyond < GOAL_S else 'NOT met'})")
    for curve, total, beyond in results:
        print(f'RESULT name=ocio_config_{curve} goal="starkiln ocio, --curve {curve}, beyond '
              f'start-up (goal < {GOAL_S:g} s)" value={beyond:.4g} unit=s '
              f'reference={GOAL_S:g} reference_label="goal" ratio={beyond / GOAL_S:.3g} '
              f'sense="of the goal (below 1 meets it)"')


if __name__ == "__main__":
    main()
