"""bench/report.py's table merge: other scripts' rows and their measurement dates are kept.

The expected lines are written out here by hand (the format the module docstring defines),
not produced by the code under test.
"""

import importlib.util
from pathlib import Path

SPEC = importlib.util.spec_from_file_location(
    "bench_report", Path(__file__).resolve().parent.parent / "bench" / "report.py")
report = importlib.util.module_from_spec(SPEC)
SPEC.loader.exec_module(report)

DOC = """intro
<!-- bench:begin -->
Measured 2026-01-01 by `python bench/report.py` on 2 cores.
Rows of `bench_gui.py` measured 2026-01-02 by `python bench/report.py --only gui` on 2 cores.
Rows of `bench_catalogue.py`, `bench_plates.py` measured 2026-01-03 by `python bench/report.py --only catalogue,plates` on 2 cores.

| goal | measured | reference | ratio | script |
| --- | ---: | --- | ---: | --- |
| a | 1 s | — | — | `bench_gui.py` |
| b | 2 s | — | — | `bench_plates.py` |
| c | 3 s | — | — | `bench_catalogue.py` |
<!-- bench:end -->
"""


def test_other_scripts_keep_their_date_lines_and_rows():
    new = [("bench_plates.py", {"name": "b", "goal": "b", "value": "9", "unit": "s"})]
    out = report.merge_rows(DOC, ["bench_plates.py"], new, "Rows of `bench_plates.py` new.")
    lines = out.splitlines()
    assert "Rows of `bench_gui.py` measured 2026-01-02 by `python bench/report.py --only gui` on 2 cores." in lines
    # the shared line loses only the re-measured script
    assert ("Rows of `bench_catalogue.py` measured 2026-01-03 by `python bench/report.py "
            "--only catalogue,plates` on 2 cores.") in lines
    assert "Rows of `bench_plates.py` new." in lines
    assert "| a | 1 s | — | — | `bench_gui.py` |" in lines
    assert "| c | 3 s | — | — | `bench_catalogue.py` |" in lines
    assert "| b | 2 s | — | — | `bench_plates.py` |" not in lines
    assert sum(line.endswith("`bench_plates.py` |") for line in lines) == 1


def test_a_date_line_of_only_remeasured_scripts_is_replaced():
    out = report.merge_rows(DOC, ["bench_gui.py"], [], "Rows of `bench_gui.py` new.")
    assert not any("2026-01-02" in line for line in out.splitlines())
