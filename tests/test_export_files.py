"""The export step (toolkit/export/files.py): a library user gets exactly the files the command writes (byte
for byte, or equal once the workbooks' creation times are taken out), a batch can write each rotor's
workbook beside its PDF, and ``batch --record`` records every rotor's job in the register (SQLite here).

Behaviour checks only: no published check value here, so none needs a source.
"""

from __future__ import annotations

import csv
import hashlib
import io
import json
import re
import zipfile
from pathlib import Path

import pytest

from toolkit.cli import main
from toolkit.export.files import order_files, write_batch, write_order

ROOT = Path(__file__).resolve().parents[1]
EXAMPLES = ROOT / "examples"


def cli(capsys, *argv, rc=0):
    status = main([str(a) for a in argv])
    out, err = capsys.readouterr()
    assert status == rc, err
    if rc == 2:
        assert err.count("\n") == 1 and "Traceback" not in err, err
        return err
    return json.loads(out) if "--json" in argv else out


def _timeless(data: bytes) -> dict[str, bytes]:
    """A workbook's parts, with the creation and change times in its document properties taken out."""
    with zipfile.ZipFile(io.BytesIO(data)) as package:
        parts = {name: package.read(name) for name in package.namelist()}
    parts["docProps/core.xml"] = re.sub(rb"<dcterms:(created|modified)[^>]*>[^<]*</dcterms:\1>", b"",
                                        parts["docProps/core.xml"])
    return parts


def _same(a: Path, b: Path) -> None:
    if a.suffix == ".xlsx":
        assert _timeless(a.read_bytes()) == _timeless(b.read_bytes()), a.name
    elif a.suffix == ".json":  # the batch's record: the workbooks' hashes follow their creation times
        one, two = (json.loads(p.read_text(encoding="utf-8")) for p in (a, b))
        for record in (one, two):
            record.pop("summary")
            for entry in record["orders"].values():
                entry.pop("xlsx", None)
        assert one == two
    else:
        assert a.read_bytes() == b.read_bytes(), a.name


def test_timeless_sees_a_changed_cell():
    # the comparison itself must be able to fail: two workbooks that differ in one cell are told apart
    from toolkit.export import xlsx
    from toolkit.workorder.model import example_order

    a, b = xlsx.to_bytes(example_order("A-1")), xlsx.to_bytes(example_order("A-2"))
    assert _timeless(a) != _timeless(b)
    assert _timeless(a) == _timeless(xlsx.to_bytes(example_order("A-1")))


def test_an_order_from_the_library_equals_the_command(capsys, tmp_path):
    from toolkit.workorder.build import order_from_file

    job = EXAMPLES / "job-fan-readings.toml"
    data = cli(capsys, "order", job, "--out", tmp_path / "cli", "--json")
    paths = write_order(order_from_file(job), tmp_path / "lib")
    assert [Path(p).name for p in paths] == [Path(p).name for p in data["files"]]
    assert capsys.readouterr() == ("", "")  # the library prints nothing
    for name in (Path(p).name for p in paths):
        _same(tmp_path / "cli" / name, tmp_path / "lib" / name)
    # and the bytes the library hands out without writing are those files
    files = order_files(order_from_file(job))
    assert list(files) == [Path(p).name for p in paths]
    assert files[Path(paths[1]).name] == Path(paths[1]).read_bytes()


def test_an_order_refuses_to_overwrite_and_a_file_for_a_folder(tmp_path):
    from toolkit.errors import OutputError
    from toolkit.workorder.model import example_order

    order = example_order("X-1")
    write_order(order, tmp_path, ("pdf",))
    before = (tmp_path / "X-1.pdf").read_bytes()
    with pytest.raises(OutputError, match="already exists"):
        write_order(order, tmp_path, ("xlsx", "pdf"))
    assert not (tmp_path / "X-1.xlsx").exists() and (tmp_path / "X-1.pdf").read_bytes() == before
    (tmp_path / "plain").write_text("x", encoding="utf-8")
    with pytest.raises(OutputError, match="is a file; the output must be a folder"):
        write_order(order, tmp_path / "plain")


@pytest.mark.parametrize("workbooks", [False, True])
def test_a_batch_from_the_library_equals_the_command(capsys, tmp_path, workbooks):
    sheet = EXAMPLES / "planner.csv"
    extra = ["--order-workbooks"] if workbooks else []
    data = cli(capsys, "batch", sheet, "--out", tmp_path / "cli", "--json", *extra)
    result = write_batch(sheet, tmp_path / "lib", formats=("pdf", "xlsx") if workbooks else ("pdf",))
    assert capsys.readouterr() == ("", "")
    names = sorted(p.name for p in (tmp_path / "cli").iterdir())
    assert names == sorted(p.name for p in (tmp_path / "lib").iterdir())
    assert [Path(f).name for f in result.files] == [Path(f).name for f in data["files"]]
    assert ("PL-0001.xlsx" in names) is workbooks
    for name in names:
        _same(tmp_path / "cli" / name, tmp_path / "lib" / name)


def test_a_rotor_workbook_in_a_batch_is_the_order_command_s_workbook(tmp_path):
    # the planner row PL-0001 repeats the fan job's rotor; its workbook is what write_order gives its order
    import openpyxl

    from toolkit.workorder.batch import orders

    write_batch(EXAMPLES / "planner.csv", tmp_path / "b", formats=("pdf", "xlsx"))
    row = next(r for r in orders(EXAMPLES / "planner.csv") if r.cells["order"] == "PL-0002")
    write_order(row.order, tmp_path / "o", ("xlsx",))
    _same(tmp_path / "b" / "PL-0002.xlsx", tmp_path / "o" / "PL-0002.xlsx")
    ws = openpyxl.load_workbook(tmp_path / "b" / "planner-summary.xlsx")["Summary"]
    files = [r[-1] for r in ws.iter_rows(min_row=2, values_only=True)]
    assert files[0] == "PL-0001.pdf, PL-0001.xlsx"


def test_continuing_a_batch_with_workbooks_keeps_both_files_of_a_row(tmp_path):
    out = tmp_path / "out"
    write_batch(EXAMPLES / "planner.csv", out, formats=("pdf", "xlsx"))
    (out / "PL-0003.xlsx").unlink()  # as if the batch had been stopped there
    again = write_batch(EXAMPLES / "planner.csv", out, formats=("pdf", "xlsx"), carry_on=True)
    assert str(out / "PL-0003.xlsx") in again.files and str(out / "PL-0003.pdf") in again.kept
    assert str(out / "PL-0001.xlsx") in again.kept and str(out / "PL-0001.pdf") in again.kept


def test_the_rows_iterator_builds_orders_and_writes_nothing(tmp_path):
    from toolkit.workorder.batch import orders

    calls = []
    rows = list(orders(EXAMPLES / "planner.csv", paper="Letter", progress=lambda *a: calls.append(a)))
    assert [r.cells["order"] for r in rows] == ["PL-0001", "PL-0002", "PL-0003", "PL-0004"]
    assert all(r.order.paper_name == "Letter" and not r.failed for r in rows)
    assert calls[-1] == (4, 4, 0, True)
    assert not any(tmp_path.iterdir())


# -- batch --record ------------------------------------------------------------------------------------------

def _sheet(tmp_path, rows: int = 3, **columns) -> Path:
    with open(EXAMPLES / "planner.csv", encoding="utf-8") as handle:
        header, *examples = list(csv.reader(handle))
    extra = list(columns)
    sheet = tmp_path / "plan.csv"
    with open(sheet, "w", encoding="utf-8", newline="") as handle:
        writer = csv.writer(handle)
        writer.writerow(header + extra)
        for i in range(rows):
            row = list(examples[i % 2])
            row[header.index("order")] = f"SHEET-{i + 1}"
            writer.writerow(row + [columns[c][i] for c in extra])
    return sheet


def test_batch_record_records_every_rotor_and_its_files(capsys, tmp_path):
    register = tmp_path / "shop.sqlite3"
    sheet = _sheet(tmp_path, serial=["SN-1", "", "SN-3"])
    data = cli(capsys, "batch", sheet, "--out", tmp_path / "out", "--record", "--register", register,
               "--order-workbooks", "--json")
    recorded = data["recorded"]
    assert [r["row"] for r in recorded] == [2, 3, 4]
    assert [r["sheet_order"] for r in recorded] == ["SHEET-1", "SHEET-2", "SHEET-3"]
    numbers = [r["order_number"] for r in recorded]
    assert len(set(numbers)) == 3 and all(n.startswith("WO-") for n in numbers)
    for n, number in enumerate(numbers):
        shown = cli(capsys, "register", "show", number, "--register", register, "--json")
        assert shown["status"] == "planned"
        assert shown["serial"] == ["SN-1", "", "SN-3"][n]
        files = {Path(f["path"]).name: f["sha256"] for f in shown["files"]}
        assert set(files) == {f"{number}.pdf", f"{number}.xlsx"}
        for name, digest in files.items():
            assert hashlib.sha256((tmp_path / "out" / name).read_bytes()).hexdigest() == digest
        # the recorded job text is the row's job, and the work order carries its hash
        assert hashlib.sha256(shown["job_text"].encode()).hexdigest() == shown["job_sha256"]
        assert shown["workorder"]["ident"]["input_sha256"] == shown["job_sha256"]
    # the returned workbook of a recorded rotor is accepted by the register (number and hash agree)
    back = cli(capsys, "register", "record", "--workbook", tmp_path / "out" / f"{numbers[0]}.xlsx",
               "--register", register, "--json")
    assert back["order_number"] == numbers[0]
    text = cli(capsys, "batch", sheet, "--out", tmp_path / "again", "--record", "--register", register)
    assert "recorded row 2 (SHEET-1) as " in text


def test_batch_rows_from_a_stored_rotor_type(capsys, tmp_path):
    register = tmp_path / "shop.sqlite3"
    template = tmp_path / "type.toml"
    template.write_text(re.sub(r'(?m)^number = .*\n', "", (EXAMPLES / "job-fan-readings.toml").read_text("utf-8")),
                        encoding="utf-8")
    cli(capsys, "register", "type-save", "fan", template, "--register", register, "--json")
    sheet = tmp_path / "types.csv"
    sheet.write_text("order,rotor_type,serial,plane1_reading,plane2_reading\n"
                     "T-1,fan,SN-7,5000 g*mm@10,9000 g*mm@200\n"
                     "T-2,no such type,SN-8,,\n", encoding="utf-8")
    data = cli(capsys, "batch", sheet, "--out", tmp_path / "out", "--record", "--register", register, "--json",
               rc=1)
    assert [f["row"] for f in data["failures"]] == [3] and "no such type" in data["failures"][0]["reason"]
    (rec,) = data["recorded"]
    shown = cli(capsys, "register", "show", rec["order_number"], "--register", register, "--json")
    assert (shown["type"], shown["type_version"], shown["serial"]) == ("fan", 1, "SN-7")
    assert shown["workorder"]["planes"][0]["initial_g_mm"] == pytest.approx(5000)  # the row's own reading
    # without --record the type is still read from the register, and nothing is recorded
    cli(capsys, "batch", sheet, "--out", tmp_path / "plain", "--register", register, "--json", rc=1)
    assert len(cli(capsys, "register", "jobs", "--register", register, "--json")["jobs"]) == 1


def test_a_rotor_type_column_and_a_job_column_together_fail_the_row(tmp_path):
    sheet = tmp_path / "both.csv"
    sheet.write_text("order,rotor_type,job\nB-1,fan,job-fan-runs.toml\n", encoding="utf-8")
    result = write_batch(sheet, tmp_path / "out", template_for=lambda name: {})
    assert result.failures == ((2, "columns job and rotor_type: give one base for the row, not both"),)
    alone = write_batch(sheet.with_name("both.csv"), tmp_path / "out2")  # no register given to the library
    assert "job and rotor_type" in alone.failures[0][1]


def _jobs(capsys, register) -> list[str]:
    return sorted(j["order_number"] for j in cli(capsys, "register", "jobs", "--register", register, "--json")["jobs"])


def test_batch_record_carry_on_records_each_row_once(capsys, tmp_path):
    register, out = tmp_path / "shop.sqlite3", tmp_path / "out"
    sheet = _sheet(tmp_path, serial=["SN-1", "SN-2", "SN-3"])
    first = cli(capsys, "batch", sheet, "--out", out, "--record", "--carry-on", "--register", register, "--json")
    numbers = [r["order_number"] for r in first["recorded"]]
    assert [r["earlier"] for r in first["recorded"]] == [False] * 3 and first["not_recorded"] == []
    # as if the batch had been stopped after its second rotor: the third's PDF, the batch's own files and its
    # record are not there
    third = out / f"{numbers[2]}.pdf"
    for path in [third, *out.glob("plan-*")]:
        path.unlink()
    text = cli(capsys, "batch", sheet, "--out", out, "--record", "--carry-on", "--register", register)
    for n, number in enumerate(numbers, start=2):
        assert f"recorded row {n} (SHEET-{n - 1}) as {number} by the earlier run" in text
    assert "not recorded" not in text and "3 work order(s) written" not in text
    assert _jobs(capsys, register) == sorted(numbers)  # nothing recorded twice
    # the third rotor's PDF is written again under its number, the same file as recorded
    shown = cli(capsys, "register", "show", numbers[2], "--register", register, "--json")
    assert {f["sha256"] for f in shown["files"]} == {hashlib.sha256(third.read_bytes()).hexdigest()}
    again = cli(capsys, "batch", sheet, "--out", out, "--record", "--carry-on", "--register", register, "--json")
    assert len(again["kept"]) == 3 and [r["earlier"] for r in again["recorded"]] == [True] * 3
    # a continued batch in another folder is a new batch: its rows are recorded anew
    other = cli(capsys, "batch", sheet, "--out", tmp_path / "other", "--record", "--carry-on", "--register", register,
                "--json")
    assert [r["earlier"] for r in other["recorded"]] == [False] * 3
    assert len(_jobs(capsys, register)) == 6


def test_a_row_that_fails_mid_batch_leaves_nothing_recorded(capsys, tmp_path):
    import datetime as dt

    register, out = tmp_path / "shop.sqlite3", tmp_path / "out"
    sheet = _sheet(tmp_path, serial=["SN-1", "SN-2", "SN-3"])
    out.mkdir()
    year = dt.datetime.now(dt.timezone.utc).year
    foreign = out / f"WO-{year}-00002.pdf"  # a file of something else where the second rotor's order would go
    foreign.write_bytes(b"not one of ours\n")
    data = cli(capsys, "batch", sheet, "--out", out, "--record", "--carry-on", "--register", register, "--json", rc=1)
    assert [f["row"] for f in data["failures"]] == [3] and "already exists" in data["failures"][0]["reason"]
    assert data["not_recorded"] == [3]
    assert [(r["row"], r["order_number"]) for r in data["recorded"]] == [(2, f"WO-{year}-00001"),
                                                                       (4, f"WO-{year}-00003")]
    # the failed row's number is a gap: no job, no files of it in the register, the foreign file untouched
    assert _jobs(capsys, register) == [f"WO-{year}-00001", f"WO-{year}-00003"]
    assert foreign.read_bytes() == b"not one of ours\n"
    for number in (f"WO-{year}-00001", f"WO-{year}-00003"):
        shown = cli(capsys, "register", "show", number, "--register", register, "--json")
        assert [Path(f["path"]).name for f in shown["files"]] == [f"{number}.pdf"]
        assert [s["status"] for s in shown["status_history"]] == ["planned"]
    foreign.unlink()
    text = cli(capsys, "batch", sheet, "--out", out, "--record", "--carry-on", "--register", register)
    assert "recorded row 2 (SHEET-1) as WO-%d-00001 by the earlier run" % year in text
    assert "recorded row 3 (SHEET-2) as WO-%d-00004\n" % year in text  # recorded now, under a new number
    assert "not recorded" not in text
    assert len(_jobs(capsys, register)) == 3
    text = cli(capsys, "batch", sheet, "--out", tmp_path / "o2", "--record", "--register", register)
    assert "not recorded" not in text