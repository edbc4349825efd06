"""The repository stands on its own: no code, test or document cites a file outside it (the methods the
code rests on are written down in docs/methods.md, with their sources)."""

from __future__ import annotations

import re
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
#: Names of documents that live outside the repository (built from parts so this file does not match itself).
OUTSIDE = re.compile("|".join((r"DOMAIN" + r"\.md", r"\.\./" + "shared", r"/work/" + "shared",
                               r"domain " + "notes")), re.IGNORECASE)
FOLDERS = ("toolkit", "tests", "docs", "benchmarks", "examples", "tables", ".ci")
TOP = ("README.md", "DEVELOPERS.md", "pyproject.toml")
TEXT = {".py", ".md", ".toml", ".csv", ".txt", ".html", ".css", ".js", ".sh", ""}


def _files():
    for name in TOP:
        yield ROOT / name
    for folder in FOLDERS:
        for path in (ROOT / folder).rglob("*"):
            if path.is_file() and path.suffix in TEXT and "__pycache__" not in path.parts:
                yield path


def test_nothing_cites_a_file_outside_the_repository():
    found = []
    for path in _files():
        text = path.read_text(encoding="utf-8", errors="replace")
        for n, line in enumerate(text.splitlines(), start=1):
            if OUTSIDE.search(line):
                found.append(f"{path.relative_to(ROOT)}:{n}: {line.strip()[:100]}")
    assert not found, "\n".join(found)


def test_the_methods_document_is_there():
    assert (ROOT / "docs" / "methods.md").is_file()
