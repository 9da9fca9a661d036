"""Run the bench/ scripts and write their one performance table into docs/performance.md.

Run: ``python bench/report.py [--only render,lut] [--dry-run]`` (from the repository, with the
project installed; the full run takes several minutes). With ``--only``, the rows of the named
scripts are replaced in the table and every other row is kept as it was measured.

Each bench script prints its own side-by-side figures and, at the end, one machine-readable line
per goal::

    RESULT name=ID goal="what" value=V unit=U reference=R reference_label="what R is" \
        ratio=X sense="how to read X"

(``reference``, ``reference_label``, ``ratio`` and ``sense`` may be absent when a figure has no
reference.) This script runs the scripts one after another (never in parallel: the machine is
shared), collects those lines and replaces the text between ``<!-- bench:begin -->`` and
``<!-- bench:end -->`` in docs/performance.md with a Markdown table: one row a goal, the measured
figure, the reference figure and the ratio. The file is written atomically.
"""

from __future__ import annotations

import argparse
import datetime
import os
import platform
import re
import shlex
import subprocess
import sys
import time
from pathlib import Path

REPO = Path(__file__).resolve().parent.parent
DOC = REPO / "docs" / "performance.md"
BEGIN, END = "<!-- bench:begin -->", "<!-- bench:end -->"

# (key, script, extra arguments); bench_palette.py joins when it exists.
SCRIPTS = [
    ("render", "bench_render.py", []),
    ("lut", "bench_lut.py", []),
    ("gui", "bench_gui.py", []),
    ("catalogue", "bench_catalogue.py", []),
    ("palette", "bench_palette.py", []),
    ("ocio", "bench_ocio.py", []),
    ("working-spaces", "bench_working_spaces.py", []),
    ("icc", "bench_icc.py", []),
    ("png-icc", "bench_png_icc.py", []),
    ("plates", "bench_plates.py", []),
    ("deredden", "bench_deredden.py", []),
]


def parse_results(text: str) -> list[dict]:
    """Parse the ``RESULT key=value ...`` lines of a bench script's output.

    Parameters
    ----------
    text : str
        The script's standard output.

    Returns
    -------
    list of dict
        One dict per RESULT line, values as strings (shell-style quoting).
    """
    rows = []
    for line in text.splitlines():
        if not line.startswith("RESULT "):
            continue
        fields = dict(item.split("=", 1) for item in shlex.split(line[len("RESULT "):]))
        rows.append(fields)
    return rows


def _num(value: str) -> str:
    """Format a figure for the table: three significant digits, thousands kept whole."""
    x = float(value)
    if abs(x) >= 1000:
        return f"{x:,.0f}".replace(",", " ")
    return f"{x:.3g}"


def table(results: list[tuple[str, dict]]) -> str:
    """The Markdown table for a list of (script, RESULT fields)."""
    lines = ["| goal | measured | reference | ratio | script |",
             "| --- | ---: | --- | ---: | --- |"]
    for script, r in results:
        unit = r.get("unit", "")
        measured = f"{_num(r['value'])} {unit}".strip()
        if "reference" in r:
            ref = f"{_num(r['reference'])} {unit}".strip()
            label = r.get("reference_label", "")
            reference = f"{ref} ({label})" if label else ref
        else:
            reference = "—"
        ratio = f"{_num(r['ratio'])} {r.get('sense', '')}".strip() if "ratio" in r else "—"
        lines.append(f"| {r['goal']} | {measured} | {reference} | {ratio} | `{script}` |")
    return "\n".join(lines)


def replace_between_markers(doc: str, block: str) -> str:
    """Put ``block`` between the bench markers of ``doc`` (markers kept)."""
    try:
        head, rest = doc.split(BEGIN, 1)
        _, tail = rest.split(END, 1)
    except ValueError:
        raise SystemExit(f"report.py: error: {DOC} lacks the markers {BEGIN} ... {END}")
    return f"{head}{BEGIN}\n{block}\n{END}{tail}"


def merge_rows(doc: str, scripts: list[str], results: list[tuple[str, dict]], note: str) -> str:
    """The table of ``doc`` with the rows of ``scripts`` replaced by ``results``.

    The rows of every other script, and the line saying when they were measured, are kept;
    ``note`` says which rows are new. The new rows go where the first old row of those
    scripts was, or at the end.
    """
    try:
        current = doc.split(BEGIN, 1)[1].split(END, 1)[0].strip().splitlines()
    except IndexError:
        raise SystemExit(f"report.py: error: {DOC} lacks the markers {BEGIN} ... {END}")
    header = []
    for line in current:
        if not line or line.startswith("|"):
            continue
        m = re.match(r"Rows of (.*?) measured (.*)$", line)
        if m:  # keep what other scripts' rows say of when they were measured
            names = [n for n in re.findall(r"`([^`]+)`", m.group(1)) if n not in scripts]
            if not names:
                continue
            line = f"Rows of {', '.join(f'`{n}`' for n in names)} measured {m.group(2)}"
        header.append(line)
    rows = [line for line in current if line.startswith("|")][2:]
    new = table(results).splitlines()[2:]
    ours = [any(line.rstrip().endswith(f"| `{s}` |") for s in scripts) for line in rows]
    at = ours.index(True) if any(ours) else len(rows)
    kept = [line for line, mine in zip(rows, ours) if not mine]
    at = sum(1 for mine in ours[:at] if not mine)
    body = table([]).splitlines() + kept[:at] + new + kept[at:]
    return "\n".join(header + [note, ""] + body)


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--only", default="", help="comma list of script keys "
                    "(render, lut, gui, catalogue, palette, working-spaces, deredden ...); default all: "
                    "with --only, the other scripts' rows are kept")
    ap.add_argument("--dry-run", action="store_true", help="print the table, do not write it")
    args = ap.parse_args(argv)
    only = {k for k in args.only.split(",") if k}
    known = {key for key, _, _ in SCRIPTS}
    if only - known:
        raise SystemExit(f"report.py: error: --only {','.join(sorted(only - known))} unknown; "
                         f"accepted: {', '.join(key for key, _, _ in SCRIPTS)}")

    env = dict(os.environ, QT_QPA_PLATFORM=os.environ.get("QT_QPA_PLATFORM", "offscreen"))
    results: list[tuple[str, dict]] = []
    for key, script, extra in SCRIPTS:
        path = REPO / "bench" / script
        if (only and key not in only) or not path.exists():
            continue
        print(f"running {script} ...", file=sys.stderr, flush=True)
        t0 = time.perf_counter()
        proc = subprocess.run([sys.executable, str(path), *extra], cwd=REPO, env=env,
                              capture_output=True, text=True)
        sys.stderr.write(proc.stdout)
        if proc.returncode != 0:
            sys.stderr.write(proc.stderr)
            raise SystemExit(f"report.py: error: {script} exited with {proc.returncode}")
        found = parse_results(proc.stdout)
        if not found:
            raise SystemExit(f"report.py: error: {script} printed no RESULT lines")
        results += [(script, r) for r in found]
        print(f"  {len(found)} results in {time.perf_counter() - t0:.0f} s", file=sys.stderr)

    stamp = datetime.date.today().isoformat()
    where = (f"on {os.cpu_count()} cores ({platform.machine()}, Python "
             f"{platform.python_version()})")
    if only:
        scripts = [script for key, script, _ in SCRIPTS if key in only]
        block = merge_rows(DOC.read_text(encoding="utf-8"), scripts, results,
                           f"Rows of {', '.join(f'`{s}`' for s in scripts)} measured {stamp} by "
                           f"`python bench/report.py --only {args.only}` {where}.")
    else:
        block = f"Measured {stamp} by `python bench/report.py` {where}.\n\n" + table(results)
    if args.dry_run:
        print(block)
        return 0
    from starkiln.engine.atomic import write_atomic
    text = replace_between_markers(DOC.read_text(encoding="utf-8"), block)
    write_atomic(DOC, text.encode("utf-8"))
    print(f"wrote {len(results)} rows to {DOC.relative_to(REPO)}", file=sys.stderr)
    return 0


if __name__ == "__main__":
    sys.exit(main())
