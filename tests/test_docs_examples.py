"""The console examples of README.md and docs/*.md run, and print what the pages show.

Convention (DEVELOPERS.md, "Documentation"):

- Examples that run live in fenced ```` ```console ```` blocks. A line starting with ``$ `` is a
  command; a command continues over lines ending with `` \\``. The lines after a command, up
  to the next ``$ ``, are the output the page shows. No lines: the output is not checked.
- In shown output a line that is only ``...`` stands for any number of lines (none included);
  ``...`` inside a line stands for any text within that line.
- ``starkiln`` runs as ``sys.executable -m starkiln``, ``python`` as ``sys.executable``; besides
  those only ``head`` and ``cmp`` may appear. A command ending in ``# exits N`` must exit with
  status N and its stderr is compared; every other command must exit 0 and its stdout is
  compared.
- Each page runs its blocks in order in one temporary folder holding a copy of the shipped
  ``assets/`` (``starkiln.assets``), so later examples may use files earlier ones wrote.
- A block right after ``<!-- docs-test: skip (reason) -->`` is not run (the user's own files, a
  cluster, the interactive window). Commands outside console blocks are not allowed: a
  ``starkiln`` line in another fenced block fails the test.

The window example uses ``--screenshot`` with ``QT_QPA_PLATFORM=offscreen``.
"""

from __future__ import annotations

import os
import re
import shlex
import shutil
import subprocess
import sys
from dataclasses import dataclass, field
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
PAGES = [ROOT / "README.md", *sorted((ROOT / "docs").glob("*.md"))]
SKIP_MARK = re.compile(r"<!--\s*docs-test:\s*skip\b.*?-->")
FENCE = re.compile(r"^(`{3,})\s*([\w+-]*)")
EXIT_MARK = re.compile(r"\s+#\s*exits\s+(\d+)\s*$")
ALLOWED = {"starkiln", "python", "head", "cmp"}


@dataclass
class Example:
    page: str
    line: int
    command: str
    output: list[str] = field(default_factory=list)
    skipped: bool = False


@dataclass
class Block:
    language: str
    line: int
    lines: list[str]
    skipped: bool


def fenced_blocks(text: str) -> list[Block]:
    """Fenced code blocks of a Markdown page, with whether a skip marker precedes them."""
    blocks, lines = [], text.splitlines()
    i, previous = 0, ""
    while i < len(lines):
        m = FENCE.match(lines[i])
        if not m:
            if lines[i].strip():
                previous = lines[i]
            i += 1
            continue
        fence, language, start = m.group(1), m.group(2).lower(), i
        body = []
        i += 1
        while i < len(lines) and not lines[i].startswith(fence):
            body.append(lines[i])
            i += 1
        blocks.append(Block(language, start + 1, body, bool(SKIP_MARK.search(previous))))
        previous = ""
        i += 1
    return blocks


def examples(page: Path) -> list[Example]:
    """The console examples of one page, in order."""
    out: list[Example] = []
    for block in fenced_blocks(page.read_text(encoding="utf-8")):
        if block.language != "console":
            continue
        current = None
        lines = iter(enumerate(block.lines))
        for k, line in lines:
            if line.startswith("$ "):
                command = line[2:]
                while command.endswith("\\"):
                    command = command[:-1] + " " + next(lines)[1].strip()
                current = Example(page.name, block.line + k + 1, command, skipped=block.skipped)
                out.append(current)
            elif current is not None:
                current.output.append(line)
            elif line.strip():
                raise AssertionError(f"{page.name}:{block.line + k + 1}: console block starts "
                                     "with output, not a '$ ' command")
    return out


def matches(shown: list[str], actual: list[str]) -> bool:
    """Whether ``actual`` lines match ``shown`` (``...`` wildcards, see the module docstring)."""
    if not shown:
        return not actual
    head, rest = shown[0], shown[1:]
    if head.strip() == "...":
        return any(matches(rest, actual[k:]) for k in range(len(actual) + 1))
    if not actual:
        return False
    pattern = ".*".join(re.escape(part) for part in head.rstrip().split("..."))
    return re.fullmatch(pattern, actual[0].rstrip()) is not None and matches(rest, actual[1:])


def argv_of(command: str) -> list[str]:
    words = shlex.split(command)
    if words[0] not in ALLOWED:
        raise AssertionError(f"{command!r}: only {', '.join(sorted(ALLOWED))} may run in a "
                             "docs example")
    if words[0] == "starkiln":
        rest = words[1:]
        if not rest or (rest[0].startswith("--") and "--screenshot" not in rest
                        and rest[0] not in ("--version", "--help")):
            raise AssertionError(f"{command!r} would open the window and wait: use "
                                 "--screenshot, or mark the block with a docs-test skip")
        return [sys.executable, "-m", "starkiln", *rest]
    if words[0] == "python":
        return [sys.executable, *words[1:]]
    return words


def run_page(page: Path, folder: Path) -> None:
    shutil.copytree(ROOT / "assets", folder / "assets",
                    ignore=shutil.ignore_patterns("__pycache__", "*.py"))
    env = dict(os.environ, QT_QPA_PLATFORM="offscreen", COLUMNS="100")
    for ex in examples(page):
        if ex.skipped:
            continue
        command, expected_status = ex.command, 0
        m = EXIT_MARK.search(command)
        if m:
            command, expected_status = command[:m.start()], int(m.group(1))
        argv = argv_of(command)
        proc = subprocess.run(argv, cwd=folder, env=env, capture_output=True, text=True,
                              timeout=120)
        where = f"{ex.page}:{ex.line}: $ {ex.command}"
        assert proc.returncode == expected_status, (
            f"{where}\nexit {proc.returncode}, expected {expected_status}\n{proc.stderr}")
        shown_stream = proc.stdout if expected_status == 0 else proc.stderr
        if ex.output:
            assert matches(ex.output, shown_stream.splitlines()), (
                f"{where}\nthe page shows:\n" + "\n".join(ex.output)
                + "\nthe command printed:\n" + shown_stream)


@pytest.mark.parametrize("page", PAGES, ids=lambda p: p.name)
def test_console_examples_run_and_match(page, tmp_path):
    run_page(page, tmp_path)


def test_pages_have_console_examples():
    # The user-facing pages that teach commands must keep at least one runnable example each.
    counted = {p.name: sum(not e.skipped for e in examples(p)) for p in PAGES}
    for name in ("README.md", "guide.md"):
        assert counted[name] >= 4, counted


@pytest.mark.parametrize("page", PAGES, ids=lambda p: p.name)
def test_no_untested_commands_outside_console_blocks(page):
    # Every starkiln command the docs show is in a console block (so it runs above), except
    # inside a block marked as skipped.
    for block in fenced_blocks(page.read_text(encoding="utf-8")):
        if block.language == "console" or block.skipped:
            continue
        for k, line in enumerate(block.lines):
            assert not re.match(r"\s*(\$\s*)?starkiln(\s|$)", line), (
                f"{page.name}:{block.line + k + 1}: a starkiln command outside a console block")


def test_readme_test_command_is_the_one_ci_runs():
    # .ci/run runs the README's test command verbatim; keep the two in step.
    ci = (ROOT / ".ci" / "run").read_text(encoding="utf-8").splitlines()
    marker = max(i for i, line in enumerate(ci) if line.startswith("# The README's test command"))
    command = ci[marker + 1].strip()
    assert command == 'python3 -m pip install ".[test]" && python3 -m pytest -q'
    readme = (ROOT / "README.md").read_text(encoding="utf-8").splitlines()
    assert command in (line.strip() for line in readme)


def test_formats_reference_examples_are_valid_files(tmp_path):
    # The settings and display-profile examples of docs/formats.md load as the files they
    # describe; the settings example is documented as exactly the defaults.
    import json

    import starkiln

    blocks = fenced_blocks((ROOT / "docs" / "formats.md").read_text(encoding="utf-8"))
    tomls = [b for b in blocks if b.language == "toml"]
    profiles = [b for b in blocks if b.language == "json"
                and '"starkiln_display"' in "\n".join(b.lines)]
    assert tomls and profiles
    settings_path = tmp_path / "example.toml"
    settings_path.write_text("\n".join(tomls[0].lines) + "\n", encoding="utf-8")
    assert starkiln.load_settings(settings_path) == starkiln.Settings()
    for k, block in enumerate(profiles):
        path = tmp_path / f"profile{k}.json"
        path.write_text("\n".join(block.lines), encoding="utf-8")
        data = json.loads(path.read_text(encoding="utf-8"))
        display = starkiln.get_display(str(path))
        assert display.white_xy == tuple(data["white_xy"])
        assert display.peak_luminance_cd_m2 == data["peak_luminance_cd_m2"]


def _anchors(text: str) -> set[str]:
    # GitHub's heading anchors: lower case, punctuation other than '-' and '_' dropped, spaces
    # to '-' (common practice of Markdown renderers).
    out = set()
    for block_free in re.sub(r"^```.*?^```", "", text, flags=re.S | re.M).splitlines():
        m = re.match(r"^#{1,6}\s+(.*)", block_free)
        if m:
            title = re.sub(r"[^\w\- ]", "", m.group(1).strip().lower())
            out.add(title.replace(" ", "-"))
    return out


@pytest.mark.parametrize("page", PAGES, ids=lambda p: p.name)
def test_links_between_pages_resolve(page):
    text = page.read_text(encoding="utf-8")
    for target, anchor in re.findall(r"\]\(([^)#\s]*)(?:#([^)\s]+))?\)", text):
        if re.match(r"[a-z]+://", target):
            continue
        path = (page.parent / target) if target else page
        assert path.exists(), f"{page.name}: link to missing {target}"
        if anchor:
            assert anchor in _anchors(path.read_text(encoding="utf-8")), (
                f"{page.name}: link to {target}#{anchor}: no such heading")


def test_performance_table_comes_from_every_bench_script():
    # docs/performance.md holds the one table bench/report.py writes between its markers, with
    # rows from every bench script report.py runs.
    sys.path.insert(0, str(ROOT / "bench"))
    try:
        import report
    finally:
        sys.path.remove(str(ROOT / "bench"))
    text = (ROOT / "docs" / "performance.md").read_text(encoding="utf-8")
    assert text.count(report.BEGIN) == 1 and text.count(report.END) == 1
    block = text.split(report.BEGIN, 1)[1].split(report.END, 1)[0]
    for _, script, _ in report.SCRIPTS:
        if (ROOT / "bench" / script).exists():
            assert f"`{script}` |" in block, script
    line = ('RESULT name=x goal="a goal" value=2.5 unit=s reference=5 reference_label="goal" '
            'ratio=0.5 sense="of the goal"')
    assert report.table([("b.py", r) for r in report.parse_results(line)]).splitlines()[-1] == (
        "| a goal | 2.5 s | 5 s (goal) | 0.5 of the goal | `b.py` |")


def test_matcher_wildcards():
    # The matcher itself: '...' lines and in-line '...' wildcards, and real mismatches.
    assert matches(["a", "...", "z"], ["a", "b", "c", "z"])
    assert matches(["a", "...", "z"], ["a", "z"])
    assert matches(["x ... y"], ["x 12 s y"])
    assert not matches(["x ... y"], ["x 12 s z"])
    assert not matches(["a", "b"], ["a", "c"])
    assert not matches(["a"], ["a", "extra"])


def test_skip_marker_and_continuations(tmp_path):
    page = tmp_path / "p.md"
    page.write_text("<!-- docs-test: skip (own files) -->\n```console\n$ starkiln a \\\n"
                    "      b\n```\n\n```console\n$ starkiln c\nout\n```\n", encoding="utf-8")
    found = examples(page)
    assert [(e.command, e.skipped, e.output) for e in found] == [
        ("starkiln a  b", True, []), ("starkiln c", False, ["out"])]
