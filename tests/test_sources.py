"""Every source the repository cites can be found by its readers: no citation of notes that ship outside it.

Values come from a published document, a library with its version, "common practice" or "from memory",
listed in docs/sources.md; a "docs/sources.md §N" reference must name a section that exists there.
"""
from __future__ import annotations

import re
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
SCANNED_DIRS = ("tests", "docs", "scenarios", "ledger")
SCANNED_FILES = ("README.md", "DEVELOPERS.md")
TEXT_SUFFIXES = {".py", ".md", ".yaml", ".yml", ".tcss", ".txt", ".toml", ".json", ".cfg", ".ini", ""}
# Notes kept beside the repository, not in it (names split so this file does not match itself).
OUTSIDE = [re.escape(n + ".md") for n in ("FIELD", "RELIABILITY", "LIBRARIES", "DESIGN")]
OUTSIDE += [re.escape(".." + "/shared"), re.escape("/work" + "/shared")]
OUTSIDE_RE = re.compile("|".join(OUTSIDE))
SECTION_RE = re.compile(r"docs/sources\.md\s+§(\d+)")


def scanned() -> list[Path]:
    files = [ROOT / f for f in SCANNED_FILES if (ROOT / f).is_file()]
    for d in SCANNED_DIRS:
        files += sorted(p for p in (ROOT / d).rglob("*")
                        if p.is_file() and p.suffix in TEXT_SUFFIXES and "__pycache__" not in p.parts)
    return files


def test_the_scan_sees_the_repository():
    names = {p.relative_to(ROOT).as_posix() for p in scanned()}
    assert {"README.md", "docs/sources.md", "tests/conftest.py", "ledger/core/sigmas.py"} <= names


def test_no_file_cites_notes_outside_the_repository():
    hits = []
    for path in scanned():
        for no, line in enumerate(path.read_text(encoding="utf-8", errors="replace").splitlines(), start=1):
            if OUTSIDE_RE.search(line):
                hits.append(f"{path.relative_to(ROOT)}:{no}: {line.strip()}")
    assert not hits, "cite the primary source or docs/sources.md §N instead:\n" + "\n".join(hits)


@pytest.mark.parametrize("line", ["see /work" + "/shared" + "/FIELD" + ".md", "(FIELD" + ".md section 4)",
                                  ".." + "/shared" + "/notes", "RELIABILITY" + ".md, 'Locking'"])
def test_the_pattern_catches_outside_citations(line):
    assert OUTSIDE_RE.search(line)


def test_cited_sections_of_sources_md_exist():
    sections = set(re.findall(r"^## §(\d+)\b", (ROOT / "docs/sources.md").read_text(encoding="utf-8"), re.M))
    assert sections
    missing = []
    for path in scanned():
        for no, line in enumerate(path.read_text(encoding="utf-8", errors="replace").splitlines(), start=1):
            missing += [f"{path.relative_to(ROOT)}:{no}: §{n}" for n in SECTION_RE.findall(line) if n not in sections]
    assert not missing, "no such section in docs/sources.md:\n" + "\n".join(missing)
