"""Bad planner sheets (toolkit/workorder/batch.py): spoiled CSV and xlsx sheets, control characters and
line breaks in cells, damaged and renamed workbooks, a zip bomb.

Behaviour checks only (the contract of exit statuses and one-line refusals, see tests/fault_support.py):
the generated values are not published figures, so no value here needs a source.
"""

from __future__ import annotations

import io
import json
import shutil
import subprocess
import sys
import tempfile
from pathlib import Path

import pytest
from hypothesis import given, strategies as st

from fault_support import (ANGLE, EXAMPLES, QUANTITY, SETTINGS, SPECIAL, VECTOR, check)


# -- planner sheets (batch) -----------------------------------------------------------------------------------------

PLANNER = EXAMPLES / "planner.csv"


def _planner_rows() -> list[list[str]]:
    import csv

    with PLANNER.open(encoding="utf-8", newline="") as handle:
        return [row for row in csv.reader(handle)]


def _csv_bytes(rows) -> bytes:
    import csv

    buffer = io.StringIO()
    csv.writer(buffer, lineterminator="\n").writerows(rows)
    return buffer.getvalue().encode("utf-8", "surrogateescape")


PLANNER_CELL = st.one_of(SPECIAL, QUANTITY, VECTOR, ANGLE, st.text(max_size=16),
                         st.sampled_from(["", "drill;plate", "washers", "laser", "1 g@1;2", "job-fan-runs.toml",
                                          "../../etc/passwd", "=HYPERLINK(\"x\")"]))


@st.composite
def spoiled_planner(draw) -> list[list]:
    """The invented example planner (header and the first and third rows, to stay quick) with one to
    three cells replaced, rows cut short or lengthened, or a stray row added."""
    rows = _planner_rows()
    rows = [rows[0], rows[1], rows[3]]
    for _ in range(draw(st.integers(min_value=1, max_value=3))):
        action = draw(st.sampled_from(["cell", "cell", "cell", "short", "long", "stray", "header"]))
        r = draw(st.integers(min_value=1, max_value=len(rows) - 1))
        if action == "cell" and rows[r]:
            c = draw(st.integers(min_value=0, max_value=len(rows[r]) - 1))
            rows[r] = rows[r][:c] + [draw(PLANNER_CELL)] + rows[r][c + 1:]
        elif action == "short":
            rows[r] = rows[r][:draw(st.integers(min_value=0, max_value=len(rows[r])))]
        elif action in ("long", "cell"):
            rows[r] = rows[r] + [draw(PLANNER_CELL)]
        elif action == "stray":
            rows.append([draw(PLANNER_CELL) for _ in range(draw(st.integers(min_value=1, max_value=4)))])
        else:
            c = draw(st.integers(min_value=0, max_value=len(rows[0]) - 1))
            rows[0] = rows[0][:c] + [draw(st.sampled_from(["", "order", "Mass ", "bogus", "plane3_name"]))] \
                + rows[0][c + 1:]
    return rows


def _run_batch(sheet: Path, tmp: Path):
    for companion in EXAMPLES.glob("job-*.toml"):  # the example's "job" column refers to a file beside it
        shutil.copy(companion, sheet.parent / companion.name)
    return check(["batch", str(sheet), "--out", str(tmp / "out"), "--json"])


def _printable(cell):
    """A cell without the control characters a workbook cannot hold (they have their own test below)."""
    from openpyxl.cell.cell import ILLEGAL_CHARACTERS_RE

    return ILLEGAL_CHARACTERS_RE.sub("?", cell) if isinstance(cell, str) else cell


@SETTINGS
@given(rows=spoiled_planner(), tail=st.sampled_from([b"", b"", b"\xff\xfe", b"\xe9t\xe9", b"\r\n,,,\r\n"]))
def test_spoiled_planner_csv(rows, tail):
    with tempfile.TemporaryDirectory() as tmp:
        tmp = Path(tmp)
        sheet = tmp / "planner.csv"
        sheet.write_bytes(_csv_bytes([[_printable(c) for c in row] for row in rows]) + tail)
        _run_batch(sheet, tmp)


@pytest.mark.parametrize("column, char", [("order", "\x00"), ("rotor", "\x1f"), ("plane1_name", "\x0b")])
def test_control_characters_in_planner_cells(tmp_path, column, char):
    # found by this file: exit 3 (IllegalCharacterError), and openpyxl's write-only generator then printed
    # "Exception ignored ... Traceback" when it was collected
    rows = _planner_rows()
    rows[1] = list(rows[1])
    rows[1][rows[0].index(column)] += f"{char}z"
    sheet = tmp_path / "planner.csv"
    sheet.write_bytes(_csv_bytes(rows))
    try:
        _run_batch(sheet, tmp_path)
    finally:
        import gc

        gc.collect()  # a half-written workbook left behind is collected here, not in a later test


XLSX_CELL = st.one_of(PLANNER_CELL, st.integers(min_value=-10**20, max_value=10**20),
                      st.floats(allow_nan=False), st.booleans(), st.none(),
                      st.datetimes(min_value=__import__("datetime").datetime(1900, 3, 1)),
                      st.sampled_from(["=1/0", "=NA()", "=A1", "=SUM(1,2)"]))


@SETTINGS
@given(rows=spoiled_planner(), extra=st.lists(XLSX_CELL, max_size=3))
def test_spoiled_planner_xlsx(rows, extra):
    from openpyxl import Workbook

    with tempfile.TemporaryDirectory() as tmp:
        tmp = Path(tmp)
        book = Workbook()
        sheet = book.active
        for row in rows:
            sheet.append([_printable(c.replace("\udcff", "?")) for c in row])
        if extra:
            sheet.append(["PL-9", "typed cells (invented example)", *map(_printable, extra)])
        path = tmp / "planner.xlsx"
        book.save(path)
        _run_batch(path, tmp)


def test_workbook_damaged_inside_its_rows(tmp_path):
    # found by test_spoiled_planner_xlsx with 800 examples: a lone surrogate is written as &#56575;, which
    # no XML reader accepts; the workbook opens, and fails only when its rows are read
    from openpyxl import Workbook

    book = Workbook()
    for row in _planner_rows()[:2]:
        book.active.append(row)
    book.active.append(["PL-9", "damaged row (invented example)", "\udcff"])
    sheet = tmp_path / "planner.xlsx"
    book.save(sheet)
    rc, out, err = _run_batch(sheet, tmp_path)
    # the damage is reported as a failed row (exit 1), and the rows read before it are written
    assert rc == 1, (rc, err, out[:500])
    report = json.loads(out)
    assert [f["row"] for f in report["failures"]] == [3] and "damaged" in report["failures"][0]["reason"]
    assert report["done"] == 1


def test_broken_row_is_reported_and_the_others_finish(tmp_path):
    rows = _planner_rows()
    header = rows[0]
    rows[2] = list(rows[2])
    rows[2][header.index("mass")] = "heavy"        # row 3 of the sheet (the header is row 1)
    sheet = tmp_path / "planner.csv"
    sheet.write_bytes(_csv_bytes(rows))
    rc, out, err = _run_batch(sheet, tmp_path)
    assert rc == 1  # done, but a row failed
    data = json.loads(out)
    text = json.dumps(data)
    assert "row 3" in text or '"row": 3' in text or "[3," in text, text[:2000]
    assert "mass" in text
    written = {Path(f).name for f in data["files"]}
    assert {"PL-0001.pdf", "PL-0003.pdf"} <= written and "PL-0002.pdf" not in written


def test_text_file_renamed_xlsx_is_refused(tmp_path):
    sheet = tmp_path / "planner.xlsx"
    sheet.write_bytes(PLANNER.read_bytes())
    rc, out, err = check(["batch", str(sheet), "--out", str(tmp_path / "out")])
    assert rc == 2
    assert str(sheet) in err


@pytest.mark.parametrize("number", ["0\n0", "WO\t1", "A\r\nB"])
def test_line_breaks_in_planner_order_numbers(tmp_path, number):
    # found by test_spoiled_planner_xlsx with 500 examples
    rows = _planner_rows()
    rows[1] = list(rows[1])
    rows[1][rows[0].index("order")] = number
    sheet = tmp_path / "planner.csv"
    sheet.write_bytes(_csv_bytes(rows))
    rc, out, err = _run_batch(sheet, tmp_path)
    # the row is refused with its number and the reason; the other rows are still written
    assert rc == 1
    report = json.loads(out)
    assert [f["row"] for f in report["failures"]] == [2]
    assert "tab or line break" in report["failures"][0]["reason"]
    assert report["done"] == report["rows"] - 1


def _xlsx_with_huge_cell(path: Path, megabytes: int) -> None:
    """A real workbook whose sheet holds one inline cell of ``megabytes`` MB of one letter: a few hundred
    kB on disk (a zip bomb in the small)."""
    import zipfile

    from openpyxl import Workbook

    base = path.with_suffix(".base.xlsx")
    book = Workbook()
    book.active.append(["order", "rotor", "mass"])
    book.active.append(["X-1", "invented example", "412 kg"])
    book.save(base)
    with zipfile.ZipFile(base) as src, zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as dst:
        for item in src.infolist():
            data = src.read(item.filename)
            if item.filename != "xl/worksheets/sheet1.xml":
                dst.writestr(item, data)
                continue
            head, tail = data.split(b"</sheetData>")
            with dst.open(item.filename, "w", force_zip64=True) as member:
                member.write(head + b'<row r="3"><c r="A3" t="inlineStr"><is><t>')
                chunk = b"A" * (1 << 20)
                for _ in range(megabytes):
                    member.write(chunk)
                member.write(b"</t></is></c></row></sheetData>" + tail)
    base.unlink()


# the child's own peak (VmHWM is fresh at exec; ru_maxrss would carry pytest's peak across the fork)
MEASURE = ("import sys\nfrom toolkit.cli import main\nrc = main(sys.argv[1:])\n"
           "peak = [l.split()[1] for l in open('/proc/self/status') if l.startswith('VmHWM:')][0]\n"
           "print('peak-kB', peak)\nsys.exit(rc)\n")


def test_zip_bomb_sheet_is_refused_within_memory(tmp_path):
    sheet = tmp_path / "planner.xlsx"
    _xlsx_with_huge_cell(sheet, 300)
    assert sheet.stat().st_size < 2_000_000
    result = subprocess.run([sys.executable, "-c", MEASURE, "batch", str(sheet), "--out", str(tmp_path / "out")],
                            capture_output=True, timeout=120)
    err = result.stderr.decode("utf-8", "replace")
    peak_mb = int(result.stdout.split(b"peak-kB")[-1]) / 1024
    assert result.returncode == 2, err
    assert len(err.splitlines()) == 1 and "Traceback" not in err, err
    assert peak_mb < 500, peak_mb  # issue 6: well under the 500 MB a 10,000-row sheet may use
