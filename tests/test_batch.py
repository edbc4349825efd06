"""Planner batches: the example sheets, a deliberately bad row among good ones, sheet-level refusals,
duplicate order numbers, formula injection in the summary, overwrite refusal, the progress bar."""

import csv
import io
from pathlib import Path

import openpyxl
import pytest
from pypdf import PdfReader

from toolkit.errors import BadInput, OutputError
from toolkit.export.files import write_batch
from toolkit.workorder.batch import read_rows

EXAMPLES = Path(__file__).resolve().parent.parent / "examples"


def _summary(path):
    ws = openpyxl.load_workbook(path)["Summary"]
    rows = list(ws.iter_rows(values_only=True))
    header = rows[0]
    return [dict(zip(header, r)) for r in rows[1:]], ws


def _good_rows():
    with open(EXAMPLES / "planner.csv", encoding="utf-8") as handle:
        rows = list(csv.reader(handle))
    return rows[0], rows[1:3]  # header and two machine-reading rows


def _write_csv(path, header, rows):
    with open(path, "w", encoding="utf-8", newline="") as handle:
        writer = csv.writer(handle)
        writer.writerow(header)
        writer.writerows(rows)


def test_example_csv(tmp_path):
    result = write_batch(EXAMPLES / "planner.csv", tmp_path)
    assert (result.rows, result.done, result.failures) == (4, 4, ())
    rows, ws = _summary(tmp_path / "planner-summary.xlsx")
    assert [r["Order"] for r in rows] == ["PL-0001", "PL-0002", "PL-0003", "PL-0004"]
    assert all(r["Status"] == "ready" for r in rows)
    # row 1 repeats the demo rotor: G 6.3, 412 kg, 1480 r/min -> U_per 16 747 g·mm for the rotor
    # (ISO 21940-11:2016, 6.3.3 formula); the hub plane's share by the lever rule and statics is 6705 g·mm
    # (derived here (D), same geometry as the demo job)
    assert rows[0]["Allowance [g·mm] 1"] == pytest.approx(6705, abs=1)
    assert rows[0]["Operations 1"].startswith("1. remove") and "(hole)" in rows[0]["Operations 1"]
    assert rows[0]["Operations 2"].startswith("2. add") and "(plate)" in rows[0]["Operations 2"]
    assert rows[2]["Plane 2"] is None  # one-plane rotor
    assert ws.freeze_panes == "A2"
    singles = [len(PdfReader(tmp_path / f"PL-000{n}.pdf").pages) for n in range(1, 5)]
    combined = PdfReader(tmp_path / "planner-orders.pdf")
    assert len(combined.pages) == sum(singles)
    assert "PL-0004" in combined.pages[-1].extract_text()


def test_example_xlsx_matches_csv(tmp_path):
    a = write_batch(EXAMPLES / "planner.csv", tmp_path / "a")
    b = write_batch(EXAMPLES / "planner.xlsx", tmp_path / "b")
    assert (a.rows, a.done) == (b.rows, b.done)
    rows_a, _ = _summary(tmp_path / "a" / "planner-summary.xlsx")
    rows_b, _ = _summary(tmp_path / "b" / "planner-summary.xlsx")
    assert rows_a == rows_b


def test_bad_row_is_reported_and_the_others_complete(tmp_path):
    header, good = _good_rows()
    bad = list(good[0])
    bad[0] = "PL-BAD"
    bad[header.index("mass")] = "412"
    bad[header.index("plane1_surface")] = "round"
    sheet = tmp_path / "plan.csv"
    _write_csv(sheet, header, [good[0], bad, good[1]])
    result = write_batch(sheet, tmp_path / "out")
    assert result.done == 2
    (row, reason), = result.failures
    assert row == 3  # the sheet's own row number (header is row 1)
    assert reason.startswith("2 problems in the row: ")
    assert "column mass: '412' has no unit; give a mass with its unit, e.g. '412 kg'" in reason
    assert "column plane1_surface: 'round' is not allowed; allowed: 'outer', 'inner', 'face'" in reason
    rows, _ = _summary(tmp_path / "out" / "plan-summary.xlsx")
    assert [r["Status"] for r in rows] == ["ready", "failed", "ready"]
    assert "column mass" in rows[1]["File or reason"]
    assert (tmp_path / "out" / "PL-0001.pdf").exists() and (tmp_path / "out" / "PL-0002.pdf").exists()
    assert not (tmp_path / "out" / "PL-BAD.pdf").exists()


def test_duplicate_order_numbers(tmp_path):
    header, good = _good_rows()
    sheet = tmp_path / "dup.csv"
    _write_csv(sheet, header, [good[0], good[0]])
    result = write_batch(sheet, tmp_path / "out")
    assert result.done == 1
    assert result.failures[0][0] == 3 and "same file name as row 2" in result.failures[0][1]


def test_sheet_level_problems_stop_before_writing(tmp_path):
    sheet = tmp_path / "s.csv"
    sheet.write_text("order,rotor,colour\nX,Y,red\n", encoding="utf-8")
    with pytest.raises(BadInput, match=r"s.csv, row 1: unknown column\(s\) colour"):
        write_batch(sheet, tmp_path / "out")
    assert not (tmp_path / "out").exists()
    (tmp_path / "s.txt").write_text("order\n", encoding="utf-8")
    with pytest.raises(BadInput, match="is not a planner sheet; give a .xlsx or .csv file"):
        write_batch(tmp_path / "s.txt", tmp_path / "out")
    with pytest.raises(BadInput, match="no such planner sheet"):
        write_batch(tmp_path / "none.csv", tmp_path / "out")


def test_summary_text_cannot_become_a_formula(tmp_path):
    header, good = _good_rows()
    row = list(good[0])
    row[header.index("rotor")] = '=HYPERLINK("http://x","y")'
    row[header.index("order")] = "+PL-1"
    sheet = tmp_path / "evil.csv"
    _write_csv(sheet, header, [row])
    write_batch(sheet, tmp_path / "out")
    ws = openpyxl.load_workbook(tmp_path / "out" / "evil-summary.xlsx")["Summary"]
    assert ws["C2"].value == '=HYPERLINK("http://x","y")' and ws["C2"].data_type == "s"
    assert ws["B2"].value == "+PL-1" and ws["B2"].data_type == "s"


def test_overwrite_refusal(tmp_path):
    write_batch(EXAMPLES / "planner.csv", tmp_path)
    before = (tmp_path / "planner-summary.xlsx").read_bytes()
    with pytest.raises(OutputError, match="planner-orders.pdf already exists; give force"):
        write_batch(EXAMPLES / "planner.csv", tmp_path)
    assert (tmp_path / "planner-summary.xlsx").read_bytes() == before
    assert write_batch(EXAMPLES / "planner.csv", tmp_path, force=True).done == 4


def test_xlsx_rows_keep_sheet_row_numbers(tmp_path):
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.append(["order", "rotor", "mass"])
    ws.append(["A", "r", "1 kg"])
    ws.append([None, None, None])
    ws.append(["B", "r", 12.5])  # a number typed without unit stays a bare number
    wb.save(tmp_path / "p.xlsx")
    rows = list(read_rows(tmp_path / "p.xlsx"))
    assert [(n, cells["order"], cells["mass"]) for n, cells in rows] == [(2, "A", "1 kg"), (4, "B", "12.5")]


def test_progress_reaches_the_caller_and_the_library_prints_nothing(tmp_path, capsys):
    from toolkit.commands.workorders import Progress

    calls = []
    write_batch(EXAMPLES / "planner.csv", tmp_path / "a", progress=lambda *a: calls.append(a))
    assert calls[-1] == (4, 4, 0, True) and all(c[1] == 4 for c in calls)
    assert capsys.readouterr() == ("", "")  # the library never writes to the terminal
    write_batch(EXAMPLES / "planner.csv", tmp_path / "b", progress=Progress())  # the command line's bar
    err = capsys.readouterr().err
    assert "\r[" in err and "4/4 rows, 0 failed" in err
    write_batch(EXAMPLES / "planner.csv", tmp_path / "c")
    assert capsys.readouterr().err == ""


def test_inputs_are_not_modified(tmp_path):
    before = {p.name: p.read_bytes() for p in EXAMPLES.iterdir() if p.is_file()}
    write_batch(EXAMPLES / "planner.xlsx", tmp_path)
    after = {p.name: p.read_bytes() for p in EXAMPLES.iterdir() if p.is_file()}
    assert before == after


def test_summary_is_readable_by_a_plain_csv_comparison(tmp_path):
    """Every data row of the sheet has exactly one summary row, in order."""
    write_batch(EXAMPLES / "planner.csv", tmp_path)
    rows, _ = _summary(tmp_path / "planner-summary.xlsx")
    with open(EXAMPLES / "planner.csv", encoding="utf-8") as handle:
        orders = [r["order"] for r in csv.DictReader(io.StringIO(handle.read()))]
    assert [r["Order"] for r in rows] == orders


@pytest.mark.parametrize("column, char", [("order", "\x00"), ("rotor", "\x1f")])
def test_control_characters_fail_the_row_not_the_batch(tmp_path, column, char):
    header, good = _good_rows()
    row = list(good[0])
    row[header.index(column)] += char + "z"
    sheet = tmp_path / "ctl.csv"
    _write_csv(sheet, header, [row, good[1]])
    result = write_batch(sheet, tmp_path / "out")
    assert result.done == 1 and result.failures[0][0] == 2
    assert "contains a control character" in result.failures[0][1]
    rows, _ = _summary(tmp_path / "out" / "ctl-summary.xlsx")
    assert rows[0]["Status"] == "failed" and "?z" in rows[0][header[0].capitalize()] + rows[0]["Rotor"]


def test_a_small_workbook_that_unpacks_huge_is_refused(tmp_path):
    import zipfile

    base = tmp_path / "base.xlsx"
    wb = openpyxl.Workbook()
    wb.active.append(["order", "rotor"])
    wb.save(base)
    sheet = tmp_path / "bomb.xlsx"
    with zipfile.ZipFile(base) as src, zipfile.ZipFile(sheet, "w", zipfile.ZIP_DEFLATED) as dst:
        for item in src.infolist():
            data = src.read(item.filename)
            if item.filename == "xl/worksheets/sheet1.xml":
                head, tail = data.split(b"</sheetData>")
                data = head + b'<row r="2"><c r="A2" t="inlineStr"><is><t>' + b"A" * 30_000_000 + \
                    b"</t></is></c></row></sheetData>" + tail
            dst.writestr(item.filename, data)
    assert sheet.stat().st_size < 1_000_000
    with pytest.raises(BadInput, match=r"bomb.xlsx: part xl/worksheets/sheet1.xml unpacks to \d+ bytes"):
        write_batch(sheet, tmp_path / "out")
    assert not (tmp_path / "out").exists()


def test_the_paper_asked_for_is_an_input_of_every_row():
    # behaviour check: a batch continued with another paper must not keep PDFs printed for the old one
    from toolkit.workorder.batch import row_inputs

    cells = {"order": "PL-1", "rotor": "invented"}
    assert row_inputs(cells, EXAMPLES, "A4") != row_inputs(cells, EXAMPLES, "Letter")
    assert row_inputs(cells, EXAMPLES, "A4") == row_inputs(dict(cells), EXAMPLES, "A4")
