"""The work order as a PDF to print and sign (reportlab, vector graphics only): its content.

Layout (our own): a header band with the order number; identification; the tolerance, initial unbalance,
operations (each with a tick box), predicted residual and check-run tables; sign-off boxes; then one polar
diagram per correction plane (laid out by :mod:`toolkit.export.diagram`); then the values used,
warnings, cautions and sources. Every page carries the order number and ``page N of M`` in its footer.
The paper is the order's (A4 or Letter); text keeps every character the user wrote (fonts, runs and the
page writer are in :mod:`toolkit.export.pdfpage`).

On the page, angles increase counter-clockwise from the top, so the direction of rotation is drawn
clockwise when angles are counted against rotation, and counter-clockwise when they are counted with it.

Output is deterministic for the same work order (reportlab's invariant mode, fixed document dates).
"""

from __future__ import annotations

import math
from io import BytesIO
from pathlib import Path

from toolkit.export import diagram as dia
from toolkit.export import pdfpage
from toolkit.workorder.model import Formatter, PlaneOrder, WorkOrder, example_order, key_pairs
from toolkit.export.pdfpage import MARGIN as _M
from toolkit.export.pdfpage import Pages

__all__ = ["to_bytes", "render_order", "write_pdf", "render", "Document", "combined_bytes", "write_combined",
           "diagram_layout", "PLATE_ORIENTATION"]

_INK = (0.10, 0.12, 0.14)
_ACCENT = (0.05, 0.36, 0.40)
_MUTED = (0.45, 0.47, 0.50)
_WARN = (0.62, 0.10, 0.08)
_ROLES = {"ink": _INK, "accent": _ACCENT, "muted": _MUTED, "warn": _WARN}
#: Font styles by the names the layout used (the page writer picks the font per run of characters).
_STYLE = {"Helvetica": "regular", "Helvetica-Bold": "bold", "Helvetica-Oblique": "italic"}
#: How a weld-on plate lies, in words (on the operations list and in the diagram's legend).
PLATE_ORIENTATION = "sizes read width × length: the width runs across the seat, the length along the rim"


def _wrap(text: str, font: str, size: float, width: float) -> tuple[str, ...]:
    return pdfpage.wrap(pdfpage.clean(text), _STYLE.get(font, font), size, width)


class _Writer:
    """Places text blocks and tables down the page, starting new pages when needed."""

    def __init__(self, doc: pdfpage.Doc, order: WorkOrder):
        self.doc = doc
        self.c = doc.c
        self.order = order
        self.W, self.H = doc.width, doc.height
        self.y = self.H - _M

    # -- page handling
    def ensure(self, height: float):
        if self.y - height < 44:
            self.doc.new_page()
            self.y = self.H - _M
            self.small_header()

    def small_header(self):
        c = self.c
        c.setFillColorRGB(*_ACCENT)
        c.rect(_M, self.y - 4, 4, 14, stroke=0, fill=1)
        c.setFillColorRGB(*_INK)
        pdfpage.draw(c, _M + 10, self.y, f"Work order {self.order.ident.number} (continued)", "bold", 9)
        self.y -= 22

    # -- primitives
    def heading(self, text: str):
        self.ensure(40)
        c = self.c
        self.y -= 6
        c.setFillColorRGB(*_ACCENT)
        c.rect(_M, self.y - 2, 18, 3, stroke=0, fill=1)
        c.setFillColorRGB(*_INK)
        pdfpage.draw(c, _M + 24, self.y - 3, text.upper(), "bold", 10.5)
        self.y -= 17

    def paragraph(self, text: str, size: float = 8.5, color=_INK, font: str = "Helvetica", indent: float = 0):
        lines = _wrap(text, font, size, self.W - 2 * _M - indent)
        for n, line in enumerate(lines):
            if n == 0 or self.y - size - 3 < 44:
                self.ensure(size + 3)
                self.c.setFillColorRGB(*color)
            pdfpage.draw(self.c, _M + indent, self.y, line, _STYLE[font], size)
            self.y -= size + 2.5
        self.y -= 2

    def table(self, columns: list[tuple[str, float]], rows: list[list[str]], size: float = 8.0,
              boxes: bool = False, row_height: float | None = None, titles: bool = True):
        """Columns: (title, width as a fraction of the text width). Cells wrap. ``boxes`` draws an empty
        tick box in the first column."""
        width = self.W - 2 * _M
        xs = [_M]
        for _, frac in columns:
            xs.append(xs[-1] + frac * width)
        c = self.c

        def header():
            self.ensure(size * 3 + 6)
            if not titles:
                return
            c.setFillColorRGB(0.90, 0.93, 0.93)
            c.rect(_M, self.y - 4, width, size + 7, stroke=0, fill=1)
            c.setFillColorRGB(*_INK)
            for (title, _), x in zip(columns, xs):
                pdfpage.draw(c, x + 2, self.y, title, "bold", size)
            self.y -= size + 8

        header()
        for row in rows:
            wrapped = [_wrap(cell, "Helvetica", size, (xs[i + 1] - xs[i]) - 5) or ("",)
                       for i, cell in enumerate(row)]
            height = max(len(w) for w in wrapped) * (size + 2) + 3
            if row_height:
                height = max(height, row_height)
            if self.y - height < 44:
                self.ensure(height + 40)
                header()
            top = self.y
            c.setFillColorRGB(*_INK)
            for i, lines in enumerate(wrapped):
                for k, line in enumerate(lines):
                    pdfpage.draw(c, xs[i] + 2 + (11 if boxes and i == 0 and k == 0 else 0), top - k * (size + 2),
                                 line, "regular", size)
            if boxes:
                c.setStrokeColorRGB(*_INK)
                c.setLineWidth(0.7)
                c.rect(xs[0] + 2, top - 1.5, 8, 8, stroke=1, fill=0)
            self.y = top - height
            c.setStrokeColorRGB(0.80, 0.82, 0.84)
            c.setLineWidth(0.4)
            c.line(_M, self.y + size - 1, self.W - _M, self.y + size - 1)
        self.y -= 4


def _first_page(w: _Writer, fmt: Formatter):
    """Draw the order's tables from the header band to the sign-off (they run on over pages as needed)."""
    order = w.order
    _header(w, fmt)
    _identification(w, fmt)
    _plane_tables(w, fmt)
    if order.field_record is not None:
        _field_runs(w, fmt, order.field_record)
    _operations(w, fmt)
    _predicted(w, fmt)
    _check_run(w, fmt)
    w.heading("Sign-off")
    w.table([("Role", 0.3), ("Name", 0.25), ("Signature", 0.27), ("Date", 0.18)],
            [["Operator (balancing)", "", "", ""], ["Machinist (drilling / welding)", "", "", ""],
             ["Inspector (release)", "", "", ""]], row_height=22)


def _header(w: _Writer, fmt: Formatter) -> None:
    """Draw the header band (title, order number), the predicted result and the angle convention."""
    order, c = w.order, w.c
    i = order.ident
    _W, _H = w.W, w.H
    c.setFillColorRGB(*_ACCENT)
    c.rect(_M, _H - _M - 30, _W - 2 * _M, 34, stroke=0, fill=1)
    c.setFillColorRGB(1, 1, 1)
    title = "BALANCING WORK ORDER"
    pdfpage.draw(c, _M + 10, _H - _M - 18, title, "bold", 15)
    room = _W - 2 * _M - 40 - pdfpage.width(title, "bold", 15)
    pdfpage.draw(c, _W - _M - 10, _H - _M - 18, pdfpage.shorten(i.number, "bold", 13, room), "bold", 13, "right")
    w.y = _H - _M - 48
    result = "within allowance in every plane" if order.passed else "NOT within allowance: see predicted residual"
    w.paragraph(f"Predicted result after the operations: {result}.", 9.5,
                _ACCENT if order.passed else _WARN, "Helvetica-Bold")
    w.paragraph(fmt.convention(), 8.5, _MUTED, "Helvetica-Oblique")


def _identification(w: _Writer, fmt: Formatter) -> None:
    """Draw the identification table (two pairs a row), the job text's SHA-256 and the notes."""
    order = w.order
    i = order.ident
    w.heading("Identification")
    pairs = [
        ("Rotor", i.rotor), ("Customer", i.customer), ("Drawing", i.drawing), ("Serial number", i.serial),
        ("Date", i.date), ("Rotor mass", fmt.rotor_mass(order.rotor_mass_kg)),
        ("Service speed (max.)", f"{order.service_speed_rpm:g} r/min"),
        ("Balancing speed", f"{order.balancing_speed_rpm:g} r/min"),
        ("Criterion", f"balance quality grade {order.grade} (ISO 21940-11)" if order.criterion == "iso"
         else f"{order.criterion.upper()} criterion"),
        ("Permissible residual, whole rotor", fmt.unbalance(order.u_per_total_g_mm)),
        ("Material", order.material), ("Measurement", order.measurement),
    ] + key_pairs(order, fmt)
    half = (len(pairs) + 1) // 2
    rows = [[a, b, *(pairs[k + half] if k + half < len(pairs) else ("", ""))] for k, (a, b) in
            enumerate(pairs[:half])]
    w.table([("", 0.17), ("", 0.33), ("", 0.19), ("", 0.31)], rows, titles=False)
    if i.input_sha256:  # the job text this order was built from (the shop register checks it)
        w.paragraph(f"Job text SHA-256: {i.input_sha256}", 7.5, _MUTED, "Helvetica")
    if i.notes:
        w.paragraph(f"Notes: {i.notes}", 8.5)


def _plane_tables(w: _Writer, fmt: Formatter) -> None:
    """Draw the tolerance of each correction plane, then its initial unbalance and correction."""
    order = w.order
    w.heading("Tolerance per correction plane")
    w.table([("Plane", 0.16), ("Position / radius", 0.17), ("Allowance", 0.14), ("Method", 0.21),
             ("Source", 0.32)],
            [[p.name, f"{fmt.length(p.position_mm)} / r {fmt.length(p.radius_mm)}",
              fmt.unbalance(p.tolerance.u_per_g_mm), p.tolerance.method, p.tolerance.source]
             for p in order.planes])

    w.heading("Initial unbalance and correction")
    w.table([("Plane", 0.16), ("Initial unbalance (heavy spot)", 0.36), ("Correction", 0.48)],
            [[p.name, f"{fmt.unbalance(p.initial_g_mm)} at {fmt.where(p.initial_deg)}",
              f"{p.correction_action} {fmt.unbalance(p.correction_g_mm)} at {fmt.where(p.correction_deg)} "
              f"({p.method}, {p.surface} surface)"] for p in order.planes])


def _operations(w: _Writer, fmt: Formatter) -> None:
    """Draw the operations to tick (trial masses first), with the caution that comes before them."""
    order = w.order
    w.heading("Operations: tick each when done")
    w.paragraph("Before any operation read the cautions at the end of this order: drive locked out while "
                "drilling or welding, every mass secured and guards closed before any run.", 8, _WARN,
                "Helvetica-Bold")
    if order.field_record is not None and order.field_record.trial_steps(fmt):
        w.table([("Trial masses, before the operations: tick each when done", 1.0)],
                [[step] for step in order.field_record.trial_steps(fmt)], boxes=True)
    if order.operations:
        rows = []
        for op in order.operations:
            extra = "; ".join(f"{k}: {v}" for k, v in op.details)
            if op.kind == "plate":
                extra = "; ".join(filter(None, (extra, PLATE_ORIENTATION)))
            rows.append([str(op.number), op.plane, f"{op.action.upper()}: {op.description}"
                         + (f" ({extra})" if extra else ""), fmt.mass(op.mass_g), fmt.unbalance(op.unbalance_g_mm),
                         fmt.where(op.angle_deg)])
        w.table([("No.", 0.06), ("Plane", 0.12), ("What", 0.40), ("Mass", 0.09), ("Effect", 0.11),
                 ("Angle", 0.22)], rows, boxes=True)
    else:
        w.paragraph("No operation: the initial unbalance is already within the allowance.")


def _predicted(w: _Writer, fmt: Formatter) -> None:
    """Draw the predicted residual of each plane after the operations, against its allowance."""
    order = w.order
    w.ensure(40 + 18 * (len(order.planes) + 1))  # the heading stays with its table, never alone at a page end
    w.heading("Predicted residual after the operations")
    w.table([("Plane", 0.16), ("Predicted residual", 0.42), ("Allowance", 0.2), ("Result", 0.22)],
            [[p.name, f"{fmt.unbalance(p.predicted_g_mm)} at {fmt.where(p.predicted_deg)}",
              fmt.unbalance(p.tolerance.u_per_g_mm), "PASS" if p.passed else "FAIL"] for p in order.planes])


def _check_run(w: _Writer, fmt: Formatter) -> None:
    """Draw the check-run table (allowance, limit, cells to fill in) and, for field runs, the sensor table."""
    order = w.order
    w.ensure(60 + 18 * len(order.planes) + 40 + 3 * 22 + 40)
    w.heading("Check run after correction")
    w.paragraph("Run only with every mass secured, guards closed and people clear of the plane of rotation. "
                f"Acceptance rule: {order.acceptance_rule}; the limit is the allowance less the measurement "
                "error allowance ΔU where one is given.", 8, _MUTED)
    w.table([("Plane", 0.14), ("Allowance", 0.14), ("Limit", 0.14), ("Measured residual", 0.18), ("Angle", 0.12),
             ("Pass / fail", 0.14), ("Initials", 0.14)],
            [[p.name, fmt.unbalance(p.tolerance.u_per_g_mm), fmt.unbalance(p.limit), "", "", "", ""]
             for p in order.planes],
            row_height=18)
    if order.field_record is not None:
        w.paragraph("Vibration per sensor: enter what the check run reads at each sensor, at the speed of the "
                    "runs, beside what this order predicts after its operations (the measured residual "
                    "unbalance above is for a balancing machine that gives it).", 8, _MUTED)
        w.table([("Sensor", 0.22), ("Original", 0.13), ("Predicted after the operations", 0.27),
                 ("Measured", 0.14), ("Phase", 0.10), ("Initials", 0.14)],
                [[*row, "", "", ""] for row in order.field_record.check_rows()], row_height=18)


def _field_runs(w: _Writer, fmt: Formatter, record) -> None:
    """The trial-mass runs as measured, the influence coefficients and how well they are conditioned."""
    w.heading("Trial-mass runs")
    w.table([("Run", 0.2), ("Trial masses on the rotor", 0.3), ("Readings per sensor", 0.5)],
            record.run_rows(fmt))
    w.heading("Influence coefficients (reading caused by 1 g at 0° in the plane)")
    w.table([("Sensor", 0.3), ("Plane", 0.2), ("Coefficient", 0.5)], record.coefficient_rows())
    w.paragraph(record.conditioning(), 8, _MUTED)
    for text in record.warnings:
        w.paragraph("- " + text, 8.5, _WARN)


def diagram_layout(plane: PlaneOrder, fmt: Formatter, order: WorkOrder, x0: float, top: float,
                   width: float) -> dia.Layout:
    """The geometry of one plane's polar diagram (see :func:`toolkit.export.diagram.plane_layout`), in a
    box ``width`` points wide whose top edge is at ``top``, measured with the PDF's fonts; its height is
    the layout's."""
    return dia.plane_layout(plane, fmt, order, x0, top, width, measure=pdfpage.width, wrap=pdfpage.wrap)


def _draw_layout(c, lay: dia.Layout) -> None:
    """Draw a diagram layout on the canvas."""
    for circle in lay.circles:
        colour = _ROLES[circle.role]
        c.setStrokeColorRGB(*colour)
        c.setFillColorRGB(*colour)
        c.setLineWidth(circle.width or 0.5)
        if circle.dash:
            c.setDash(*circle.dash)
        c.circle(circle.x, circle.y, circle.r, stroke=0 if circle.fill else 1, fill=1 if circle.fill else 0)
        c.setDash()
    for line in lay.lines:
        colour = _ROLES[line.role]
        pts = line.points
        if line.head:
            head = min(8.0 if line.kind == "arrow" else 6.0, math.dist(pts[0], pts[-1]) * 0.4)
            _polyline_arrow(c, pts, colour, line.width, head, line.filled)
        else:
            c.setStrokeColorRGB(*colour)
            c.setLineWidth(line.width)
            _polyline(c, pts)
    for m in lay.markers:
        _marker(c, m.kind, m.angle_deg, m.x, m.y)
    for kind, role, x, y in lay.legend_symbols:
        _legend_marker(c, kind, _ROLES[role], x, y)
    for t in lay.texts:
        c.setFillColorRGB(*_ROLES[t.role])
        for k, line in enumerate(t.lines):
            pdfpage.draw(c, t.x, t.y - k * t.size * dia.LINE, line, t.style, t.size, t.align)


def _polyline(c, pts) -> None:
    p = c.beginPath()
    p.moveTo(*pts[0])
    for pt in pts[1:]:
        p.lineTo(*pt)
    c.drawPath(p, stroke=1, fill=0)


def _polyline_arrow(c, pts, colour, width, head, filled) -> None:
    """A polyline whose last point carries an arrow head ``head`` points long."""
    c.setStrokeColorRGB(*colour)
    c.setFillColorRGB(*colour)
    c.setLineWidth(width)
    parts = dia.arrow_head(pts, head)
    if parts is None:
        return
    shaft, (tip, left, right) = parts
    _polyline(c, shaft)
    p = c.beginPath()
    p.moveTo(*tip)
    p.lineTo(*left)
    p.lineTo(*right)
    p.close()
    c.setLineWidth(0.8)
    c.drawPath(p, stroke=1, fill=1 if filled else 0)


def _marker(c, kind, angle_deg, x, y):
    """The shape of an operation on the rim: ring inside (hole), bar outside (plate), stacked bars
    (washers), diamond (mass)."""
    c.setStrokeColorRGB(*_INK)
    c.setLineWidth(1)
    if kind == "hole":
        c.setFillColorRGB(1, 1, 1)
        c.circle(x, y, 4.2, stroke=1, fill=1)
        c.setFillColorRGB(*_INK)
        c.circle(x, y, 1.6, stroke=0, fill=1)
        return
    c.saveState()
    c.translate(x, y)
    c.rotate(angle_deg)  # bars run along the rim
    c.setFillColorRGB(0.35, 0.37, 0.40)
    if kind == "plate":
        c.rect(-9, 0.5, 18, 5, stroke=1, fill=1)
    elif kind == "washers":
        for k in range(3):
            c.rect(-5, 0.8 + k * 3.2, 10, 2.2, stroke=1, fill=1)
    else:
        p = c.beginPath()
        p.moveTo(0, 1)
        p.lineTo(4, 5)
        p.lineTo(0, 9)
        p.lineTo(-4, 5)
        p.close()
        c.drawPath(p, stroke=1, fill=1)
    c.restoreState()


def _legend_marker(c, kind, colour, x, y):
    c.setStrokeColorRGB(*colour)
    c.setFillColorRGB(*colour)
    c.setLineWidth(1)
    if kind == "arrow":
        c.line(x - 10, y, x + 8, y)
        _polyline_arrow(c, [(x - 10, y), (x + 10, y)], colour, 1.6, 5, True)
    elif kind == "open":
        _polyline_arrow(c, [(x - 10, y), (x + 10, y)], colour, 0.9, 5, False)
    elif kind == "dash":
        c.setDash(3, 2)
        c.line(x - 10, y, x + 10, y)
        c.setDash()
    elif kind == "hole":
        c.setStrokeColorRGB(*_INK)
        c.setFillColorRGB(1, 1, 1)
        c.circle(x, y, 4.2, stroke=1, fill=1)
        c.setFillColorRGB(*_INK)
        c.circle(x, y, 1.6, stroke=0, fill=1)
    elif kind == "plate":
        c.setStrokeColorRGB(*_INK)
        c.setFillColorRGB(0.35, 0.37, 0.40)
        c.rect(x - 9, y - 2.5, 18, 5, stroke=1, fill=1)
    elif kind == "mass":
        p = c.beginPath()
        p.moveTo(x, y - 4)
        p.lineTo(x + 4, y)
        p.lineTo(x, y + 4)
        p.lineTo(x - 4, y)
        p.close()
        c.setStrokeColorRGB(*_INK)
        c.setFillColorRGB(0.35, 0.37, 0.40)
        c.drawPath(p, stroke=1, fill=1)
    elif kind == "washers":
        c.setStrokeColorRGB(*_INK)
        c.setFillColorRGB(0.35, 0.37, 0.40)
        for k in range(3):
            c.rect(x - 5, y - 4 + k * 3.2, 10, 2.2, stroke=1, fill=1)


def _diagrams(w: _Writer, fmt: Formatter):
    w.heading("Polar diagram per correction plane")
    width = w.W - 2 * _M
    for plane in w.order.planes:
        lay = diagram_layout(plane, fmt, w.order, _M, w.y, width)
        if w.y - lay.height < 44:
            w.doc.new_page()
            w.y = w.H - _M
            w.small_header()
            lay = diagram_layout(plane, fmt, w.order, _M, w.y, width)
        _draw_layout(w.c, lay)
        w.y -= lay.height + 12


def _given_by(s) -> str:
    if not s.given:
        return "default"
    return "command line" if s.value.endswith("from the command line") else "job file"  # the paper's entry


def _closing(w: _Writer):
    order = w.order
    if order.settings:
        w.heading("Values used")
        w.table([("Setting", 0.24), ("Value", 0.2), ("Mark", 0.07), ("Given by", 0.11), ("How to override", 0.38)],
                [[s.name, s.value, s.mark, _given_by(s), s.how] for s in order.settings])
        w.paragraph("Marks: S published standard; H handbook or secondary source; M from memory; D derived here; "
                    "CP common practice. Values marked M or CP can be overridden in the job file.", 7.5, _MUTED)
    if order.warnings:
        w.heading("Warnings")
        for text in order.warnings:
            w.paragraph("- " + text, 8.5, _WARN)
    w.heading("Cautions")
    for n, text in enumerate(order.cautions, start=1):
        w.paragraph(f"{n}. {text}", 8.5, _WARN)
    w.heading("Sources")
    for text in order.sources:
        w.paragraph("- " + text, 8)


def render(doc: pdfpage.Doc, order: WorkOrder) -> None:
    """Draw one work order into ``doc`` (its pages numbered on their own)."""
    fmt = Formatter(order.units, order.angle_reference, order.angle_sense)
    doc.start_order(f"Work order {order.ident.number}", f"Work order {order.ident.number}")
    w = _Writer(doc, order)
    _first_page(w, fmt)
    _diagrams(w, fmt)
    _closing(w)
    doc.end_order()


def render_order(order: WorkOrder) -> tuple[bytes, Pages]:
    """Draw one work order: its PDF file, and its pages (for :meth:`Document.add_pages`)."""
    buffer = BytesIO()
    with pdfpage.binary_streams():
        doc = pdfpage.Doc(buffer, order.paper_name)
        render(doc, order)
        doc.save()
    data = buffer.getvalue()
    return data, Pages(data)


def to_bytes(order: WorkOrder) -> bytes:
    """The PDF of one work order as bytes (deterministic for the same order)."""
    return render_order(order)[0]


class Document(pdfpage.Document):
    """Several work orders in one PDF, added one at a time (a batch's combined document; see
    :class:`toolkit.export.pdfpage.Document`).

    >>> doc = Document(); files = [doc.add(example_order(n)) for n in ("A", "B")]; doc.orders
    2
    >>> out = BytesIO(); doc.write_to(out); out.getvalue()[:8]
    b'%PDF-1.4'
    """

    def add(self, order: WorkOrder) -> bytes:
        """Add one order; returns its own PDF file (the same bytes as :func:`to_bytes`)."""
        data, pages = render_order(order)
        self.add_pages(pages)
        return data


def combined_bytes(orders) -> bytes:
    """One PDF holding several work orders one after the other, each with its own page numbers."""
    doc = Document()
    for order in orders:
        doc.add(order)
    return doc.finish()


def write_pdf(order: WorkOrder, path: str | Path, *, force: bool = False) -> Path:
    """Write the work order's PDF to ``path`` atomically (never over an existing file unless ``force``)."""
    from toolkit.fileio import write_atomic

    return write_atomic(path, to_bytes(order), force=force)


def write_combined(orders, path: str | Path, *, force: bool = False) -> Path:
    """Write several work orders into one PDF at ``path`` atomically."""
    from toolkit.fileio import write_atomic

    return write_atomic(path, combined_bytes(orders), force=force)
