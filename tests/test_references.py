"""The bibliography and the citations agree (DEVELOPERS.md, "Where references go").

docs/references.md is the keyed bibliography: one ``**[KEY]**`` entry a published source.
Docstrings and comments cite a source by its key in plain brackets, then the section, table or
equation: ``[CIE15] section 7.1``. Checked here, from the text of every ``.py`` file of the
package (``api/``, ``cli/``, ``engine/``, ``gui/``; read with :mod:`ast` and :mod:`tokenize`,
docstrings and comments only) and of ``tests/``, and of the pages in ``docs/`` and README.md:

- every key cited has an entry in docs/references.md;
- every entry is cited at least once by the package or its tests;
- stale spellings the bibliography replaced do not come back.

A key is a bracketed word of three or more letters, digits and hyphens with a capital or digit
(``[CIE15]``, ``[IEC61966-2-1]``, ``[vonKries1902]``), not preceded by a word character and not
followed by ``(`` (a Markdown link); so ``list[str]``, ``[display]`` in a TOML example, a unit
such as ``[K]`` and ``[science.md](science.md)`` are not citations.
"""

from __future__ import annotations

import ast
import io
import re
import tokenize
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
PACKAGE_DIRS = ("api", "cli", "engine", "gui")
KEY = re.compile(r"(?<![\w\[\]`*])\[([A-Za-z][A-Za-z0-9-]*)\]_?(?![(\w])")
ENTRY = re.compile(r"^\*\*\[([A-Za-z][A-Za-z0-9-]*)\]\*\*", re.MULTILINE)


def _is_key(word: str) -> bool:
    return len(word) >= 3 and any(c.isupper() or c.isdigit() for c in word)


def keys_in(text: str) -> list[str]:
    """The citation keys in a piece of text (see the module docstring)."""
    return [k for k in KEY.findall(text) if _is_key(k)]


def prose_of(path: Path) -> list[str]:
    """Docstrings (module, class, function) and comments of one Python file."""
    src = path.read_text(encoding="utf-8")
    texts = []
    for node in ast.walk(ast.parse(src)):
        if isinstance(node, (ast.Module, ast.ClassDef, ast.FunctionDef, ast.AsyncFunctionDef)):
            doc = ast.get_docstring(node, clean=False)
            if doc:
                texts.append(doc)
    for tok in tokenize.generate_tokens(io.StringIO(src).readline):
        if tok.type == tokenize.COMMENT:
            texts.append(tok.string)
    return texts


def bibliography() -> list[str]:
    return ENTRY.findall((ROOT / "docs" / "references.md").read_text(encoding="utf-8"))


def citations(dirs) -> dict[str, set[str]]:
    """key -> the files (relative paths) that cite it, over the ``.py`` files under ``dirs``."""
    found: dict[str, set[str]] = {}
    for d in dirs:
        for path in sorted((ROOT / d).rglob("*.py")):
            for text in prose_of(path):
                for k in keys_in(text):
                    found.setdefault(k, set()).add(str(path.relative_to(ROOT)))
    return found


def test_key_pattern():
    # The pattern itself: citations found, code and links not.
    assert keys_in("as in [CIE15] section 7.1 and [IEC61966-2-1]; [WyszeckiStiles1982]_ 3.11") == [
        "CIE15", "IEC61966-2-1", "WyszeckiStiles1982"]
    assert keys_in("list[str], a[Path], [display] table, [science.md](science.md), [1, 2], "
                   "Teff [K]") == []
    assert keys_in("[vonKries1902] and [ColourScience]") == ["vonKries1902", "ColourScience"]


def test_bibliography_has_entries_and_no_duplicates():
    keys = bibliography()
    assert len(keys) >= 40
    assert len(keys) == len(set(keys)), sorted(k for k in keys if keys.count(k) > 1)


def test_every_key_cited_in_the_package_and_tests_has_an_entry():
    known = set(bibliography())
    cited = citations(PACKAGE_DIRS + ("tests",))
    missing = {k: sorted(v) for k, v in cited.items() if k not in known}
    assert not missing, f"cited but not in docs/references.md: {missing}"


def test_every_key_cited_in_the_documents_has_an_entry():
    known = set(bibliography())
    pages = [ROOT / "README.md", *sorted((ROOT / "docs").glob("*.md"))]
    missing = {}
    for page in pages:
        text = page.read_text(encoding="utf-8")
        if page.name == "references.md":
            text = ENTRY.sub("", text)
        for k in keys_in(text):
            if k not in known:
                missing.setdefault(k, set()).add(page.name)
    assert not missing, f"cited but not in docs/references.md: {missing}"


def test_every_entry_is_cited_by_the_package_or_its_tests():
    cited = citations(PACKAGE_DIRS + ("tests",))
    unused = [k for k in bibliography() if k not in cited]
    assert not unused, f"entries of docs/references.md nobody cites: {unused}"


#: References only the tests use: outside data or worked examples the program does not ship.
TEST_ONLY = {
    "Sharma2003": "CIEDE2000 worked examples (test data)",
    "Colina1996": "the CALSPEC solar spectrum (test extra only, never shipped)",
    "CasagrandeVandenBerg2018": "an independent BP-RP temperature check",
    "vanLeeuwen2007": "the Hipparcos 2 catalogue (test extra only, never shipped)",
    "Ohno2014": "the Planckian locus and CCT the window's dust test compares with",
}


def test_the_package_cites_every_entry_itself_but_the_test_only_ones():
    # The package's own docstrings carry the citations, not only the tests; the exceptions
    # are named, so a new entry cited only by a test fails here until it is listed.
    cited = citations(PACKAGE_DIRS)
    keys = bibliography()
    assert set(TEST_ONLY) <= set(keys)
    assert [k for k in keys if k not in cited and k not in TEST_ONLY] == []


STALE = [
    "Planck 1900", "Planck (1900)", "CIE 18:2019", "eq. 9.x", "Allen 2000",
    "Allen's Astrophysical", "Pecaut & Mamajek (2013) Table 5 (from memory)",
    "Table 5, values from memory", "README \"", "see README", "starkiln[catalogue]",
    "ITU-R BT.709 / common practice", "95 lm/W around 6600 K (from memory)",
]


def test_stale_citations_stay_gone():
    # The spellings the bibliography replaced (issue 9), in the package's docstrings, comments
    # and strings: any source text at all.
    hits = []
    for d in PACKAGE_DIRS:
        for path in sorted((ROOT / d).rglob("*.py")):
            text = path.read_text(encoding="utf-8")
            hits += [(str(path.relative_to(ROOT)), s) for s in STALE if s in text]
    assert not hits, hits
