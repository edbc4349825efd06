"""Output files under attack: a run's files are all its own, written together, and nothing is left behind.

One group per heading of the file half of issue 10: files that are not the run's own (name clashes in a
batch, two runs of the same order at once), write failures (file size limit, a full temporary folder, paths
too long, append-only folders), legacy output encodings, leftovers and continuing an interrupted batch
(signals at random points), and the messages for output folders that are not folders.

The suite runs as root, where folder permissions do not bind; where a condition cannot be made for real it
is simulated as in tests/test_file_safety.py. No published figure is checked here: every expectation is a
promise of the program (derived here (D)).
"""

from __future__ import annotations

import contextlib
import csv
import importlib.util
import io
import json
import os
import random
import re
import resource
import signal
import subprocess
import sys
import time
import zipfile
from pathlib import Path

import pytest
from hypothesis import given, settings, strategies as st

from toolkit import fileio
from toolkit.cli import main, plain

ROOT = Path(__file__).resolve().parents[1]
EXAMPLES = ROOT / "examples"
JOB = EXAMPLES / "job-fan-readings.toml"
RUNS = EXAMPLES / "runs-two-plane.toml"


def _sibling(name: str):
    """Another test module of this folder, loaded by path (the suite imports tests in importlib mode)."""
    spec = importlib.util.spec_from_file_location(f"_sibling_{name}", ROOT / "tests" / f"{name}.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


_SAFETY = _sibling("test_file_safety")
run_cli, one_line_error = _SAFETY.run_cli, _SAFETY.one_line_error  # the same helpers as the file-safety tests


def writer_argv(command: str, tmp_path: Path, out: Path) -> list:
    """A valid command line of a command that writes work orders, into ``out``."""
    return {"demo": ["demo", "--out", out], "order": ["order", JOB, "--out", out],
            "batch": ["batch", planner(tmp_path), "--out", out],
            "solve": ["solve", RUNS, "--save-coefficients", out / "c.json"]}[command]


def scratch_folders(tmp_path: Path) -> tuple[Path, Path]:
    """A private temporary folder for a child process, and the output folder (not made yet)."""
    scratch = tmp_path / "tmp"
    scratch.mkdir()
    return scratch, tmp_path / "out"


def child_env(tmpdir: Path | None = None) -> dict:
    env = dict(os.environ, PYTHONPATH=str(ROOT), PYTHONDONTWRITEBYTECODE="1")
    env.pop("COUNTERPOISE_DEBUG", None)
    if tmpdir is not None:
        env["TMPDIR"] = str(tmpdir)
    return env


def temporary_names(folder: Path) -> list[str]:
    """Anything in ``folder`` that looks temporary: hidden names, ``.tmp`` and openpyxl's scratch files."""
    if not folder.exists():
        return []
    return sorted(p.name for p in folder.rglob("*")
                  if p.name.startswith(".") or p.name.endswith(".tmp") or p.name.startswith("openpyxl"))


def planner(tmp_path: Path, rows: int = 4, name: str = "planner.csv", **first) -> Path:
    """An invented planner sheet of ``rows`` rows made from the example rows (order numbers K-0001, ...),
    the first row's cells changed by column name; the job files the rows name are copied beside it."""
    with (EXAMPLES / "planner.csv").open(encoding="utf-8", newline="") as handle:
        table = list(csv.reader(handle))
    header, examples = table[0], table[1:]
    body = []
    for n in range(rows):
        row = list(examples[n % len(examples)])
        row[header.index("order")] = f"K-{n + 1:04d}"
        body.append(row)
    for column, value in first.items():
        body[0][header.index(column)] = value
    for job in EXAMPLES.glob("*.toml"):
        (tmp_path / job.name).write_bytes(job.read_bytes())
    sheet = tmp_path / name
    with sheet.open("w", encoding="utf-8", newline="") as handle:
        csv.writer(handle).writerows([header, *body])
    return sheet


def pdf_pages(path: Path) -> int:
    from pypdf import PdfReader

    return len(PdfReader(path).pages)


def summary_rows(path: Path) -> list[tuple]:
    from openpyxl import load_workbook

    return list(load_workbook(path, read_only=True).worksheets[0].iter_rows(min_row=2, values_only=True))


# == files that are not the run's own ====================================================================

@pytest.mark.parametrize("number", ["planner-orders", "PLANNER-ORDERS", "../planner-orders."])
@pytest.mark.parametrize("force", [False, True])
def test_a_row_named_like_the_combined_pdf_fails_before_anything_is_written(tmp_path, number, force):
    sheet = planner(tmp_path, rows=3, order=number)
    out = tmp_path / "out"
    rc, text, err = run_cli(["batch", sheet, "--out", out, "--json", *(["--force"] if force else [])])
    assert rc == 1, err
    data = json.loads(text)
    assert [f["row"] for f in data["failures"]] == [2], data
    assert "planner-orders.pdf" in data["failures"][0]["reason"] and "own" in data["failures"][0]["reason"]
    assert len(data["files"]) == len(set(data["files"]))  # no path listed twice
    # the combined PDF is the combined one: the two other orders, each a file of its own
    rows = sorted(p.name for p in out.glob("K-*.pdf"))
    assert rows == ["K-0002.pdf", "K-0003.pdf"]
    assert pdf_pages(out / "planner-orders.pdf") == sum(pdf_pages(out / r) for r in rows)
    status = {r[1]: r[3] for r in summary_rows(out / "planner-summary.xlsx")}
    assert status[number] == "failed"


def test_names_within_a_run_never_collide_even_by_case(tmp_path):
    sheet = planner(tmp_path, rows=3, order="k-0002")  # row 2 gives K-0002 too: one folder, one name
    rc, text, err = run_cli(["batch", sheet, "--out", tmp_path / "out", "--json"])
    data = json.loads(text)
    assert [f["row"] for f in data["failures"]] == [3] and "row 2" in data["failures"][0]["reason"], data


RACER = r"""
import contextlib, io, sys
from toolkit.cli import main
job, force = sys.argv[1], sys.argv[2] == "force"
for line in sys.stdin:
    out = line.strip()
    with contextlib.redirect_stdout(io.StringIO()):
        rc = main(["order", job, "--out", out, "--json", *(["--force"] if force else [])])
    print(rc, flush=True)
"""


def _job_for(tmp_path: Path, customer: str) -> Path:
    text = JOB.read_text(encoding="utf-8")
    text, n = re.subn(r'(?m)^customer = "[^"]*"', f'customer = "{customer}"', text)
    assert n == 1
    path = tmp_path / f"job-{customer.split()[0].lower()}.toml"
    path.write_text(text, encoding="utf-8")
    return path


def _xlsx_customer(path: Path) -> set[str]:
    with zipfile.ZipFile(path) as package:
        strings = package.read("xl/sharedStrings.xml").decode("utf-8") if "xl/sharedStrings.xml" in \
            package.namelist() else package.read("xl/worksheets/sheet1.xml").decode("utf-8")
    return {name for name in ("Alpha", "Bravo") if name in strings}


@pytest.mark.parametrize("force", [False, True], ids=["no-force", "force"])
def test_two_runs_of_the_same_order_never_leave_a_mixed_pair(tmp_path, force):
    # two processes write the same order number with different contents into one folder, 50 rounds; the
    # PDF is deterministic, so each PDF must be byte for byte one job's, and the workbook beside it the same
    # job's (its customer cell)
    jobs = {"Alpha": _job_for(tmp_path, "Alpha Works (invented)"),
            "Bravo": _job_for(tmp_path, "Bravo Works (invented)")}
    reference = {}
    for name, job in jobs.items():
        rc, text, err = run_cli(["order", job, "--out", tmp_path / f"ref-{name}", "--json"])
        assert rc in (0, 1), err
        reference[name] = next(Path(f) for f in json.loads(text)["files"] if f.endswith(".pdf")).read_bytes()
    assert reference["Alpha"] != reference["Bravo"]
    racers = [subprocess.Popen([sys.executable, "-c", RACER, str(job), "force" if force else "plain"],
                               stdin=subprocess.PIPE, stdout=subprocess.PIPE, stderr=subprocess.DEVNULL,
                               text=True, env=child_env(tmp_path)) for job in jobs.values()]
    outcomes = []
    try:
        for n in range(50):
            out = tmp_path / f"round{n}"
            if n % 2:  # every other round starts from an earlier pair, so --force really replaces
                for r in racers[:1]:
                    r.stdin.write(f"{out}\n")
                    r.stdin.flush()
                    r.stdout.readline()
            for r in racers:
                r.stdin.write(f"{out}\n")
                r.stdin.flush()
            codes = [int(r.stdout.readline()) for r in racers]
            outcomes.append(codes)
            pdfs = list(out.glob("*.pdf"))
            books = list(out.glob("*.xlsx"))
            assert len(pdfs) == 1 and len(books) == 1, (n, codes, list(out.iterdir()))
            owner = [name for name, data in reference.items() if pdfs[0].read_bytes() == data]
            assert len(owner) == 1, (n, "the PDF is neither job's")
            assert _xlsx_customer(books[0]) == set(owner), (n, codes, "a mixed pair")
            assert temporary_names(out) == [], (n, temporary_names(out))
            if not force and n % 2 == 0:
                assert sorted(codes) == [0, 2], (n, codes)  # one wins, the other refuses, whole
    finally:
        for r in racers:
            r.stdin.close()
            r.wait(timeout=60)
    if force:
        assert all(codes == [0, 0] for codes in outcomes), outcomes


# == write failures ==========================================================================================

def _limited(limit_bytes: int):
    def apply():
        resource.setrlimit(resource.RLIMIT_FSIZE, (limit_bytes, limit_bytes))
    return apply


@pytest.mark.parametrize("command", ["demo", "order", "batch"])
def test_file_size_limit_is_one_line_and_leaves_nothing(tmp_path, command):
    scratch, out = scratch_folders(tmp_path)
    argv = writer_argv(command, tmp_path, out)
    result = subprocess.run([sys.executable, "-m", "toolkit", *map(str, argv)], capture_output=True, text=True,
                            env=child_env(scratch), preexec_fn=_limited(4096), timeout=120)
    line = one_line_error(result.returncode, result.stderr)
    assert "file size limit" in line, line
    assert temporary_names(out) == [] and list(scratch.iterdir()) == []
    for path in out.rglob("*") if out.exists() else []:  # whatever is there is whole (a batch's early rows)
        if path.name == "planner-batch.json":  # the record of a batch stopped before it finished
            assert json.loads(path.read_text(encoding="utf-8"))["complete"] is False
        else:
            assert path.suffix == ".pdf" and path.read_bytes().rstrip().endswith(b"%%EOF"), path


def test_full_temporary_folder_in_a_batch(tmp_path, monkeypatch):
    # the combined document keeps its pages in an anonymous temporary file; a full temporary folder fails
    # its writes: one line, exit 2, and no half file in the output folder
    import tempfile

    def onto_full_device(*args, **kwargs):
        return open("/dev/full", "r+b")

    monkeypatch.setattr(tempfile, "TemporaryFile", onto_full_device)
    out = tmp_path / "out"
    rc, _, err = run_cli(["batch", planner(tmp_path, rows=6), "--out", out])
    assert "disk is full" in one_line_error(rc, err)
    assert temporary_names(out) == []
    assert not (out / "planner-orders.pdf").exists() and not (out / "planner-summary.xlsx").exists()


def test_workbooks_never_touch_the_temporary_folder(tmp_path, monkeypatch):
    import tempfile

    def refuse(*args, **kwargs):
        raise AssertionError("a scratch file in the temporary folder")

    monkeypatch.setattr(tempfile, "NamedTemporaryFile", refuse)  # what openpyxl's own save uses
    rc, _, err = run_cli(["demo", "--out", tmp_path / "demo", "--format", "xlsx"])
    assert rc in (0, 1), err
    rc, _, err = run_cli(["batch", planner(tmp_path), "--out", tmp_path / "batch"])
    assert rc in (0, 1), err


@pytest.mark.parametrize("command", ["demo", "order", "batch", "solve"])
@pytest.mark.parametrize("shape", ["long-name", "long-path"])
def test_paths_too_long_are_one_line(tmp_path, command, shape):
    out = tmp_path / ("x" * 256) if shape == "long-name" else tmp_path.joinpath(*["y" * 200] * 25)
    rc, _, err = run_cli(writer_argv(command, tmp_path, out))
    assert "too long" in one_line_error(rc, err)


def test_append_only_folder_is_refused_before_anything_is_written(tmp_path, monkeypatch):
    out = tmp_path / "out"
    out.mkdir()
    real = subprocess.run(["chattr", "+a", str(out)], capture_output=True).returncode == 0 \
        if Path("/usr/bin/chattr").exists() else False
    if not real:  # simulated: the folder's flags say append-only
        monkeypatch.setattr(fileio, "_folder_flags", lambda folder: fileio._FS_APPEND_FL)
    try:
        rc, _, err = run_cli(["order", JOB, "--out", out])
        line = one_line_error(rc, err)
        assert "appending only" in line and "permission denied" not in line, line
        assert list(out.iterdir()) == []  # no workbook, no temporary file
    finally:
        if real:
            subprocess.run(["chattr", "-a", str(out)], check=True)


def test_a_temporary_name_that_cannot_be_removed_does_not_fail_a_written_file(tmp_path, monkeypatch):
    # a folder that lets us link the finished file but not remove the temporary name: the file is whole,
    # so the command succeeds (the name is swept by a later run where it can be)
    real_unlink = os.unlink

    def no_unlink(path, *args, **kwargs):
        if Path(path).name.startswith(".cp"):
            raise PermissionError(1, "Operation not permitted")
        return real_unlink(path, *args, **kwargs)

    monkeypatch.setattr(os, "unlink", no_unlink)
    rc, text, err = run_cli(["order", JOB, "--out", tmp_path / "out", "--json"])
    assert rc in (0, 1), err
    assert all(Path(f).stat().st_size > 1000 for f in json.loads(text)["files"])
    monkeypatch.undo()
    assert fileio.sweep(tmp_path / "out") == []  # our own live process: its names are not swept
    assert temporary_names(tmp_path / "out")  # (left only because unlink was refused above)


# == standard output in a legacy encoding ====================================================================

def _bases() -> list[list[str]]:
    module = _sibling("fault_support")
    return [[command, *module.flatten(pairs)] for command, bases in sorted(module.BASES.items())
            for pairs in bases]


def _run_encoded(argv, encoding):
    out_raw, err_raw = io.BytesIO(), io.BytesIO()
    out = io.TextIOWrapper(out_raw, encoding=encoding, errors="strict", newline="\n")
    err = io.TextIOWrapper(err_raw, encoding=encoding, errors="strict", newline="\n")
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        rc = main([str(a) for a in argv])
    out.flush()
    err.flush()
    return rc, out_raw.getvalue().decode(encoding), err_raw.getvalue().decode(encoding)


@pytest.mark.parametrize("encoding", ["ascii", "cp1252", "latin-1", "cp437"])
def test_legacy_encodings_degrade_to_plain_text(tmp_path, encoding):
    commands = _bases()
    commands += [["demo", "--out", tmp_path / "demo"], ["order", JOB, "--out", tmp_path / "order"],
                 ["batch", planner(tmp_path), "--out", tmp_path / "batch"], ["tolerance", "--help"],
                 ["--help"], ["tolerance", "--grade", "G 6.3", "--mass", "412 kg"]]  # an error on stderr
    for argv in commands:
        for variant in ([a for a in argv if a != "--json"], argv if "--json" in argv else argv + ["--json"]):
            if variant[0] in ("demo", "order", "batch"):
                variant = variant + ["--force"]
            if variant[-1] == "--json" and "--help" in variant:
                continue
            rc, out, err = _run_encoded(variant, encoding)
            assert rc in (0, 1, 2), (variant, rc, err)
            assert "Traceback" not in err and "internal error" not in err, (variant, err)
            if rc == 2:
                assert len(err.splitlines()) == 1, (variant, err)
            elif "--json" in variant:
                json.loads(out)  # still one valid JSON object


def test_json_keeps_exact_values_in_a_legacy_encoding():
    rc, out, _ = _run_encoded(["grades", "--json"], "ascii")
    rc2, exact, _ = _run_encoded(["grades", "--json"], "utf-8")
    assert rc == rc2 == 0
    assert json.loads(out) == json.loads(exact)  # \u escapes, not plain look-alikes


@settings(max_examples=60, deadline=None)
@given(st.text(alphabet=st.characters(codec="utf-8"), max_size=40),
       st.sampled_from(["ascii", "cp1252", "latin-1", "cp437"]))
def test_plain_text_is_always_encodable(text, encoding):
    result = plain(text, encoding)
    result.encode(encoding)  # never raises
    assert plain("θ ≥ 5 – 2×3 mm³ · µm 30°", "ascii") == "theta >= 5 - 2x3 mm^3 * um 30deg"


# == leftovers and continuing ================================================================================

def _wait_for(predicate, limit: float = 60.0) -> bool:
    end = time.monotonic() + limit
    while time.monotonic() < end:
        if predicate():
            return True
        time.sleep(0.02)
    return False


@pytest.mark.parametrize("signame", ["SIGTERM", "SIGHUP", "SIGINT"])
def test_terminating_signals_during_a_batch_leave_nothing(tmp_path, signame):
    scratch, out = scratch_folders(tmp_path)
    sheet = planner(tmp_path, rows=40)
    child = subprocess.Popen([sys.executable, "-m", "toolkit", "batch", str(sheet), "--out", str(out)],
                             stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, env=child_env(scratch))
    assert _wait_for(lambda: len(list(out.glob("K-*.pdf"))) >= 2)
    child.send_signal(getattr(signal, signame))
    _, err = child.communicate(timeout=60)
    number = getattr(signal, signame)
    assert child.returncode in (128 + number, 130), err
    assert b"Traceback" not in err and len(err.splitlines()) == 1, err
    assert temporary_names(out) == [] and list(scratch.iterdir()) == []


def test_next_run_removes_what_a_killed_writer_left(tmp_path):
    out = tmp_path / "out"
    out.mkdir()
    dead = subprocess.run([sys.executable, "-c", "import os; print(os.getpid())"], capture_output=True,
                          text=True).stdout.strip()
    leftovers = [f".cp{dead}-abc123xy.tmp", f".cp{dead}-Zz9_0000.tmp"]
    for name in leftovers:
        (out / name).write_bytes(b"half a file")
    keep = [f".cp{os.getpid()}-livewr1t.tmp", ".notes.tmp", f"cp{dead}-abc123xy.tmp", f".cp{dead}-x.tmp.bak"]
    for name in keep:
        (out / name).write_bytes(b"not ours to remove")
    rc, _, err = run_cli(["order", JOB, "--out", out])
    assert rc in (0, 1), err
    names = {p.name for p in out.iterdir()}
    assert not names & set(leftovers) and set(keep) <= names


KILLED_AT_THE_RECORD = r"""
import os, signal, sys
from toolkit.export import files
from toolkit.cli import console
save = files._Batch.save_record
def save_record(self, final=None):
    if final is not None:
        os.kill(os.getpid(), signal.SIGKILL)  # the batch's own files are written, its finished record is not
    save(self, final)
files._Batch.save_record = save_record
sys.argv[0] = "counterpoise"
console()
"""


@pytest.mark.parametrize("earlier", ["none", "complete"])
def test_a_batch_killed_between_its_summary_and_its_record_is_continued(tmp_path, earlier):
    # the window of a run stopped after it replaced the summary and the combined PDF but before its finished
    # record: the next --carry-on run must replace them, whether or not an earlier run had finished
    scratch, out = scratch_folders(tmp_path)
    sheet = planner(tmp_path, rows=3)
    argv = ["batch", str(sheet), "--out", str(out), "--carry-on"]
    if earlier == "complete":
        rc, _, err = run_cli(argv)
        assert rc in (0, 1), err
        assert json.loads((out / "planner-batch.json").read_text(encoding="utf-8"))["complete"]
    child = subprocess.run([sys.executable, "-c", KILLED_AT_THE_RECORD, *argv], capture_output=True,
                           env=child_env(scratch), timeout=120)
    assert child.returncode == -signal.SIGKILL, child.stderr
    assert (out / "planner-summary.xlsx").exists()
    assert not json.loads((out / "planner-batch.json").read_text(encoding="utf-8"))["complete"]
    result = subprocess.run([sys.executable, "-m", "toolkit", *argv, "--json"], capture_output=True, text=True,
                            env=child_env(scratch), timeout=120)
    assert result.returncode in (0, 1), result.stderr
    data = json.loads(result.stdout)
    assert data["failures"] == [] and data["done"] == 3
    assert json.loads((out / "planner-batch.json").read_text(encoding="utf-8"))["complete"]


KILL_POINTS = [("SIGKILL", 0.4), ("SIGTERM", 1.1), ("SIGHUP", 1.6), ("SIGKILL", 1.9), ("SIGTERM", 2.3),
               ("SIGKILL", 2.8)]


def test_killed_batches_continue_to_a_complete_result(tmp_path):
    # SIGKILL, SIGTERM and SIGHUP at random points of a batch of a generated planner sheet; each later run
    # continues the earlier one (--carry-on), then a last run completes it: every row is written once,
    # the summary and the combined PDF cover all of them, and nothing temporary remains anywhere
    rng = random.Random(10)
    scratch, out = scratch_folders(tmp_path)
    rows = 30
    sheet = planner(tmp_path, rows=rows)
    for n, (signame, base) in enumerate(KILL_POINTS):
        argv = [sys.executable, "-m", "toolkit", "batch", str(sheet), "--out", str(out), "--carry-on"]
        child = subprocess.Popen(argv, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, env=child_env(scratch))
        time.sleep(base * rng.uniform(0.6, 1.4))
        child.send_signal(getattr(signal, signame))
        _, err = child.communicate(timeout=120)
        assert b"Traceback" not in err and b"internal error" not in err, err
        if signame != "SIGKILL" and child.returncode != 0:  # a stop we could clean up after
            assert temporary_names(out) == [] and list(scratch.iterdir()) == [], (signame, err)
    result = subprocess.run([sys.executable, "-m", "toolkit", "batch", str(sheet), "--out", str(out),
                             "--carry-on", "--json"], capture_output=True, text=True, env=child_env(scratch),
                            timeout=300)
    assert result.returncode == 0, result.stderr
    data = json.loads(result.stdout)
    assert data["failures"] == [] and data["done"] == rows
    orders = sorted(out.glob("K-*.pdf"))
    assert len(orders) == rows
    assert pdf_pages(out / "planner-orders.pdf") == sum(pdf_pages(p) for p in orders)
    assert [r[0] for r in summary_rows(out / "planner-summary.xlsx")] == list(range(2, rows + 2))
    assert temporary_names(out) == [] and list(scratch.iterdir()) == []
    record = json.loads((out / "planner-batch.json").read_text(encoding="utf-8"))
    assert record["complete"] and len(record["orders"]) == rows
    # continuing a complete batch keeps every order as it is
    again = subprocess.run([sys.executable, "-m", "toolkit", "batch", str(sheet), "--out", str(out),
                            "--carry-on", "--json"], capture_output=True, text=True, env=child_env(scratch),
                           timeout=300)
    assert again.returncode == 0, again.stderr
    assert len(json.loads(again.stdout)["kept"]) == rows


def test_continuing_after_a_change_keeps_the_unchanged_rows_only(tmp_path):
    sheet = planner(tmp_path, rows=4)
    out = tmp_path / "out"
    rc, _, err = run_cli(["batch", sheet, "--out", out])
    assert rc in (0, 1), err
    (out / "planner-summary.xlsx").unlink()  # as if the first run had stopped before its summary
    rc, _, err = run_cli(["batch", sheet, "--out", out])
    line = one_line_error(rc, err)
    assert "--force" in line and "--carry-on" in line, line
    changed = planner(tmp_path, rows=4, notes="changed after the first run (invented)")
    before = (out / "K-0001.pdf").read_bytes()
    rc, text, err = run_cli(["batch", changed, "--out", out, "--carry-on", "--json"])
    data = json.loads(text)
    assert [f["row"] for f in data["failures"]] == [2] and "already exists" in data["failures"][0]["reason"]
    assert len(data["kept"]) == 3
    assert (out / "K-0001.pdf").read_bytes() == before  # nothing replaced without --force


def test_continuing_a_batch_stopped_between_its_combined_pdf_and_its_record(tmp_path):
    # the record still says "not complete" while the combined PDF is already in place: carrying on replaces
    # it; a combined PDF that a complete record does not know is not replaced
    sheet = planner(tmp_path, rows=3)
    out = tmp_path / "out"
    rc, _, err = run_cli(["batch", sheet, "--out", out])
    assert rc in (0, 1), err
    record_path = out / "planner-batch.json"
    record = json.loads(record_path.read_text(encoding="utf-8"))
    (out / "planner-summary.xlsx").unlink()
    record_path.write_text(json.dumps({**record, "complete": False, "combined": None, "summary": None}),
                           encoding="utf-8")
    rc, text, err = run_cli(["batch", sheet, "--out", out, "--carry-on", "--json"])
    assert rc in (0, 1), err
    assert len(json.loads(text)["kept"]) == 3 and (out / "planner-summary.xlsx").exists()
    (out / "planner-orders.pdf").write_bytes(b"someone else's document")
    rc, _, err = run_cli(["batch", sheet, "--out", out, "--carry-on"])
    assert "planner-orders.pdf already exists" in one_line_error(rc, err)
    assert (out / "planner-orders.pdf").read_bytes() == b"someone else's document"


def test_a_file_of_another_kind_under_the_record_name_is_not_replaced(tmp_path):
    sheet = planner(tmp_path, rows=2)
    out = tmp_path / "out"
    out.mkdir()
    (out / "planner-batch.json").write_text("my own notes", encoding="utf-8")
    rc, _, err = run_cli(["batch", sheet, "--out", out, "--carry-on"])
    assert "not the record of a batch" in one_line_error(rc, err)
    assert (out / "planner-batch.json").read_text(encoding="utf-8") == "my own notes"


# == messages ======================================================================================================

@pytest.mark.parametrize("kind", ["file", "device", "dangling", "loop"])
@pytest.mark.parametrize("command", ["demo", "order", "batch"])
def test_out_that_is_not_a_folder_says_what_it_is(tmp_path, kind, command):
    if kind == "file":
        out, words = tmp_path / "out", "is a file"
        out.write_text("keep me")
    elif kind == "device":
        out, words = Path("/dev/null"), "is a device"
    elif kind == "dangling":
        out, words = tmp_path / "out", "a link to a missing target"
        out.symlink_to(tmp_path / "nowhere")
    else:
        out, words = tmp_path / "out", "a link that loops"
        out.symlink_to(tmp_path / "out")
    rc, _, err = run_cli(writer_argv(command, tmp_path, out))
    line = one_line_error(rc, err)
    assert f"--out {out} {words}" in line.replace(" is a link", " a link") and "give a folder" in line, line
    assert not (tmp_path / "nowhere").exists()


def test_batch_given_a_folder_says_it_is_a_folder(tmp_path):
    rc, _, err = run_cli(["batch", tmp_path, "--out", tmp_path / "out"])
    line = one_line_error(rc, err)
    assert "is a folder" in line and "no such" not in line, line


@pytest.mark.parametrize("length", [243, 250, 255])
def test_long_but_valid_coefficient_file_names_are_written(tmp_path, length):
    target = tmp_path / ("c" * (length - 5) + ".json")
    assert len(target.name.encode()) == length
    rc, _, err = run_cli(["solve", RUNS, "--save-coefficients", target])
    assert rc in (0, 1), err
    assert json.loads(target.read_text(encoding="utf-8"))["format"] == "counterpoise-influence"
    assert temporary_names(tmp_path) == []


_CODE = re.compile(r'&(?:&|[LCRPNDTZFAGBIUESXYKH]|"[^"]*"|\d+)')


def _sections(raw: str) -> list[str]:
    """The section codes of a header or footer string (``&L``, ``&C``, ``&R``), after its escapes."""
    return re.findall(r"&([LCR])", raw.replace("&&", ""))


@pytest.mark.parametrize("number", ["&" * 80, "A&B", "&P&N", '&"Arial"&12', "&" * 79 + "x"])
def test_ampersands_in_the_order_number_stay_text_in_header_and_footer(tmp_path, number):
    from openpyxl import load_workbook

    from toolkit.export import xlsx

    job = tmp_path / "job.toml"
    job.write_text(re.sub(r'(?m)^number = "[^"]*"', lambda m: "number = " + json.dumps(number), JOB.read_text("utf-8")),
                   encoding="utf-8")
    rc, text, err = run_cli(["order", job, "--out", tmp_path / "out", "--format", "xlsx", "--json"])
    assert rc in (0, 1), err
    path = Path(json.loads(text)["files"][0])
    with zipfile.ZipFile(path) as package:
        sheet_xml = package.read("xl/worksheets/sheet1.xml").decode("utf-8")
    for tag in ("oddHeader", "oddFooter"):
        raw = re.search(f"<{tag}>(.*?)</{tag}>", sheet_xml, re.S).group(1).replace("&amp;", "&")
        assert _sections(raw) == ["L", "R"], (tag, raw)
        assert raw.startswith("&L" + xlsx._hf(f"Work order {number}", xlsx._HF_CHARS) + "&R"), (tag, raw)
    load_workbook(path)  # and the workbook opens


@settings(max_examples=100, deadline=None)
@given(st.text(alphabet='&LCRPN"0123456789 x', max_size=200))
def test_header_text_never_leaves_a_lone_ampersand(text):
    from toolkit.export.xlsx import _hf

    escaped = _hf(text)
    assert "&" not in escaped.replace("&&", "")  # every & is doubled, none split by the cut
    # the text with its runs of white space made single, shortened with "…" beyond 120 characters
    shown = " ".join(text.split())
    assert escaped.replace("&&", "&") == (shown if len(shown) <= 120 else shown[:119].rstrip() + "…")
