"""The work-order spreadsheet: structure, print set-up, the status list, formula cells evaluated by an
independent engine (the ``formulas`` package), and user text that must never become a formula."""

import dataclasses
import io
import re
import zipfile

import openpyxl
import pytest

from toolkit.errors import OutputError
from toolkit.export import xlsx
from toolkit.workorder.model import Identification, example_order


def _load(order):
    return openpyxl.load_workbook(io.BytesIO(xlsx.to_bytes(order)))


def _cells(ws):
    return [c for row in ws.iter_rows() for c in row if c.value is not None]


def _find(ws, text):
    for cell in _cells(ws):
        if cell.value == text:
            return cell
    raise AssertionError(f"{text!r} not in the sheet")


def _ref(wb, name):
    (sheet, ref), = wb.defined_names[name].destinations
    return sheet, ref.replace("$", "")


def test_sections_and_known_values():
    order = example_order()
    wb = _load(order)
    assert wb.sheetnames == [xlsx.SHEET]
    ws = wb[xlsx.SHEET]
    assert ws["A1"].value == "Balancing work order INV-HAND-01"
    assert "from the reference mark (keyway), counted against rotation" in ws["A2"].value
    for title in ("Identification", "Tolerance per correction plane", "Operations (in this order; mark each one)",
                  "Predicted residual after the operations", "Sign-off", "Cautions", "Sources"):
        _find(ws, title)
    # the allowance of plane 1 sits under its header, in the unit of the header
    head = _find(ws, "Allowance U_per [g·mm]")
    assert ws.cell(head.row + 1, head.column).value == pytest.approx(order.planes[0].tolerance.u_per_g_mm)
    assert ws.cell(head.row + 1, 7).value == order.planes[0].tolerance.source
    # operation 1: what, action, angle with its sense
    head = _find(ws, "What")
    what = ws.cell(head.row + 1, head.column).value
    assert what.startswith("drill 2 holes Ø14.0 mm") and "at 40° from keyway, against rotation" in what
    assert ws.cell(head.row + 1, 4).value == "remove"
    assert ws.cell(head.row + 2, 4).value == "add"
    assert ws.cell(head.row + 2, 7).value == pytest.approx(20.0)
    texts = [c.value for c in _cells(ws) if isinstance(c.value, str)]
    assert any(t.startswith("1. Secure every trial and correction mass") for t in texts)


def test_imperial_units_are_converted_and_labelled():
    order = example_order(units="imperial")
    ws = _load(order)[xlsx.SHEET]
    head = _find(ws, "Allowance U_per [oz·in]")
    # 1 oz·in = 720.0779 g·mm (international avoirdupois ounce and inch definitions)
    assert ws.cell(head.row + 1, head.column).value == pytest.approx(order.planes[0].tolerance.u_per_g_mm / 720.0779,
                                                                     rel=1e-6)


def test_print_setup():
    ws = _load(example_order())[xlsx.SHEET]
    assert ws.page_setup.fitToWidth == 1 and ws.page_setup.fitToHeight == 0
    assert ws.sheet_properties.pageSetUpPr.fitToPage
    assert ws.print_title_rows == "$1:$2"
    assert ws.freeze_panes == "A3"
    assert "INV-HAND-01" in ws.oddHeader.left.text and "INV-HAND-01" in ws.oddFooter.left.text
    assert "&P" in ws.oddFooter.right.text and "&N" in ws.oddFooter.right.text


def test_status_column_is_a_list():
    ws = _load(example_order())[xlsx.SHEET]
    head = _find(ws, "Status")
    status_cells = {f"H{head.row + 1}", f"H{head.row + 2}"}
    (dv,) = ws.data_validations.dataValidation
    assert dv.type == "list"
    assert dv.formula1 == '"open,done,skipped,on hold"'
    covered = {str(c) for rng in dv.sqref.ranges for c in [rng.coord]}
    assert status_cells <= {c for r in covered for c in r.split(":")} or all(
        any(cell in rng for rng in dv.sqref.ranges) for cell in status_cells)


@pytest.mark.parametrize("measured, expected", [
    ((100.0, 100.0), ("PASS", "PASS", "PASS")),
    ((100.0, 99999.0), ("PASS", "FAIL", "FAIL")),
    ((None, 100.0), ("enter reading", "PASS", "open")),
    ("at-limit", ("PASS", "PASS", "PASS")),   # equal to the allowance passes (ISO 21940-11: "at most")
])
def test_check_run_formulas_evaluated_by_an_independent_engine(tmp_path, measured, expected):
    formulas = pytest.importorskip("formulas")
    order = example_order()
    wb = _load(order)
    ws = wb[xlsx.SHEET]
    if measured == "at-limit":
        measured = tuple(p.tolerance.u_per_g_mm for p in order.planes)
    for n, value in enumerate(measured, start=1):
        _, ref = _ref(wb, f"measured_{n}")
        ws[ref] = value
    path = tmp_path / "filled.xlsx"
    wb.save(path)
    solution = formulas.ExcelModel().loads(str(path)).finish().calculate()
    values = {key.split("]")[-1].upper(): item.value for key, item in solution.items()}
    got = []
    for name in ("result_1", "result_2", "overall_result"):
        _, ref = _ref(wb, name)
        got.append(values[f"{xlsx.SHEET.upper()}'!{ref}"][0][0])
    assert tuple(got) == expected


EVIL = ("=HYPERLINK(\"http://x\",\"click\")", "+cmd|' /C calc'!A0", "-2+3", "@SUM(1,1)", "=1+1")


def test_user_text_never_becomes_a_formula():
    base = example_order()
    ident = Identification(EVIL[0], EVIL[1], customer=EVIL[2], drawing=EVIL[3], serial=EVIL[4], notes=EVIL[4])
    plane = dataclasses.replace(base.planes[0], name="=A1*2")
    order = dataclasses.replace(base, ident=ident, planes=(plane, base.planes[1]), angle_reference="=evil()")
    data = xlsx.to_bytes(order)
    ws = openpyxl.load_workbook(io.BytesIO(data))[xlsx.SHEET]
    evil_cells = [c for c in _cells(ws) if isinstance(c.value, str) and c.value in EVIL + ("=A1*2",)]
    assert len(evil_cells) >= 7
    for cell in evil_cells:
        assert cell.data_type == "s", cell.coordinate
    # in the file itself, the only formulas are the check-run cells (three: two planes and the rotor)
    sheet_xml = zipfile.ZipFile(io.BytesIO(data)).read("xl/worksheets/sheet1.xml").decode()
    found = re.findall(r"<f>(.*?)</f>", sheet_xml)
    assert len(found) == 3 and all(f.startswith("IF(") for f in found), found


def test_write_refuses_to_overwrite(tmp_path):
    path = tmp_path / "order.xlsx"
    xlsx.write_xlsx(example_order(), path)
    before = path.read_bytes()
    with pytest.raises(OutputError, match="already exists; give force to overwrite it"):
        xlsx.write_xlsx(example_order("OTHER"), path)
    assert path.read_bytes() == before
    xlsx.write_xlsx(example_order("OTHER"), path, force=True)
    assert openpyxl.load_workbook(path)[xlsx.SHEET]["A1"].value.endswith("OTHER")


def test_characters_a_workbook_cannot_hold_are_replaced():
    order = dataclasses.replace(example_order(), ident=Identification("WO\x1f2026", "rotor\x00x"))
    ws = _load(order)[xlsx.SHEET]
    assert ws["A1"].value == "Balancing work order WO?2026"
    _find(ws, "rotor?x")
