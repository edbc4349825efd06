"""The work order as a spreadsheet the shop prints and fills in (openpyxl).

One sheet, ``Work order``, in sections from top to bottom: identification; tolerance per correction plane
(allowance, method, source); initial unbalance; numbered operations with a ``Status`` column restricted to a
list; predicted residual; check run (the operator types the residual measured after correction, and the
result cell computes itself with a formula); sign-off; values used (defaults marked common practice or from
memory, with how to override them); warnings; cautions; sources.

Printing: A4, fitted to one page wide, the title rows repeated on every page, panes frozen under them,
header and footer with the order number and ``page N of M``.

Row heights. A spreadsheet program does not grow a row for wrapped text when it prints a file it did not
lay out itself, so every text cell wraps inside its (merged) columns and every row gets a height from
its text, estimated here (:func:`wrapped_lines`, :func:`row_height`) with a font-width model of our own:

* widths are counted in column-width units (the width of the digit ``0`` in the default font, which is
  how both Excel and LibreOffice measure a column);
* each character counts, in those units: lower-case letters 1.1 (``m`` and ``w`` 1.55), capitals 1.4
  (``M`` 1.55, ``W`` 1.75), digits 1.0, space 0.5, narrow punctuation ``.,;:'|!()[]-/`` 0.65,
  ``@ % Æ Œ æ œ — ‰ … ™`` and East Asian wide characters 1.9, combining marks 0, anything else 1.4; bold
  text 1.12 times that, and the font size scales it (size / 11). Each is at or above the widest
  character of its class, relative to the font's digit, in Helvetica (Arial's metrics) and in DejaVu Sans
  and DejaVu Serif (what LibreOffice prints when Calibri is not installed), regular and bold, and so
  also above Calibri's: a line of any text is never longer than the model says;
* a line is the cell's width less 0.6 units of padding; text breaks at spaces (and at line breaks), a
  word longer than a line is broken where it fills the line;
* a line takes 1.364 times the font size (15 pt for 11 pt text, Excel's default row) and a row 2 pt more;
  the row height is the largest of its cells', capped at 409 pt (the largest row a workbook can hold:
  longer text is cut there, it never runs into the next row).

The model is conservative: it overestimates a line's width, so a printed row is at most somewhat taller
than its text. ``tests/test_xlsx_print.py`` checks the heights against the published metrics of
Helvetica and, where LibreOffice is installed, prints the workbook to PDF and checks that no two words
overlap and none leaves the page.

User text (order number, customer, notes, plane names, descriptions) is always written as text: a value
that starts with ``=``, ``+``, ``-`` or ``@`` is stored as a string with the quote-prefix flag, never as a
formula.
"""

from __future__ import annotations

import functools
import re
from io import BytesIO
from pathlib import Path

from toolkit.workorder.model import Formatter, WorkOrder, key_pairs

__all__ = ["workbook", "to_bytes", "write_xlsx", "STATUS_CHOICES", "SHEET", "safe_text", "clean_text",
           "FORMULA_START", "text_width", "wrapped_lines", "row_height", "MAX_ROW_HEIGHT"]

SHEET = "Work order"
#: The values the Status column accepts (a list validation in the sheet).
STATUS_CHOICES = ("open", "done", "skipped", "on hold")
#: The sign-off rows in order, as the keys of their defined names ``cp_signoff_KEY_name`` / ``_date``.
SIGNOFF_ROLES = ("operator", "machinist", "inspector")
#: Leading characters that would make a spreadsheet read text as a formula.
FORMULA_START = ("=", "+", "-", "@", "\t", "\r", "\n")
_COLUMNS = 9
#: Characters a workbook cannot hold (control characters other than tab, line feed, carriage return);
#: the same set as openpyxl's ILLEGAL_CHARACTERS_RE. Shown as "?" if they reach an exporter.
_ILLEGAL = re.compile(r"[\x00-\x08\x0b\x0c\x0e-\x1f]")
_WIDTHS = (7, 20, 42, 11, 14, 16, 14, 12, 22)
#: The largest row height a workbook holds, in points.
MAX_ROW_HEIGHT = 409.0
_PADDING = 0.6          # column-width units lost to the cell's left and right padding
_LINE = 15.0 / 11.0     # line height per point of font size
_ROW_PAD = 2.0          # points added to every row
_NARROW = set(".,;:'|!()[]-/")
_WIDEST = set("@%ÆŒæœ—‰…™")
#: The longest text a check-run result formula can show (its cell is sized for it).
_FORMULA_SHOWS = "enter reading"


@functools.lru_cache(maxsize=4096)
def _char_width(ch: str) -> float:
    import unicodedata

    if ch in _WIDEST:
        return 1.9
    if ch.islower():
        return 1.55 if ch in "mw" else 1.1
    if ch.isupper():
        return {"M": 1.55, "W": 1.75}.get(ch, 1.4)
    if ch.isdigit():
        return 1.0
    if ch == " ":
        return 0.5
    if ch in _NARROW:
        return 0.65
    if unicodedata.combining(ch):
        return 0.0
    if unicodedata.east_asian_width(ch) in ("W", "F"):
        return 1.9
    return 1.4


def text_width(text: str, size: float = 11.0, bold: bool = False) -> float:
    """The width of ``text`` on one line, in column-width units, by the module's font-width model.

    >>> text_width("0000000000")
    10.0
    >>> round(text_width("Rotor", bold=True), 2)
    6.5
    """
    return sum(_char_width(ch) for ch in text) * (size / 11.0) * (1.12 if bold else 1.0)


def wrapped_lines(text: str, width: float, size: float = 11.0, bold: bool = False) -> int:
    """How many lines ``text`` takes when wrapped in a cell ``width`` column-width units wide (at least 1).

    >>> wrapped_lines("a short line", 20)
    1
    >>> wrapped_lines("word " * 20, 20)
    7
    """
    room = max(1.0, width - _PADDING)
    space = text_width(" ", size, bold)
    total = 0
    for paragraph in str(text).split("\n"):
        lines, used = 1, 0.0
        for word in paragraph.split(" "):
            w = text_width(word, size, bold)
            if used and used + space + w <= room:
                used += space + w
                continue
            if used:
                lines += 1
                used = 0.0
            while w > room:  # a word longer than a line is broken where the line is full
                lines += 1
                w -= room
            used = w
        total += lines
    return max(1, total)


def row_height(lines: int, size: float = 11.0) -> float:
    """The row height in points for ``lines`` lines of text of ``size`` points (capped at
    :data:`MAX_ROW_HEIGHT`).

    >>> row_height(1), row_height(3)
    (17.0, 47.0)
    """
    return min(MAX_ROW_HEIGHT, round(lines * _LINE * size + _ROW_PAD, 1))


def clean_text(text) -> str:
    """User text with the characters a workbook cannot hold replaced by ``?``.

    >>> clean_text("WO\x1f2026")
    'WO?2026'
    """
    return _ILLEGAL.sub("?", "" if text is None else str(text))


def safe_text(cell, text: str) -> None:
    """Write user text into ``cell`` so that it can never become a formula.

    >>> from openpyxl import Workbook
    >>> c = Workbook().active["A1"]; safe_text(c, "=1+1"); (c.value, c.data_type, c.quotePrefix)
    ('=1+1', 's', True)
    """
    text = clean_text(text)
    cell.value = text
    if text.startswith(FORMULA_START):
        cell.data_type = "s"
        cell.quotePrefix = True


#: Characters of user text in a page header or footer section: the left and right sections share one line,
#: so each keeps to well under half of a landscape page (the full text is in the sheet).
_HF_CHARS = 45


def _hf(text: str, limit: int = 120) -> str:
    """Escape user text for a header or footer: ``&`` starts a control code there (``&P`` page, ``&"font"``,
    ``&12`` size), so each one is doubled; the text is shortened with "…" beyond ``limit`` characters first,
    so a doubled ``&&`` is never split.

    >>> _hf("A&B &P"), _hf("&" * 80, limit=5)
    ('A&&B &&P', '&&&&&&&&…')
    """
    text = " ".join(clean_text(text).split())
    if len(text) > limit:
        text = text[:limit - 1].rstrip() + "…"
    return text.replace("&", "&&")


class _Sheet:
    """Writes the order row by row."""

    def __init__(self, ws, styles):
        self.ws = ws
        self.row = 1
        self.s = styles

    def text(self, col, value, style=None):
        cell = self.ws.cell(row=self.row, column=col)
        safe_text(cell, value)
        if style:
            self.s.apply(cell, style)
        return cell

    def number(self, col, value, fmt="0.0", style=None):
        cell = self.ws.cell(row=self.row, column=col, value=float(value))
        cell.number_format = fmt + "_)"  # room of a ")" on the right: the number never touches the next text
        if style:
            self.s.apply(cell, style)
        return cell

    def section(self, title: str):
        self.row += 1
        self.text(1, title, "section")
        self.ws.merge_cells(start_row=self.row, start_column=1, end_row=self.row, end_column=_COLUMNS)
        self.row += 1

    def header(self, labels):
        for col, label in enumerate(labels, start=1):
            self.text(col, label, "header")
        self.row += 1

    def spans(self, *cells):
        """One row of text cells, each ``(first column, last column, text, style)``, merged across its span."""
        for first, last, value, style in cells:
            self.text(first, value, style)
            if last > first:
                self.ws.merge_cells(start_row=self.row, start_column=first, end_row=self.row, end_column=last)
        self.row += 1

    def long(self, text: str, style=None):
        """A paragraph across the whole width (its row height is set by :func:`_fit_rows`)."""
        self.text(1, text, style or "wrap")
        self.ws.merge_cells(start_row=self.row, start_column=1, end_row=self.row, end_column=_COLUMNS)
        self.row += 1


class _Styles:
    def __init__(self):
        from openpyxl.styles import Alignment, Border, Font, PatternFill, Side

        thin = Side(style="thin", color="808080")
        self.defs = {
            "title": dict(font=Font(bold=True, size=14)),
            "sub": dict(font=Font(italic=True, size=9), alignment=Alignment(wrap_text=True, vertical="top")),
            "section": dict(font=Font(bold=True, size=11, color="FFFFFF"),
                            fill=PatternFill("solid", fgColor="2F4F4F")),
            "header": dict(font=Font(bold=True), fill=PatternFill("solid", fgColor="D9E2E2"),
                           border=Border(bottom=thin), alignment=Alignment(wrap_text=True, vertical="top")),
            "label": dict(font=Font(bold=True), alignment=Alignment(wrap_text=True, vertical="top")),
            "input": dict(fill=PatternFill("solid", fgColor="FFF5CC"), border=Border(top=thin, bottom=thin,
                                                                                    left=thin, right=thin)),
            "wrap": dict(alignment=Alignment(wrap_text=True, vertical="top")),
            "caution": dict(alignment=Alignment(wrap_text=True, vertical="top"), font=Font(color="8B0000")),
            "pass": dict(font=Font(bold=True, color="006400")),
            "fail": dict(font=Font(bold=True, color="B22222")),
        }

    def apply(self, cell, name):
        for attr, value in self.defs[name].items():
            setattr(cell, attr, value)


def workbook(order: WorkOrder):
    """Build the openpyxl ``Workbook`` of a work order (nothing is written to disk).

    Parameters: ``order`` (:class:`~toolkit.workorder.model.WorkOrder`). Returns the workbook; the sheet
    is :data:`SHEET`. Defined names ``measured_N`` and ``result_N`` (N = 1, 2 for the planes in order) and
    ``overall_result`` point at the check-run cells; ``cp_order_number``, ``cp_input_sha256``,
    ``cp_measured_angle_N``, ``cp_status_K`` / ``cp_remark_K`` (operation K) and ``cp_signoff_ROLE_name`` /
    ``_date`` (:data:`SIGNOFF_ROLES`) at the cells the shop register reads back.
    """
    from openpyxl import Workbook
    from openpyxl.utils import get_column_letter

    fmt = Formatter(order.units, order.angle_reference, order.angle_sense)
    wb = Workbook()
    ws = wb.active
    ws.title = SHEET
    sh = _Sheet(ws, _Styles())
    for col, width in enumerate(_WIDTHS, start=1):
        ws.column_dimensions[get_column_letter(col)].width = width

    _title_rows(sh, fmt, order)
    _identification_rows(sh, wb, fmt, order)
    _tolerance_rows(sh, fmt, order)
    _initial_rows(sh, fmt, order)
    if order.field_record is not None:
        _field_runs(sh, fmt, order.field_record)
    _operation_rows(sh, wb, fmt, order)
    _predicted_rows(sh, fmt, order)
    _check_run_rows(sh, wb, fmt, order)
    if order.field_record is not None:
        _sensor_check_rows(sh, order.field_record)
    _signoff_rows(sh, wb)
    _closing_rows(sh, order)
    _fit_rows(ws)
    _print_setup(ws, order, sh.row)
    return wb


def _title_rows(sh: _Sheet, fmt, order: WorkOrder) -> None:
    """Write the two title rows (the order number; the angle convention and units), repeated on every page."""
    ws = sh.ws
    u_sym, m_sym, l_sym = fmt.symbol("unbalance"), fmt.symbol("mass"), fmt.symbol("length")
    sh.text(1, f"Balancing work order {order.ident.number}", "title")
    ws.merge_cells(start_row=1, start_column=1, end_row=1, end_column=_COLUMNS)
    sh.row = 2
    sh.text(1, fmt.convention() + f" Units: {u_sym}, {m_sym}, {l_sym}.", "sub")
    ws.merge_cells(start_row=2, start_column=1, end_row=2, end_column=_COLUMNS)
    ws.print_title_rows = "1:2"
    ws.freeze_panes = "A3"
    sh.row = 3


def _identification_rows(sh: _Sheet, wb, fmt, order: WorkOrder) -> None:
    """Write the identification block: order, rotor, speeds, criterion, whole-rotor allowance, angles, key."""
    ws = sh.ws
    sh.section("Identification")
    i = order.ident
    rows = [
        ("Order number", i.number), ("Input SHA-256", i.input_sha256), ("Customer", i.customer), ("Rotor", i.rotor), ("Drawing", i.drawing),
        ("Serial number", i.serial), ("Date", i.date),
        ("Rotor mass", fmt.rotor_mass(order.rotor_mass_kg)),
        ("Service speed (max.)", f"{order.service_speed_rpm:g} r/min"),
        ("Balancing speed", f"{order.balancing_speed_rpm:g} r/min"),
        ("Criterion", _criterion(order)),
        ("Permissible residual unbalance, whole rotor", fmt.unbalance(order.u_per_total_g_mm)),
        ("Material", order.material), ("Measurement", order.measurement),
        ("Angle reference", order.angle_reference), ("Angle sense", order.angle_sense),
        *key_pairs(order, fmt),
        ("Notes", i.notes),
    ]
    for label, value in rows:
        _name(wb, {"Order number": "cp_order_number", "Input SHA-256": "cp_input_sha256"}.get(label), 3, sh.row)
        sh.text(1, label, "label")
        ws.merge_cells(start_row=sh.row, start_column=1, end_row=sh.row, end_column=2)
        sh.text(3, value, "wrap")
        ws.merge_cells(start_row=sh.row, start_column=3, end_row=sh.row, end_column=_COLUMNS)
        sh.row += 1


def _tolerance_rows(sh: _Sheet, fmt, order: WorkOrder) -> None:
    """Write the tolerance block: each correction plane's position, radius, allowance and its source."""
    ws = sh.ws
    u_sym, l_sym = fmt.symbol("unbalance"), fmt.symbol("length")
    sh.section("Tolerance per correction plane")
    sh.header(["Plane", "Name", "Method", f"Position [{l_sym}]", f"Radius [{l_sym}]",
               f"Allowance U_per [{u_sym}]", "Source", "", ""])
    ws.merge_cells(start_row=sh.row - 1, start_column=7, end_row=sh.row - 1, end_column=_COLUMNS)
    for n, p in enumerate(order.planes, start=1):
        sh.number(1, n, "0")
        sh.text(2, p.name)
        sh.text(3, p.tolerance.method, "wrap")
        sh.number(4, fmt.value("length", p.position_mm), "0.0")
        sh.number(5, fmt.value("length", p.radius_mm), "0.0")
        sh.number(6, fmt.value("unbalance", p.tolerance.u_per_g_mm), _nf(fmt.value("unbalance", p.tolerance.u_per_g_mm)))
        sh.text(7, p.tolerance.source, "wrap")
        ws.merge_cells(start_row=sh.row, start_column=7, end_row=sh.row, end_column=_COLUMNS)
        sh.row += 1


def _initial_rows(sh: _Sheet, fmt, order: WorkOrder) -> None:
    """Write the initial unbalance (heavy spot) of each plane and the correction it calls for."""
    u_sym = fmt.symbol("unbalance")
    sh.section("Initial unbalance (heavy spot) and correction")
    sh.header(["Plane", "Name", "Correction", f"Angle [°]", f"Unbalance [{u_sym}]", "Correction angle [°]",
               f"Correction [{u_sym}]", "Action", "Surface"])
    for n, p in enumerate(order.planes, start=1):
        sh.number(1, n, "0")
        sh.text(2, p.name)
        sh.text(3, f"{p.correction_action} {fmt.unbalance(p.correction_g_mm)} at {fmt.where(p.correction_deg)}",
                "wrap")
        sh.number(4, p.initial_deg, "0.0")
        sh.number(5, fmt.value("unbalance", p.initial_g_mm), _nf(fmt.value("unbalance", p.initial_g_mm)))
        sh.number(6, p.correction_deg, "0.0")
        sh.number(7, fmt.value("unbalance", p.correction_g_mm), _nf(fmt.value("unbalance", p.correction_g_mm)))
        sh.text(8, p.correction_action)
        sh.text(9, p.surface)
        sh.row += 1


def _operation_rows(sh: _Sheet, wb, fmt, order: WorkOrder) -> None:
    """Write the operations in order (trial steps first), each with a status choice and a remark cell."""
    from openpyxl.worksheet.datavalidation import DataValidation

    ws = sh.ws
    u_sym, m_sym = fmt.symbol("unbalance"), fmt.symbol("mass")
    sh.section("Operations (in this order; mark each one)")
    sh.header(["No.", "Plane", "What", "Action", f"Mass [{m_sym}]", f"Effect [{u_sym}]", "Angle [°]", "Status",
               "Done by / remark"])
    status = DataValidation(type="list", formula1='"' + ",".join(STATUS_CHOICES) + '"', allow_blank=True,
                            showErrorMessage=True, errorTitle="Status",
                            error="Choose one of: " + ", ".join(STATUS_CHOICES))
    ws.add_data_validation(status)
    for step in (order.field_record.trial_steps(fmt) if order.field_record is not None else ()):
        sh.text(2, "trial")
        sh.text(3, step, "wrap")
        ws.merge_cells(start_row=sh.row, start_column=3, end_row=sh.row, end_column=7)
        status.add(sh.text(8, "open", "input"))
        sh.text(9, "", "input")
        sh.row += 1
    for op in order.operations:
        sh.number(1, op.number, "0")
        sh.text(2, op.plane)
        extra = "; ".join(f"{k}: {v}" for k, v in op.details)
        sh.text(3, f"{op.description} at {fmt.where(op.angle_deg)}" + (f" ({extra})" if extra else ""), "wrap")
        sh.text(4, op.action)
        sh.number(5, fmt.value("mass", op.mass_g), _nf(fmt.value("mass", op.mass_g)))
        sh.number(6, fmt.value("unbalance", op.unbalance_g_mm), _nf(fmt.value("unbalance", op.unbalance_g_mm)))
        sh.number(7, op.angle_deg, "0.0")
        cell = sh.text(8, "open", "input")
        status.add(cell)
        _name(wb, f"cp_status_{op.number}", 8, sh.row), _name(wb, f"cp_remark_{op.number}", 9, sh.row)
        sh.text(9, "", "input")
        sh.row += 1
    if not order.operations:
        sh.long("No operation: the initial unbalance is already within the allowance.")


def _predicted_rows(sh: _Sheet, fmt, order: WorkOrder) -> None:
    """Write the predicted residual of each plane after the operations, against its allowance."""
    u_sym = fmt.symbol("unbalance")
    sh.section("Predicted residual after the operations")
    sh.header(["Plane", "Name", "Predicted residual", "Angle [°]", f"Residual [{u_sym}]", f"Allowance [{u_sym}]",
               "Result", "", ""])
    for n, p in enumerate(order.planes, start=1):
        sh.number(1, n, "0")
        sh.text(2, p.name)
        sh.text(3, f"{fmt.unbalance(p.predicted_g_mm)} at {fmt.where(p.predicted_deg)}", "wrap")
        sh.number(4, p.predicted_deg, "0.0")
        sh.number(5, fmt.value("unbalance", p.predicted_g_mm), _nf(fmt.value("unbalance", p.predicted_g_mm)))
        sh.number(6, fmt.value("unbalance", p.tolerance.u_per_g_mm), _nf(fmt.value("unbalance", p.tolerance.u_per_g_mm)))
        sh.text(7, "PASS" if p.passed else "FAIL", "pass" if p.passed else "fail")
        sh.row += 1


def _check_run_rows(sh: _Sheet, wb, fmt, order: WorkOrder) -> None:
    """Write the check-run block: measured-residual input cells, their pass/fail formulas and the rule."""
    from openpyxl.workbook.defined_name import DefinedName

    ws, styles = sh.ws, sh.s
    u_sym = fmt.symbol("unbalance")
    sh.section("Check run after correction (operator: enter the measured residual of each plane)")
    sh.header(["Plane", "Name", "Instruction", f"Limit [{u_sym}]", f"Measured [{u_sym}]", "Angle [°]",
               "Result", "", ""])
    result_cells = []
    for n, p in enumerate(order.planes, start=1):
        r = sh.row
        sh.number(1, n, "0")
        sh.text(2, p.name)
        sh.text(3, "Run with all masses secured and guards closed; type the residual in the yellow cell.", "wrap")
        sh.number(4, fmt.value("unbalance", p.limit), _nf(fmt.value("unbalance", p.limit)))
        measured = ws.cell(row=r, column=5)
        styles.apply(measured, "input")
        styles.apply(ws.cell(row=r, column=6), "input")
        ws.cell(row=r, column=7).value = (f'=IF(ISNUMBER(E{r}),IF(E{r}<=D{r},"PASS","FAIL"),"enter reading")')
        result_cells.append(f"G{r}")
        wb.defined_names[f"measured_{n}"] = DefinedName(f"measured_{n}", attr_text=f"'{SHEET}'!$E${r}")
        wb.defined_names[f"result_{n}"] = DefinedName(f"result_{n}", attr_text=f"'{SHEET}'!$G${r}")
        _name(wb, f"cp_measured_angle_{n}", 6, r)
        sh.row += 1
    r = sh.row
    sh.text(3, "Rotor result (all planes)", "label")
    first, last = result_cells[0], result_cells[-1]
    count = len(result_cells)
    ws.cell(row=r, column=7).value = (f'=IF(COUNTIF({first}:{last},"FAIL")>0,"FAIL",'
                                      f'IF(COUNTIF({first}:{last},"PASS")={count},"PASS","open"))')
    wb.defined_names["overall_result"] = DefinedName("overall_result", attr_text=f"'{SHEET}'!$G${r}")
    sh.row += 1
    rule = order.acceptance_rule
    sh.long(f"Acceptance rule: {rule}. The limit is the allowance less the measurement error allowance ΔU "
            "(default 0, from memory: ISO 21940-14). The rotor maker's acceptance rules take precedence.", "sub")


def _sensor_check_rows(sh: _Sheet, record) -> None:
    """Write the check run per vibration sensor of a field record: original, predicted, input cells."""
    sh.section("Check run: vibration per sensor (operator: enter the reading beside the predicted value)")
    sh.header(["Sensor", "", "Original", "Predicted after the operations", "", "Measured", "Phase [°]",
               "Initials", ""])
    for sensor, original, predicted in record.check_rows():
        for col in (6, 7, 8):
            sh.s.apply(sh.ws.cell(row=sh.row, column=col), "input")
        sh.spans((1, 2, sensor, "wrap"), (3, 3, original, None), (4, 5, predicted, "wrap"))


def _signoff_rows(sh: _Sheet, wb) -> None:
    """Write the sign-off block: name, signature and date input cells for each role."""
    ws = sh.ws
    sh.section("Sign-off")
    sh.header(["Role", "", "Name", "", "Signature", "", "Date", "", ""])
    ws.merge_cells(start_row=sh.row - 1, start_column=1, end_row=sh.row - 1, end_column=2)
    for key, role in zip(SIGNOFF_ROLES, ("Operator (balancing)", "Machinist (drilling / welding)",
                                         "Inspector (release)")):
        _name(wb, f"cp_signoff_{key}_name", 3, sh.row), _name(wb, f"cp_signoff_{key}_date", 7, sh.row)
        sh.text(1, role, "label")
        ws.merge_cells(start_row=sh.row, start_column=1, end_row=sh.row, end_column=2)
        for col in (3, 5, 7):
            sh.s.apply(ws.cell(row=sh.row, column=col), "input")
        ws.row_dimensions[sh.row].height = 24
        sh.row += 1


def _closing_rows(sh: _Sheet, order: WorkOrder) -> None:
    """Write the closing blocks: the values used (with their marks), warnings, cautions and sources."""
    ws = sh.ws
    if order.settings:
        sh.section("Values used (marked common practice or from memory: override in the job file)")
        sh.header(["Setting", "", "Value", "Mark", "Given by", "How to override", "", "", ""])
        ws.merge_cells(start_row=sh.row - 1, start_column=1, end_row=sh.row - 1, end_column=2)
        ws.merge_cells(start_row=sh.row - 1, start_column=6, end_row=sh.row - 1, end_column=_COLUMNS)
        for s in order.settings:
            sh.text(1, s.name, "wrap")
            ws.merge_cells(start_row=sh.row, start_column=1, end_row=sh.row, end_column=2)
            sh.text(3, s.value, "wrap")
            sh.text(4, s.mark)
            sh.text(5, "job file" if s.given else "default")
            sh.text(6, s.how, "wrap")
            ws.merge_cells(start_row=sh.row, start_column=6, end_row=sh.row, end_column=_COLUMNS)
            sh.row += 1
    if order.warnings:
        sh.section("Warnings")
        for w in order.warnings:
            sh.long(w)
    sh.section("Cautions")
    for n, caution in enumerate(order.cautions, start=1):
        sh.long(f"{n}. {caution}", "caution")
    sh.section("Sources")
    for source in order.sources:
        sh.long(source)


def _print_setup(ws, order: WorkOrder, last_row: int) -> None:
    """Set the sheet's printing: paper, landscape fitted to the width, headers, footers, print area."""
    from openpyxl.utils import get_column_letter

    ws.page_setup.paperSize = ws.PAPERSIZE_LETTER if order.paper_name == "Letter" else ws.PAPERSIZE_A4
    ws.page_setup.orientation = "landscape"
    ws.page_setup.fitToWidth = 1
    ws.page_setup.fitToHeight = 0
    ws.sheet_properties.pageSetUpPr.fitToPage = True
    ws.print_options.gridLines = False
    ws.oddHeader.left.text = _hf(f"Work order {order.ident.number}", _HF_CHARS)
    ws.oddHeader.right.text = _hf(order.ident.rotor, _HF_CHARS)
    ws.oddFooter.left.text = _hf(f"Work order {order.ident.number}", _HF_CHARS)
    ws.oddFooter.right.text = "page &P of &N"
    ws.print_area = f"A1:{get_column_letter(_COLUMNS)}{last_row}"


def _field_runs(sh: _Sheet, fmt, record) -> None:
    """The trial-mass runs, the influence coefficients, the condition number and the solver's warnings."""
    sh.section("Trial-mass runs")
    sh.header(["Run", "", "Trial masses on the rotor", "", "Readings per sensor", "", "", "", ""])
    for run, trials, readings in record.run_rows(fmt):
        sh.spans((1, 2, run, "wrap"), (3, 4, trials, "wrap"), (5, _COLUMNS, readings, "wrap"))
    sh.section("Influence coefficients (reading caused by 1 g at 0° in the plane)")
    sh.header(["Sensor", "", "Plane", "Coefficient", "", "", "", "", ""])
    for sensor, plane, text in record.coefficient_rows():
        sh.spans((1, 2, sensor, "wrap"), (3, 3, plane, None), (4, _COLUMNS, text, "wrap"))
    sh.long(record.conditioning(), "sub")
    for text in record.warnings:
        sh.long(text)


def _fit_rows(ws) -> None:
    """Make every text cell wrap inside its (merged) columns and give every row the height its text
    needs by the module's font-width model (a row keeps a larger height set before)."""
    from openpyxl.styles import Alignment
    from openpyxl.utils import get_column_letter

    last_col = {(r.min_row, r.min_col): r.max_col for r in ws.merged_cells.ranges}
    widths = {c: ws.column_dimensions[get_column_letter(c)].width for c in range(1, _COLUMNS + 1)}
    need: dict[int, float] = {}
    for row in ws.iter_rows(min_row=1, max_row=ws.max_row, max_col=_COLUMNS):
        for cell in row:
            if isinstance(cell.value, (int, float)):
                # a number sits on the first line of its row, beside the text it belongs to
                cell.alignment = Alignment(vertical="top", horizontal=cell.alignment.horizontal)
            if not isinstance(cell.value, str) or cell.value == "":
                continue
            text = _FORMULA_SHOWS if cell.data_type == "f" else cell.value
            width = sum(widths[c] for c in range(cell.column, last_col.get((cell.row, cell.column), cell.column) + 1))
            size = float(cell.font.sz or 11)
            height = row_height(wrapped_lines(text, width, size, bool(cell.font.b)), size)
            need[cell.row] = max(need.get(cell.row, 0.0), height)
            if not cell.alignment.wrap_text or cell.alignment.vertical != "top":
                cell.alignment = Alignment(wrap_text=True, vertical="top", horizontal=cell.alignment.horizontal)
    for number, height in need.items():
        ws.row_dimensions[number].height = max(height, ws.row_dimensions[number].height or 0.0)


def _name(wb, name: str | None, column: int, row: int) -> None:
    """Give the cell a workbook defined name (``cp_*``: read back by the shop register)."""
    if name:
        from openpyxl.utils import get_column_letter
        from openpyxl.workbook.defined_name import DefinedName

        wb.defined_names[name] = DefinedName(name, attr_text=f"'{SHEET}'!${get_column_letter(column)}${row}")


def _criterion(order: WorkOrder) -> str:
    if order.criterion == "iso":
        return f"balance quality grade {order.grade} (ISO 21940-11)"
    return f"{order.criterion.upper()} criterion"


def _nf(x: float) -> str:
    """A number format with about four significant figures for a value of this size."""
    x = abs(x)
    if x >= 1000:
        return "0"
    if x >= 100:
        return "0.0"
    if x >= 10:
        return "0.00"
    return "0.000"


def to_bytes(order: WorkOrder) -> bytes:
    """The .xlsx file of a work order as bytes."""
    return save_bytes(workbook(order))


def save_bytes(wb) -> bytes:
    """A workbook's .xlsx file as bytes, made in memory.

    openpyxl's own ``save`` writes each sheet to a temporary file in the system's temporary folder first
    (outside our atomic write: a full temporary folder failed there, and a killed run left ``openpyxl.*``
    files); here every sheet is serialised into memory. A write-only sheet must have been started with
    :func:`in_memory` for the same reason.
    """
    import datetime
    import zipfile

    from openpyxl.drawing.spreadsheet_drawing import SpreadsheetDrawing
    from openpyxl.worksheet._writer import WorksheetWriter
    from openpyxl.writer.excel import ExcelWriter

    class _InMemory(ExcelWriter):
        def write_worksheet(self, ws):
            ws._drawing = SpreadsheetDrawing()
            ws._drawing.charts = ws._charts
            ws._drawing.images = ws._images
            if self.workbook.write_only:
                if not ws.closed:
                    ws.close()
                writer = ws._writer
            else:
                writer = WorksheetWriter(ws, out=BytesIO())
                writer.write()
            if not isinstance(writer.out, BytesIO):  # a write-only sheet not started with in_memory
                raise RuntimeError("a write-only sheet must be started with xlsx.in_memory")
            ws._rels = writer._rels
            self._archive.writestr(ws.path[1:], writer.out.getvalue())
            self.manifest.append(ws)

    if wb.write_only and not wb.worksheets:
        wb.create_sheet()
    buffer = BytesIO()
    archive = zipfile.ZipFile(buffer, "w", zipfile.ZIP_DEFLATED, allowZip64=True)
    wb.properties.modified = datetime.datetime.now(tz=datetime.timezone.utc).replace(tzinfo=None)
    _InMemory(wb, archive).save()
    return buffer.getvalue()


def in_memory(ws) -> None:
    """Start a write-only sheet whose rows are kept in memory instead of a temporary file (see
    :func:`save_bytes`); call it before the first row is appended."""
    from openpyxl.worksheet._writer import WorksheetWriter

    ws._writer = WorksheetWriter(ws, out=BytesIO())
    ws._writer.write_top()


def write_xlsx(order: WorkOrder, path: str | Path, *, force: bool = False) -> Path:
    """Write the work order's spreadsheet to ``path`` atomically (never over an existing file unless
    ``force``); returns the path."""
    from toolkit.fileio import write_atomic

    return write_atomic(path, to_bytes(order), force=force)
