"""The project's sources are inside the project.

Every check names its source with a key in square brackets, e.g. ``Rall 1969 [Rall1969]``, whose
entry is in docs/sources.md (DEVELOPERS.md, "External checks"). These tests keep that true:

* no file of the repository points at a check-value sheet outside it, nor uses that sheet's
  provenance tags (a numbered publication tag or a computed-value tag), which a reader of the
  repository could not resolve;
* every key cited in the code, tests, docs and worked examples has an entry in docs/sources.md,
  and every entry is defined once;
* every test file that docs/sources.md names as the place of a check exists.
"""

from __future__ import annotations

import os
import re
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
SOURCES = ROOT / "docs" / "sources.md"

# a citation key: family names (or a library's name) and a four-digit year, in square brackets
CITATION = re.compile(r"\[([A-Za-z][A-Za-z]+\d{4}[a-z]?)\]")
# an entry of docs/sources.md starts a line with its key in bold: **[Rall1969]**
ENTRY = re.compile(r"^\*\*\[([^\]\s]+)\]\*\*", re.MULTILINE)
# pointers to the outside sheet and its tags; written so that this file does not match itself
OUTSIDE = re.compile(r"checks\.md|shared[/\\]reference|\[(?:PUB\s*\d*|COMP)\b[^\]\n]*\]")
NAMED_TEST = re.compile(r"`(tests/[\w/]+\.py)`")

SKIP_DIRS = {"build", "dist", "node_modules", "__pycache__"}
TEXT_SUFFIXES = {".py", ".md", ".txt", ".toml", ".cfg", ".ini", ".csv", ".json", ".svg", ".swc", ".outline",
                 ".tcss", ".yml", ".yaml", ".sh", ""}


def repository_files() -> list[Path]:
    """Text files of the repository, without tool caches, virtual environments and build output."""
    files = []
    for folder, dirs, names in os.walk(ROOT):
        dirs[:] = [d for d in dirs if not ((d.startswith(".") and d != ".ci") or d in SKIP_DIRS
                                           or d.endswith(".egg-info"))]
        files += [Path(folder, n) for n in names if Path(n).suffix in TEXT_SUFFIXES]
    return files


def read(path: Path) -> str:
    return path.read_text(encoding="utf-8", errors="replace")


def defined_keys() -> list[str]:
    return ENTRY.findall(read(SOURCES))


def test_the_file_walk_sees_the_repository() -> None:
    """Guard for the tests below: the walk finds the tests, the package and this bibliography."""
    names = {p.relative_to(ROOT).as_posix() for p in repository_files()}
    assert {"tests/test_sources.py", "docs/sources.md", "DEVELOPERS.md", "README.md"} <= names
    assert any(n.startswith("cabletheory/") for n in names)


def test_no_file_points_outside_the_repository_for_its_sources() -> None:
    hits = []
    for path in repository_files():
        for number, line in enumerate(read(path).splitlines(), start=1):
            if OUTSIDE.search(line):
                hits.append(f"{path.relative_to(ROOT)}:{number}: {line.strip()}")
    assert not hits, "cite the source from docs/sources.md instead:\n" + "\n".join(hits)


def test_every_entry_is_defined_once() -> None:
    keys = defined_keys()
    assert len(keys) >= 10
    assert len(keys) == len(set(keys)), sorted(k for k in keys if keys.count(k) > 1)
    assert all(CITATION.fullmatch(f"[{k}]") for k in keys), [k for k in keys if not CITATION.fullmatch(f"[{k}]")]


def test_every_cited_key_has_an_entry() -> None:
    known = set(defined_keys())
    missing = []
    cited = set()
    for path in repository_files():
        if path.suffix not in {".py", ".md"} or path == SOURCES:
            continue
        for number, line in enumerate(read(path).splitlines(), start=1):
            for key in CITATION.findall(line):
                cited.add(key)
                if key not in known:
                    missing.append(f"{path.relative_to(ROOT)}:{number}: [{key}]")
    assert not missing, "add these sources to docs/sources.md (or fix the key):\n" + "\n".join(missing)
    assert len(cited) >= 10  # the tests do cite their sources this way


def test_tests_named_in_the_bibliography_exist() -> None:
    named = set(NAMED_TEST.findall(read(SOURCES)))
    assert named
    gone = sorted(n for n in named if not (ROOT / n).is_file())
    assert not gone, f"docs/sources.md names test files that do not exist: {gone}"


@pytest.mark.parametrize("text", [
    "see the sheet's table 2.4 " + "[" + "COMP]",
    "Rall 1969 " + "[" + "PUB 3]",
    "values of " + "checks" + ".md",
    "../shared" + "/reference/x",
])
def test_the_outside_pattern_catches_the_old_tags(text: str) -> None:
    assert OUTSIDE.search(text)


@pytest.mark.parametrize("text", ["Rall 1969 [Rall1969] [MEM]", "a list [1, 2]", "[CP]", "x[i]"])
def test_the_outside_pattern_spares_our_own_citations(text: str) -> None:
    assert not OUTSIDE.search(text)
