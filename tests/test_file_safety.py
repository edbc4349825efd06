"""Files through the commands: atomic writes, no overwrite without --force, inputs untouched, safe names,
no formula from user text, clear errors for read-only and full output folders.

tests/test_fileio.py checks :func:`toolkit.fileio.write_atomic` itself; this file checks that every command
that writes (demo, order, batch, solve --save-coefficients) keeps those promises end to end. The suite runs
as root, where folder permissions do not bind, so read-only and full folders are simulated: a failing
``os`` call (monkeypatch) or the kernel's own full device, ``/dev/full``.

The promises come from DESIGN.md ("Files") and issue 6; no published figure is checked here.
"""

from __future__ import annotations

import contextlib
import errno
import hashlib
import io
import json
import os
import subprocess
import sys
import tempfile
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings, strategies as st

from toolkit import fileio
from toolkit.cli import main

ROOT = Path(__file__).resolve().parents[1]
EXAMPLES = ROOT / "examples"
JOB = EXAMPLES / "job-fan-readings.toml"
RUNS = EXAMPLES / "runs-two-plane.toml"


def run_cli(argv):
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        rc = main([str(a) for a in argv])
    return rc, out.getvalue(), err.getvalue()


def one_line_error(rc, err) -> str:
    assert rc == 2, err
    lines = err.splitlines()
    assert len(lines) == 1 and "Traceback" not in err and "internal error" not in err, err
    return lines[0]


def digest(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def snapshot(folder: Path) -> dict[str, tuple[str, int]]:
    """Every file below ``folder`` with its checksum and modification time (ns)."""
    return {str(p.relative_to(folder)): (digest(p), p.stat().st_mtime_ns)
            for p in sorted(folder.rglob("*")) if p.is_file()}


def job_with(tmp_path: Path, **order) -> Path:
    """The invented example job with some [order] fields replaced (TOML strings, escaped as JSON)."""
    lines = []
    section = None
    for line in JOB.read_text(encoding="utf-8").splitlines():
        if line.startswith("["):
            section = line.strip()
        key = line.split("=", 1)[0].strip()
        if section == "[order]" and key in order:
            line = f"{key} = {json.dumps(order.pop(key))}"
        lines.append(line)
    assert not order, f"keys not in the example: {order}"
    path = tmp_path / "job.toml"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


# -- overwrite refusal ------------------------------------------------------------------------------------------

def test_order_refuses_to_overwrite_without_force(tmp_path):
    out = tmp_path / "out"
    rc, first, err = run_cli(["order", JOB, "--out", out, "--json"])
    assert rc in (0, 1), err
    files = [Path(f) for f in json.loads(first)["files"]]
    assert {f.suffix for f in files} == {".xlsx", ".pdf"}
    before = snapshot(out)
    rc, _, err = run_cli(["order", JOB, "--out", out])
    line = one_line_error(rc, err)
    assert "already exists" in line and "--force" in line
    assert snapshot(out) == before  # not a byte, not a time stamp changed
    rc, _, err = run_cli(["order", JOB, "--out", out, "--force"])
    assert rc in (0, 1), err
    assert set(snapshot(out)) == set(before)  # replaced in place, nothing else left behind


def test_one_existing_file_stops_the_whole_order(tmp_path):
    # the PDF exists, the spreadsheet does not: nothing is written, so the pair never gets out of step
    out = tmp_path / "out"
    rc, first, err = run_cli(["order", JOB, "--out", out, "--json"])
    files = [Path(f) for f in json.loads(first)["files"]]
    xlsx = next(f for f in files if f.suffix == ".xlsx")
    xlsx.unlink()
    before = snapshot(out)
    rc, _, err = run_cli(["order", JOB, "--out", out])
    assert "already exists" in one_line_error(rc, err)
    assert snapshot(out) == before and not xlsx.exists()


def test_demo_refuses_to_overwrite_without_force(tmp_path):
    out = tmp_path / "demo"
    rc, _, err = run_cli(["demo", "--out", out, "--format", "xlsx"])
    assert rc in (0, 1), err
    before = snapshot(out)
    rc, _, err = run_cli(["demo", "--out", out, "--format", "xlsx"])
    assert "--force" in one_line_error(rc, err)
    assert snapshot(out) == before


def test_saved_coefficients_are_not_overwritten_without_force(tmp_path):
    target = tmp_path / "coefficients.json"
    target.write_text('{"keep": "me"}', encoding="utf-8")
    rc, _, err = run_cli(["solve", RUNS, "--save-coefficients", target])
    assert "--force" in one_line_error(rc, err)
    assert target.read_text(encoding="utf-8") == '{"keep": "me"}'
    rc, _, err = run_cli(["solve", RUNS, "--save-coefficients", target, "--force"])
    assert rc in (0, 1), err
    assert json.loads(target.read_text(encoding="utf-8"))["format"] == "counterpoise-influence"


# -- inputs are never modified ------------------------------------------------------------------------------------

def test_inputs_are_unchanged(tmp_path):
    # copies of every kind of input, checksummed before and after each command that reads them
    inputs = tmp_path / "in"
    inputs.mkdir()
    for source in [*EXAMPLES.iterdir(), ROOT / "tables" / "drills_metric.csv", ROOT / "tables" / "materials.csv",
                   ROOT / "tables" / "plate_stock.csv"]:
        if source.is_file():
            (inputs / source.name).write_bytes(source.read_bytes())
    coefficients = inputs / "coefficients.json"
    rc, _, err = run_cli(["solve", inputs / RUNS.name, "--save-coefficients", coefficients])
    assert rc in (0, 1), err
    before = snapshot(inputs)
    out = tmp_path / "out"
    commands = [
        ["solve", inputs / RUNS.name, "--json"],
        ["solve", "--coefficients", coefficients, "--original", "10 um@200", "--original", "8 um@40",
         "--original", "20 um@250", "--original", "15 um@80"],
        ["solve", "--coefficients", coefficients, "--original", "10 um@200", "--original", "8 um@40",
         "--original", "20 um@250", "--original", "15 um@80", "--installed", "near=20 g@30",
         "--after", "8 um@190", "--after", "7 um@45", "--after", "17 um@240", "--after", "13 um@85",
         "--save-coefficients", out / "updated.json"],
        ["drill", "--unbalance", "2400 g*mm", "--radius", "150 mm", "--axial", "--material", "steel",
         "--drills", inputs / "drills_metric.csv", "--materials", inputs / "materials.csv"],
        ["plate", "--unbalance", "20000 g*mm", "--radius", "300 mm", "--width", "30 mm", "--material", "steel",
         "--stock", inputs / "plate_stock.csv"],
        ["materials", "--materials", inputs / "materials.csv"],
    ]
    commands += [["order", job, "--out", out / job.stem] for job in sorted(inputs.glob("job-*.toml"))]
    commands += [["batch", sheet, "--out", out / sheet.name] for sheet in sorted(inputs.glob("planner*"))]
    for argv in commands:
        rc, _, err = run_cli(argv)
        assert rc in (0, 1), f"{argv}: {err}"
    # the trim-run save of the refused overwrite of an input is covered above; here nothing may change
    assert snapshot(inputs) == before


def test_saving_over_an_input_needs_force(tmp_path):
    coefficients = tmp_path / "coefficients.json"
    rc, _, err = run_cli(["solve", RUNS, "--save-coefficients", coefficients])
    before = digest(coefficients)
    rc, _, err = run_cli(["solve", "--coefficients", coefficients, "--original", "10 um@200", "--original",
                          "8 um@40", "--original", "20 um@250", "--original", "15 um@80", "--installed",
                          "near=20 g@30", "--after", "8 um@190", "--after", "7 um@45", "--after", "17 um@240",
                          "--after", "13 um@85", "--save-coefficients", coefficients])
    assert "--force" in one_line_error(rc, err)
    assert digest(coefficients) == before


# -- interrupted writes -----------------------------------------------------------------------------------------

@pytest.mark.parametrize("failing", ["fsync", "replace", "link"])
def test_order_interrupted_midway_keeps_the_old_files(tmp_path, monkeypatch, failing):
    out = tmp_path / "out"
    rc, first, err = run_cli(["order", JOB, "--out", out, "--json"])
    before = snapshot(out)

    def fail(*args, **kwargs):
        raise OSError(errno.EIO, os.strerror(errno.EIO))

    monkeypatch.setattr(os, failing, fail)
    force = ["--force"] if failing != "link" else []
    if failing == "link":  # a fresh folder, so the new-file path (link, no overwrite) is the one taken
        out = tmp_path / "fresh"
        before = {}
        # with link failing the writer falls back to replace when the name is still free: break both
        monkeypatch.setattr(os, "replace", fail)
    rc, _, err = run_cli(["order", JOB, "--out", out, *force])
    line = one_line_error(rc, err)
    assert "cannot write" in line
    monkeypatch.undo()
    assert snapshot(out) == before if out.exists() else before == {}
    debris = [p.name for p in out.iterdir()] if out.exists() else []
    assert not [name for name in debris if name.endswith(".tmp")], debris


KILL_MIDWAY = r"""
import os, sys
from toolkit.fileio import write_atomic
def half_then_die(handle):
    handle.write(b"NEW" * 1000)
    handle.flush()
    os.fsync(handle.fileno())
    os._exit(9)      # the process dies with half a file written: no clean-up runs
write_atomic(sys.argv[1], half_then_die, force=True)
"""


def test_killed_writer_leaves_the_old_file_whole(tmp_path):
    target = tmp_path / "WO-1.xlsx"
    target.write_bytes(b"OLD complete file")
    result = subprocess.run([sys.executable, "-c", KILL_MIDWAY, str(target)], capture_output=True, timeout=60)
    assert result.returncode == 9
    assert target.read_bytes() == b"OLD complete file"
    # what a killed process leaves is a hidden temporary file, never a half file under the real name
    assert all(p == target or (p.name.startswith(".") and p.name.endswith(".tmp")) for p in tmp_path.iterdir())


# -- read-only and full output folders ------------------------------------------------------------------------------

@pytest.mark.parametrize("code, words", [(errno.EROFS, "read-only"), (errno.EACCES, "permission denied"),
                                         (errno.ENOSPC, "disk is full"), (errno.EDQUOT, "quota")])
@pytest.mark.parametrize("command", ["order", "demo", "solve"])
def test_unwritable_output_gives_one_clear_line(tmp_path, monkeypatch, code, words, command):
    def refuse(*args, **kwargs):
        raise OSError(code, os.strerror(code))

    monkeypatch.setattr(tempfile, "mkstemp", refuse)
    argv = {"order": ["order", JOB, "--out", tmp_path / "out"],
            "demo": ["demo", "--out", tmp_path / "out"],
            "solve": ["solve", RUNS, "--save-coefficients", tmp_path / "out" / "c.json"]}[command]
    rc, _, err = run_cli(argv)
    line = one_line_error(rc, err)
    assert "cannot write" in line and words in line, line


def test_full_disk_through_the_kernel(tmp_path, monkeypatch):
    # the temporary file is the kernel's full device: every write fails with ENOSPC, as on a full disk
    real_mkstemp = tempfile.mkstemp

    def onto_full_device(*args, **kwargs):
        fd, name = real_mkstemp(*args, **kwargs)
        os.close(fd)
        return os.open("/dev/full", os.O_WRONLY), name

    monkeypatch.setattr(tempfile, "mkstemp", onto_full_device)
    out = tmp_path / "out"
    rc, _, err = run_cli(["order", JOB, "--out", out])
    assert "the disk is full" in one_line_error(rc, err)
    assert [p for p in out.iterdir()] == []  # no half file, no temporary file


def test_output_folder_that_is_a_file(tmp_path):
    blocker = tmp_path / "out"
    blocker.write_text("a file, not a folder")
    rc, _, err = run_cli(["order", JOB, "--out", blocker])
    line = one_line_error(rc, err)
    assert "--out" in line and "is a file" in line and "give a folder" in line, line  # issue 10: say what it is
    assert blocker.read_text() == "a file, not a folder"


# -- names made from order numbers ----------------------------------------------------------------------------------

HOSTILE_NUMBERS = ["../../escape", "/etc/passwd", "..", ".", "~root", "a/b\\c", "C:\\Windows\\win.ini", "CON",
                   "nul", "  ", "-rf", ".hidden", "\u202eexe.pdf", "ÄÖÜ-2026", "x" * 500, "WO 2026/117",
                   "WO\x1f2026"]


@pytest.mark.parametrize("number", HOSTILE_NUMBERS, ids=range(len(HOSTILE_NUMBERS)))
def test_order_numbers_cannot_escape_the_output_folder(tmp_path, number):
    out = tmp_path / "out"
    job = job_with(tmp_path, number=number)
    rc, text, err = run_cli(["order", job, "--out", out, "--format", "xlsx", "--json"])
    if rc == 2:  # refusing the number is also safe
        one_line_error(rc, err)
        assert not out.exists() or list(out.iterdir()) == []
    else:
        files = [Path(f).resolve() for f in json.loads(text)["files"]]
        assert files and all(f.parent == out.resolve() for f in files), files
        assert all(not f.name.startswith(".") for f in files)
    outside = sorted(p.name for p in tmp_path.iterdir())
    assert outside == sorted(n for n in ("job.toml", "out") if (tmp_path / n).exists())


@settings(max_examples=200, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(st.text(max_size=120))
def test_safe_names_stay_in_their_folder(text):
    base = Path(tempfile.gettempdir()) / "counterpoise-names"
    name = fileio.safe_filename(text)
    for suffix in (".xlsx", ".pdf"):
        path = (base / (name + suffix)).resolve()
        assert path.parent == base.resolve()
        assert not path.name.startswith(".")


# -- formula injection ---------------------------------------------------------------------------------------------

PAYLOADS = {
    "number": "=1+1",
    "customer": '=HYPERLINK("http://example.invalid","click")',
    "rotor": "+SUM(1,2) rotor",
    "drawing": "-2+3",
    "serial": "@SUM(A1:A2)",
    "notes": "\t=cmd|' /C calc'!A0",
}


def test_user_text_never_becomes_a_formula(tmp_path):
    from openpyxl import load_workbook

    job = job_with(tmp_path, **PAYLOADS)
    rc, text, err = run_cli(["order", job, "--out", tmp_path / "out", "--format", "xlsx", "--json"])
    assert rc in (0, 1), err
    path = next(Path(f) for f in json.loads(text)["files"] if f.endswith(".xlsx"))
    book = load_workbook(path)
    seen = set()
    for sheet in book.worksheets:
        for row in sheet.iter_rows():
            for cell in row:
                if not isinstance(cell.value, str):
                    continue
                for key, payload in PAYLOADS.items():
                    if payload.strip() in cell.value:
                        seen.add(key)
                        assert cell.data_type == "s", (sheet.title, cell.coordinate, cell.value)
                        # the program's own formulas refer to cells; none of them may carry user text
                if cell.data_type == "f":
                    assert not any(p.strip() in cell.value for p in PAYLOADS.values()), cell.value
        for part in (sheet.oddHeader, sheet.oddFooter):
            for piece in (part.left, part.center, part.right):
                assert "&=" not in (piece.text or "")
    assert seen >= {"customer", "rotor", "serial"}, seen  # the payloads did reach the sheet, as text


# -- a real process: nothing is written on refusal --------------------------------------------------------------------

def test_refused_order_in_a_process_writes_nothing(tmp_path):
    out = tmp_path / "out"
    out.mkdir()
    (out / "WO-2026-0117.pdf").write_bytes(b"signed copy")
    result = subprocess.run([sys.executable, "-m", "toolkit", "order", str(JOB), "--out", str(out)],
                            capture_output=True, timeout=120)
    assert result.returncode == 2
    assert len(result.stderr.splitlines()) == 1 and b"Traceback" not in result.stderr
    assert (out / "WO-2026-0117.pdf").read_bytes() == b"signed copy"
    assert sorted(p.name for p in out.iterdir()) == ["WO-2026-0117.pdf"]


# -- planner batches --------------------------------------------------------------------------------------------------

def _planner_with(tmp_path: Path, **cells) -> Path:
    """The invented example planner, its first row changed by column name; the job files it names beside it."""
    import csv

    with (EXAMPLES / "planner.csv").open(encoding="utf-8", newline="") as handle:
        rows = list(csv.reader(handle))
    for column, value in cells.items():
        rows[1][rows[0].index(column)] = value
    for job in EXAMPLES.glob("job-*.toml"):
        (tmp_path / job.name).write_bytes(job.read_bytes())
    sheet = tmp_path / "planner.csv"
    with sheet.open("w", encoding="utf-8", newline="") as handle:
        csv.writer(handle).writerows(rows)
    return sheet


def test_batch_refuses_to_overwrite_without_force(tmp_path):
    sheet = _planner_with(tmp_path)
    out = tmp_path / "out"
    rc, _, err = run_cli(["batch", sheet, "--out", out])
    assert rc in (0, 1), err
    before = snapshot(out)
    rc, _, err = run_cli(["batch", sheet, "--out", out])
    assert "--force" in one_line_error(rc, err)
    assert snapshot(out) == before


@pytest.mark.parametrize("number", ["../../escape", "/etc/passwd", ".hidden", "CON"])
def test_batch_order_numbers_stay_in_the_output_folder(tmp_path, number):
    sheet = _planner_with(tmp_path, order=number)
    out = tmp_path / "out"
    rc, text, err = run_cli(["batch", sheet, "--out", out, "--json"])
    assert rc in (0, 1), err
    files = [Path(f).resolve() for f in json.loads(text)["files"]]
    assert files and all(f.parent == out.resolve() and not f.name.startswith(".") for f in files), files
    assert sorted(p.name for p in tmp_path.iterdir() if p.suffix not in (".toml",)) == ["out", "planner.csv"]


def test_batch_summary_never_holds_a_formula_from_the_sheet(tmp_path):
    from openpyxl import load_workbook

    payloads = {"order": "=1+1", "rotor": '=HYPERLINK("http://example.invalid","x")', "customer": "@SUM(A1)",
                "notes": "+cmd|' /C calc'!A0"}
    sheet = _planner_with(tmp_path, **payloads)
    rc, text, err = run_cli(["batch", sheet, "--out", tmp_path / "out", "--json"])
    assert rc in (0, 1), err
    summary = next(Path(f) for f in json.loads(text)["files"] if f.endswith(".xlsx"))
    found = 0
    for ws in load_workbook(summary).worksheets:
        for row in ws.iter_rows():
            for cell in row:
                if isinstance(cell.value, str) and any(p in cell.value for p in payloads.values()):
                    found += 1
                    assert cell.data_type == "s", (cell.coordinate, cell.value)
    assert found >= 1  # the order number and rotor reach the summary, as text
