"""The demo, order and batch commands: files written and printed, exit statuses, one-line errors, JSON,
overwrite refusal, inputs left alone, safe file names, light imports.

Behaviour checks only: no published check value here, so none needs a source.
"""

import hashlib
import json
import shutil
import subprocess
import sys
from pathlib import Path

import openpyxl
import pytest

from toolkit.cli import main

EXAMPLES = Path(__file__).resolve().parent.parent / "examples"


def _one_line_error(capsys, command):
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and err.startswith(f"counterpoise {command}: error: "), err
    assert "Traceback" not in err
    return err


def test_demo_writes_both_files_and_a_summary(tmp_path, capsys):
    assert main(["demo", "--out", str(tmp_path)]) == 0
    out = capsys.readouterr().out
    xlsx_path, pdf_path = tmp_path / "DEMO-0001.xlsx", tmp_path / "DEMO-0001.pdf"
    assert f"wrote {xlsx_path}" in out and f"wrote {pdf_path}" in out
    assert "invented example" in out
    assert "1. remove" in out and "(hole)" in out and "2. add" in out and "(plate)" in out
    assert "Result: PASS" in out and "rotor maker" in out
    assert openpyxl.load_workbook(xlsx_path)["Work order"]["A1"].value == "Balancing work order DEMO-0001"
    assert pdf_path.read_bytes().startswith(b"%PDF-")


def test_demo_refuses_to_overwrite_without_force(tmp_path, capsys):
    assert main(["demo", "--out", str(tmp_path)]) == 0
    capsys.readouterr()
    before = (tmp_path / "DEMO-0001.pdf").read_bytes()
    assert main(["demo", "--out", str(tmp_path)]) == 2
    err = _one_line_error(capsys, "demo")
    assert "already exists; give --force to overwrite it" in err
    assert (tmp_path / "DEMO-0001.pdf").read_bytes() == before
    assert main(["demo", "--out", str(tmp_path), "--force"]) == 0


def test_demo_json(tmp_path, capsys):
    assert main(["demo", "--out", str(tmp_path), "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["passed"] is True and len(data["files"]) == 2
    corrections = data["order"]["corrections"]
    assert [c["action"] for c in corrections] == ["remove", "add"]
    for c in corrections:
        assert set(c) >= {"plane", "mass_g", "angle_deg", "action"}
    assert [p["name"] for p in data["order"]["planes"]] == ["drive-end hub", "fan-end rim"]


@pytest.mark.parametrize("path", sorted(EXAMPLES.glob("job-*.toml")), ids=lambda p: p.name)
def test_order_on_each_example(tmp_path, capsys, path):
    digest = hashlib.sha256(path.read_bytes()).hexdigest()
    assert main(["order", str(path), "--out", str(tmp_path)]) == 0
    out = capsys.readouterr().out
    written = sorted(p.name for p in tmp_path.iterdir())
    assert len(written) == 2 and {Path(n).suffix for n in written} == {".xlsx", ".pdf"}
    assert all(f"wrote {tmp_path / n}" in out for n in written)
    assert hashlib.sha256(path.read_bytes()).hexdigest() == digest  # input untouched


def test_order_format_choice(tmp_path, capsys):
    job = EXAMPLES / "job-fan-readings.toml"
    assert main(["order", str(job), "--out", str(tmp_path), "--format", "pdf"]) == 0
    assert [p.suffix for p in tmp_path.iterdir()] == [".pdf"]
    assert main(["order", str(job), "--out", str(tmp_path), "--format", "docx"]) == 2
    assert "--format: 'docx' is not allowed" in _one_line_error(capsys, "order")


def test_order_file_names_are_made_safe(tmp_path, capsys):
    job = tmp_path / "job.toml"
    text = (EXAMPLES / "job-fan-readings.toml").read_text(encoding="utf-8")
    job.write_text(text.replace('number = "WO-2026-0117"', 'number = "../../escape me"'), encoding="utf-8")
    out = tmp_path / "out"
    assert main(["order", str(job), "--out", str(out)]) == 0
    assert sorted(p.name for p in out.iterdir()) == ["escape_me.pdf", "escape_me.xlsx"]


def test_order_bad_job_lists_every_problem_one_per_line(tmp_path, capsys):
    job = tmp_path / "bad.toml"
    text = (EXAMPLES / "job-fan-readings.toml").read_text(encoding="utf-8")
    job.write_text(text.replace('mass = "285 kg"', 'mass = "285"').replace('surface = "outer"', 'surface = "rim"', 1),
                   encoding="utf-8")
    assert main(["order", str(job), "--out", str(tmp_path)]) == 2
    lines = capsys.readouterr().err.splitlines()
    assert lines[0] == f"counterpoise order: error: {job}: 2 problems in the job file:"
    assert lines[1].startswith("  - line 17, rotor.mass: '285' has no unit")
    assert lines[2].startswith("  - line 35, plane[1].surface: 'rim' is not allowed")
    assert len(lines) == 3
    assert not list(tmp_path.glob("*.pdf"))


def test_order_six_problems_arrive_at_once_one_line_each(tmp_path, capsys):
    job = tmp_path / "six.toml"
    text = (EXAMPLES / "job-fan-readings.toml").read_text(encoding="utf-8")
    spoiled = (text.replace('mass = "285 kg"', 'mass = "285"')
               .replace('service_speed = "1780 rpm"', 'service_speed = "1780 kg"')
               .replace('surface = "outer"', 'surface = "rim"', 1)
               .replace('\n[angles]\n', '\n[angles]\ncolour = "red"\n')
               .replace('\n[order]\n', '\n[order]\nprority = "high"\n')
               .replace('\n[geometry]\n', '\n[geometry]\nspan = "1 m"\n'))
    job.write_text(spoiled, encoding="utf-8")
    assert main(["order", str(job), "--out", str(tmp_path)]) == 2
    lines = capsys.readouterr().err.splitlines()
    assert lines[0].startswith("counterpoise order: error: ") and lines[0].endswith("6 problems in the job file:")
    assert len(lines) == 7 and all(line.startswith("  - line ") for line in lines[1:]), lines
    assert list(tmp_path.iterdir()) == [job]


def test_order_one_problem_stays_on_one_line(tmp_path, capsys):
    job = tmp_path / "one.toml"
    text = (EXAMPLES / "job-fan-readings.toml").read_text(encoding="utf-8")
    job.write_text(text.replace('mass = "285 kg"', 'mass = "285"'), encoding="utf-8")
    assert main(["order", str(job), "--out", str(tmp_path)]) == 2
    err = _one_line_error(capsys, "order")
    assert "one.toml: 1 problem in the job file: line 17, rotor.mass: '285' has no unit" in err


def test_order_out_of_tolerance_exits_1(tmp_path, capsys):
    job = tmp_path / "fails.toml"
    text = (EXAMPLES / "job-blower-imperial.toml").read_text(encoding="utf-8")
    job.write_text(text.replace('inboard = "6.4 oz*in@90"', 'inboard = "7.1 oz*in@90"'), encoding="utf-8")
    assert main(["order", str(job), "--out", str(tmp_path)]) == 1
    out = capsys.readouterr().out
    assert "Result: FAIL" in out and "oz·in" in out
    assert len(list(tmp_path.glob("*.pdf"))) == 1  # done: the order is still written


def test_order_missing_file(capsys):
    assert main(["order", "no-such-job.toml"]) == 2
    assert "no-such-job.toml: no such job file" in _one_line_error(capsys, "order")


def test_batch_with_a_bad_row_exits_1(tmp_path, capsys):
    sheet = tmp_path / "plan.csv"
    text = (EXAMPLES / "planner.csv").read_text(encoding="utf-8")
    sheet.write_text(text.replace("PL-0002,", "PL-0002X,").replace("61 g@20", "61 g"), encoding="utf-8")
    shutil.copy(EXAMPLES / "job-fan-runs.toml", tmp_path / "job-fan-runs.toml")
    assert main(["batch", str(sheet), "--out", str(tmp_path / "out")]) == 1
    out = capsys.readouterr().out
    assert "3 work order(s) written, 1 row(s) failed" in out
    assert "row 3: 1 problem in the row: column plane1_reading: '61 g' is not a reading" in out
    assert capsys.readouterr().err == ""  # no progress bar when stderr is not a terminal


def test_batch_examples_json(tmp_path, capsys):
    assert main(["batch", str(EXAMPLES / "planner.xlsx"), "--out", str(tmp_path), "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["done"] == 4 and data["failures"] == []
    assert any(f.endswith("planner-summary.xlsx") for f in data["files"])


def test_commands_import_nothing_heavy():
    code = ("import sys, toolkit.cli, toolkit.commands.workorders; "
            "print(sorted(m for m in ('numpy', 'pint', 'openpyxl', 'reportlab') if m in sys.modules))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert out.strip() == "[]"


def test_demo_jobs_writes_the_example_files_to_edit(tmp_path, capsys):
    from toolkit.workorder.build import EXAMPLE_FILES

    folder = tmp_path / "my-jobs"
    assert main(["demo", "--jobs", str(folder)]) == 0
    out = capsys.readouterr().out
    assert sorted(p.name for p in folder.iterdir()) == sorted(EXAMPLE_FILES)
    for name in EXAMPLE_FILES:
        assert (folder / name).read_bytes() == (EXAMPLES / name).read_bytes()  # the shipped copies, unchanged
        assert f"wrote {folder / name}" in out
    assert "invented" in out
    # a written job file builds as it is, and the planner sheet finds the job file it names beside it
    assert main(["order", str(folder / "job-fan-readings.toml"), "--out", str(tmp_path / "o")]) == 0
    assert main(["batch", str(folder / "planner.csv"), "--out", str(tmp_path / "b")]) == 0
    capsys.readouterr()
    # never over the user's edits without --force
    (folder / "job-fan-runs.toml").write_text("# my edits\n", encoding="utf-8")
    assert main(["demo", "--jobs", str(folder)]) == 2
    assert "already exists; give --force" in _one_line_error(capsys, "demo")
    assert (folder / "job-fan-runs.toml").read_text(encoding="utf-8") == "# my edits\n"
    assert main(["demo", "--jobs", str(folder), "--force", "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert len(data["files"]) == len(EXAMPLE_FILES)


def test_order_help_points_to_files_a_wheel_user_has(capsys):
    assert main(["order", "--help"]) == 0
    text = " ".join(capsys.readouterr().out.split())
    assert "counterpoise demo --jobs DIR" in text and "examples/" not in text
