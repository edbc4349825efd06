"""Every command shown with its output in README.md, docs/tour-*.md and docs/web.md is re-run here and compared.

A documented example is a fenced code block whose lines start with ``$ counterpoise ...``; the lines after a
command, up to the next ``$`` line or the end of the block, are its expected output (stdout and stderr as a
terminal shows them, in the order they were written). The commands of one page run in order, in one scratch
folder holding a copy of ``examples/`` (so a page can save coefficients and use them in its next command).

What the expected text may abbreviate, and nothing else:

- a line that is just ``...`` (any indentation) stands for any number of lines, none included;
- a line ending in ``...`` matches a line that starts with the text before the dots;
- a command ending in ``(abridged)`` must print every expected line, in order, with any lines between;
- ``; echo $?`` after a command adds the exit status as a last line, and a last line ``(exit status N)``
  checks the exit status without printing it;
- ``> /dev/null`` after a command discards its output (the command must still succeed).

Only what must vary is normalised: calendar dates. Commands that time things (``python benchmarks/...``)
are not re-run here: their figures are re-measured by hand (docs/tour-performance.md says how); this test
lists them so that no other kind of command slips through unchecked.

These are behaviour checks of our own documentation, not published values; no check value needs a source.
"""

from __future__ import annotations

import contextlib
import io
import re
import shlex
import shutil
from dataclasses import dataclass, field
from pathlib import Path

import pytest

from toolkit.cli import main

ROOT = Path(__file__).resolve().parents[1]
PAGES = [ROOT / "README.md", *sorted((ROOT / "docs").glob("tour-*.md")), ROOT / "docs" / "web.md"]
TIMED = ("python benchmarks/",)  # re-measured by hand, never compared in a test

_DATE = re.compile(r"\b\d{4}-\d{2}-\d{2}\b")


@dataclass
class Example:
    page: str
    line: int
    command: str
    expected: list[str] = field(default_factory=list)


def _blocks(text: str):
    """(first line number, lines) of every fenced code block."""
    lines = text.split("\n")
    inside, start, body = False, 0, []
    for number, line in enumerate(lines, 1):
        if line.startswith("```"):
            if inside:
                yield start, body
                inside, body = False, []
            else:
                inside, start = True, number + 1
        elif inside:
            body.append(line)


def examples(page: Path) -> list[Example]:
    found: list[Example] = []
    for start, body in _blocks(page.read_text(encoding="utf-8")):
        if not body or not body[0].startswith("$ "):
            continue
        for offset, line in enumerate(body):
            if line.startswith("$ "):
                found.append(Example(page.name, start + offset, line[2:].strip()))
            elif found and found[-1].line >= start:
                found[-1].expected.append(line)
    return found


ALL = [ex for page in PAGES for ex in examples(page)]


def _run(command: str) -> tuple[int, str]:
    argv = shlex.split(command)
    assert argv[0] == "counterpoise", f"not a counterpoise command: {command}"
    buffer = io.StringIO()  # one buffer for both streams keeps the order a terminal shows
    with contextlib.redirect_stdout(buffer), contextlib.redirect_stderr(buffer):
        rc = main(argv[1:])
    return rc, buffer.getvalue()


def _normal(line: str) -> str:
    return _DATE.sub("<date>", line.rstrip())


def _matches(expected: str, actual: str) -> bool:
    expected, actual = _normal(expected), _normal(actual)
    if expected.endswith("...") and expected.strip() != "...":
        return actual.startswith(expected[:-3])
    return expected == actual


def _compare(expected: list[str], actual: list[str], abridged: bool) -> str | None:
    """None when ``actual`` fits ``expected``; otherwise the first expected line that found no match."""

    def fit(i: int, j: int) -> int | None:  # None, or the furthest expected line that found no match
        while i < len(expected):
            if expected[i].strip() == "...":
                if i + 1 == len(expected):
                    return None
                worst = i + 1
                for k in range(j, len(actual) + 1):
                    bad = fit(i + 1, k)
                    if bad is None:
                        return None
                    worst = max(worst, bad)
                return worst
            if abridged:
                k = next((k for k in range(j, len(actual)) if _matches(expected[i], actual[k])), None)
                if k is None:
                    return i
                i, j = i + 1, k + 1
                continue
            if j >= len(actual) or not _matches(expected[i], actual[j]):
                return i
            i, j = i + 1, j + 1
        return None if (abridged or j == len(actual)) else len(expected)

    bad = fit(0, 0)
    if bad is None:
        return None
    return expected[bad] if bad < len(expected) else "(end of the documented output: the command printed more)"


def _check(example: Example) -> None:
    command, expected = example.command, list(example.expected)
    while expected and not expected[-1].strip():
        expected.pop()
    abridged = command.endswith("(abridged)")
    command = command.removesuffix("(abridged)").strip()
    echo = command.endswith("; echo $?")
    command = command.removesuffix("; echo $?").strip()
    quiet = command.endswith("> /dev/null")
    command = command.removesuffix("> /dev/null").strip()
    want_status = None
    if expected and (m := re.fullmatch(r"\(exit status (\d+)\)", expected[-1].strip())):
        want_status = int(m.group(1))
        expected.pop()
    rc, output = _run(command)
    where = f"{example.page}, line {example.line}: $ {example.command}"
    if quiet:
        assert rc == 0, f"{where}\nexit status {rc}:\n{output}"
        return
    actual = output.rstrip("\n").split("\n") if output.strip() else []
    if echo:
        actual.append(str(rc))
    if want_status is not None:
        assert rc == want_status, f"{where}\nexit status {rc}, documented {want_status}\n{output}"
    problem = _compare(expected, actual, abridged)
    assert problem is None, (f"{where}\nthe documented line\n    {problem}\nhas no match in what the command "
                             f"prints now:\n" + "\n".join(actual))


@pytest.fixture(scope="module")
def folders(tmp_path_factory):
    """One scratch folder per page, with a copy of examples/, shared by the page's commands in order."""
    made: dict[str, Path] = {}

    def folder(page: str) -> Path:
        if page not in made:
            made[page] = tmp_path_factory.mktemp(page.replace(".", "-"))
            shutil.copytree(ROOT / "examples", made[page] / "examples")
        return made[page]

    return folder


@pytest.mark.parametrize("example", [ex for ex in ALL if not ex.command.startswith(TIMED)],
                         ids=lambda ex: f"{ex.page}:{ex.line}")
def test_documented_example(example, folders, monkeypatch):
    monkeypatch.chdir(folders(example.page))
    _check(example)


def test_every_documented_command_is_checked_or_timed():
    """No command in a documented example escapes: it is re-run above, or it is a timed benchmark."""
    others = [f"{ex.page}:{ex.line}: {ex.command}" for ex in ALL
              if not ex.command.startswith(("counterpoise ", *TIMED))]
    assert not others, "documented commands this test cannot run:\n" + "\n".join(others)
    assert len(ALL) > 30  # README and the tours show dozens of commands; a parser slip must not hide them


def test_the_comparison_can_fail():
    assert _compare(["a", "...", "c"], ["a", "b", "b", "c"], False) is None
    assert _compare(["a", "c"], ["a", "b", "c"], False) == "c"
    assert _compare(["a", "c"], ["a", "b", "c"], True) is None
    assert _compare(["a"], ["a", "b"], False) is not None
    assert _compare(["wrote x..."], ["wrote x/y.pdf"], False) is None
