"""The work order as a PDF to print and sign (reportlab, vector graphics only).

Layout (our own): a header band with the order number; identification; the tolerance, initial unbalance,
operations (each with a tick box), predicted residual and check-run tables; sign-off boxes; then one polar
diagram per correction plane; then the values used, warnings, cautions and sources. Every page carries the
order number and ``page N of M`` in its footer.

The polar diagram of a plane: the rotor outline at the correction radius; a tick and the name of the angle
reference at 0° (top); degree marks every 30° counting in the job's sense, with an arrow saying so and an
arrow for the direction of rotation; the allowance as a dashed circle (the unbalance scale is printed); the
initial unbalance as a solid arrow from the centre; each operation at its angle on the rim, with its own
shape (hole: a ring inside the rim; plate: a bar outside the rim; washers: a stack of short bars) and
labelled in words with its number, kind and action; the predicted residual as an open arrow.

On the page, angles increase counter-clockwise from the top, so the direction of rotation is drawn
clockwise when angles are counted against rotation, and counter-clockwise when they are counted with it.

Output is deterministic for the same work order (reportlab's invariant mode, fixed document dates).
"""

from __future__ import annotations

import functools
import math
import re
import unicodedata
from contextlib import contextmanager
from io import BytesIO
from pathlib import Path

from toolkit.workorder.model import Formatter, PlaneOrder, WorkOrder, example_order

__all__ = ["to_bytes", "render_order", "write_pdf", "render", "Document", "combined_bytes", "write_combined",
           "FONTS"]

_W, _H = 595.2756, 841.8898  # A4 in points
#: The fonts the work order uses (standard Type 1 fonts, no embedding), in the order of their internal
#: names /F1, /F2, /F3.
FONTS = ("Helvetica", "Helvetica-Bold", "Helvetica-Oblique")
_M = 42.0                    # margin
_INK = (0.10, 0.12, 0.14)
_ACCENT = (0.05, 0.36, 0.40)
_MUTED = (0.45, 0.47, 0.50)
_WARN = (0.62, 0.10, 0.08)


#: Letters and signs without a Latin-1 form or a Unicode decomposition, and what to print instead.
_FOLD = {"Ł": "L", "ł": "l", "Đ": "D", "đ": "d", "Ħ": "H", "ħ": "h", "Œ": "OE", "œ": "oe", "ı": "i",
         "≤": "<=", "≥": ">=", "Δ": "d", "–": "-", "—": "-", "’": "'", "‘": "'", "“": '"', "”": '"',
         "→": "->", "←": "<-", "…": "..."}


_CONTROLS = re.compile(r"[\x00-\x1f\x7f-\x9f]")


def _latin(text) -> str:
    """Text the standard PDF fonts can show on one line: control characters (tabs, line breaks) become
    spaces, characters outside Latin-1 are folded or replaced."""
    text = "" if text is None else _CONTROLS.sub(" ", str(text))
    try:
        text.encode("latin-1")
        return text
    except UnicodeEncodeError:
        pass
    out = []
    for ch in text:
        try:
            ch.encode("latin-1")
            out.append(ch)
        except UnicodeEncodeError:
            folded = unicodedata.normalize("NFKD", ch).encode("latin-1", "ignore").decode("latin-1")
            out.append(folded or _FOLD.get(ch, "?"))
    return "".join(out)


@contextmanager
def _binary_streams():
    """Write page streams Flate-compressed without the ASCII85 text layer while we draw and save.

    reportlab reads this switch (``rl_config.useA85``) when a stream is created and written; ASCII85
    only makes a PDF 7-bit clean and, in reportlab's pure-Python fallback, costs about a tenth of the
    rendering time. The previous value is restored afterwards.
    """
    from reportlab import rl_config

    previous = rl_config.useA85
    rl_config.useA85 = 0
    try:
        yield
    finally:
        rl_config.useA85 = previous


@functools.lru_cache(maxsize=8192)
def _wrap(text: str, font: str, size: float, width: float) -> tuple[str, ...]:
    """Lines of ``text`` that fit ``width`` points (cached: labels, cautions and sources repeat in every
    order of a batch)."""
    from reportlab.lib.utils import simpleSplit

    return tuple(simpleSplit(text, font, size, width))


class _Doc:
    """A canvas whose pages are held back until their order is complete, so that each footer can say
    ``page N of M`` for its own order; then they are finished and only the PDF stream keeps them."""

    def __init__(self, buffer):
        from reportlab.pdfgen.canvas import Canvas

        self.c = Canvas(buffer, pagesize=(_W, _H), invariant=1, pageCompression=1)
        self.c.setCreator("Counterpoise")
        for name in FONTS:  # the same internal font names (/F1, /F2, /F3) in every document
            self.c._doc.getInternalFontName(name)
        self.pending: list[dict] = []
        self.footer = ""
        self.streams: list[bytes] = []

    def start_order(self, footer: str, title: str):
        self.pending = []
        self.footer = footer
        self.c.setTitle(_latin(title))

    def new_page(self):
        self.pending.append(dict(self.c.__dict__))
        self.c._startPage()

    def end_order(self):
        from reportlab.pdfgen.canvas import Canvas

        self.new_page()
        c = self.c
        total = len(self.pending)
        for n, state in enumerate(self.pending, start=1):
            c.__dict__.update(state)
            c.setFont("Helvetica", 7.5)
            c.setFillColorRGB(*_MUTED)
            c.setStrokeColorRGB(*_MUTED)
            c.setLineWidth(0.4)
            c.line(_M, 30, _W - _M, 30)
            c.drawString(_M, 20, _latin(f"{self.footer}  |  page {n} of {total}"))
            c.drawRightString(_W - _M, 20, "Counterpoise work order")
            Canvas.showPage(c)
            self.streams.append(self._pack(c._doc.Pages.pages[-1]))
        self.pending = []

    @staticmethod
    def _pack(page) -> bytes:
        """Compress a finished page's content now rather than at save time.

        reportlab keeps every page's drawing commands as text until the document is saved; a combined
        document of thousands of orders would hold all of them. The stream is compressed with reportlab's
        own Flate filter and marked with its ``Filter`` entry, which reportlab honours by not filtering it
        again, so the bytes written are the same as when it compresses at save time.
        """
        from reportlab.pdfbase import pdfdoc

        if page.Contents or not page.stream:
            raise RuntimeError("a page was finished twice or is empty")  # a bug, never user input
        stream = pdfdoc.PDFStream()
        stream.content = pdfdoc.PDFZCompress.encode(page.stream)
        stream.dictionary["Filter"] = pdfdoc.PDFArray([pdfdoc.PDFName(pdfdoc.PDFZCompress.pdfname)])
        stream.__Comment__ = "page stream"
        page.Contents = stream
        page.stream = None
        return stream.content

    def save(self):
        self.c.save()


class _Writer:
    """Places text blocks and tables down the page, starting new pages when needed."""

    def __init__(self, doc: _Doc, order: WorkOrder):
        self.doc = doc
        self.c = doc.c
        self.order = order
        self.y = _H - _M

    # -- page handling
    def ensure(self, height: float):
        if self.y - height < 44:
            self.doc.new_page()
            self.y = _H - _M
            self.small_header()

    def small_header(self):
        c = self.c
        c.setFillColorRGB(*_ACCENT)
        c.rect(_M, self.y - 4, 4, 14, stroke=0, fill=1)
        c.setFont("Helvetica-Bold", 9)
        c.setFillColorRGB(*_INK)
        c.drawString(_M + 10, self.y, _latin(f"Work order {self.order.ident.number} (continued)"))
        self.y -= 22

    # -- primitives
    def heading(self, text: str):
        self.ensure(40)
        c = self.c
        self.y -= 6
        c.setFillColorRGB(*_ACCENT)
        c.rect(_M, self.y - 2, 18, 3, stroke=0, fill=1)
        c.setFont("Helvetica-Bold", 10.5)
        c.setFillColorRGB(*_INK)
        c.drawString(_M + 24, self.y - 3, _latin(text.upper()))
        self.y -= 17

    def paragraph(self, text: str, size: float = 8.5, color=_INK, font: str = "Helvetica", indent: float = 0):
        lines = _wrap(_latin(text), font, size, _W - 2 * _M - indent)
        for n, line in enumerate(lines):
            if n == 0 or self.y - size - 3 < 44:
                self.ensure(size + 3)
                self.c.setFont(font, size)
                self.c.setFillColorRGB(*color)
            self.c.drawString(_M + indent, self.y, line)
            self.y -= size + 2.5
        self.y -= 2

    def table(self, columns: list[tuple[str, float]], rows: list[list[str]], size: float = 8.0,
              boxes: bool = False, row_height: float | None = None, titles: bool = True):
        """Columns: (title, width as a fraction of the text width). Cells wrap. ``boxes`` draws an empty
        tick box in the first column."""
        width = _W - 2 * _M
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
            c.setFont("Helvetica-Bold", size)
            c.setFillColorRGB(*_INK)
            for (title, _), x in zip(columns, xs):
                c.drawString(x + 2, self.y, _latin(title))
            self.y -= size + 8

        header()
        for row in rows:
            wrapped = [_wrap(_latin(cell), "Helvetica", size, (xs[i + 1] - xs[i]) - 5) or ("",)
                       for i, cell in enumerate(row)]
            height = max(len(w) for w in wrapped) * (size + 2) + 3
            if row_height:
                height = max(height, row_height)
            if self.y - height < 44:
                self.ensure(height + 40)
                header()
            top = self.y
            c.setFont("Helvetica", size)
            c.setFillColorRGB(*_INK)
            for i, lines in enumerate(wrapped):
                for k, line in enumerate(lines):
                    c.drawString(xs[i] + 2 + (11 if boxes and i == 0 and k == 0 else 0), top - k * (size + 2), line)
            if boxes:
                c.setStrokeColorRGB(*_INK)
                c.setLineWidth(0.7)
                c.rect(xs[0] + 2, top - 1.5, 8, 8, stroke=1, fill=0)
            self.y = top - height
            c.setStrokeColorRGB(0.80, 0.82, 0.84)
            c.setLineWidth(0.4)
            c.line(_M, self.y + size - 1, _W - _M, self.y + size - 1)
        self.y -= 4


def _first_page(w: _Writer, fmt: Formatter):
    order, c = w.order, w.c
    i = order.ident
    # header band
    c.setFillColorRGB(*_ACCENT)
    c.rect(_M, _H - _M - 30, _W - 2 * _M, 34, stroke=0, fill=1)
    c.setFillColorRGB(1, 1, 1)
    c.setFont("Helvetica-Bold", 15)
    c.drawString(_M + 10, _H - _M - 18, "BALANCING WORK ORDER")
    c.setFont("Helvetica-Bold", 13)
    c.drawRightString(_W - _M - 10, _H - _M - 18, _latin(i.number))
    w.y = _H - _M - 48
    result = "within allowance in every plane" if order.passed else "NOT within allowance: see predicted residual"
    w.paragraph(f"Predicted result after the operations: {result}.", 9.5,
                _ACCENT if order.passed else _WARN, "Helvetica-Bold")
    w.paragraph(fmt.convention(), 8.5, _MUTED, "Helvetica-Oblique")

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
    ]
    half = (len(pairs) + 1) // 2
    rows = [[a, b, *(pairs[k + half] if k + half < len(pairs) else ("", ""))] for k, (a, b) in
            enumerate(pairs[:half])]
    w.table([("", 0.17), ("", 0.33), ("", 0.19), ("", 0.31)], rows, titles=False)
    if i.input_sha256:  # the job text this order was built from (the shop register checks it)
        w.paragraph(f"Job text SHA-256: {i.input_sha256}", 7.5, _MUTED, "Helvetica")
    if i.notes:
        w.paragraph(f"Notes: {i.notes}", 8.5)

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

    w.heading("Operations: tick each when done")
    w.paragraph("Before any operation read the cautions at the end of this order: drive locked out while "
                "drilling or welding, every mass secured and guards closed before any run.", 8, _WARN,
                "Helvetica-Bold")
    if order.operations:
        rows = []
        for op in order.operations:
            extra = "; ".join(f"{k}: {v}" for k, v in op.details)
            rows.append([str(op.number), op.plane, f"{op.action.upper()}: {op.description}"
                         + (f" ({extra})" if extra else ""), fmt.mass(op.mass_g), fmt.unbalance(op.unbalance_g_mm),
                         fmt.where(op.angle_deg)])
        w.table([("No.", 0.06), ("Plane", 0.12), ("What", 0.40), ("Mass", 0.09), ("Effect", 0.11),
                 ("Angle", 0.22)], rows, boxes=True)
    else:
        w.paragraph("No operation: the initial unbalance is already within the allowance.")

    w.heading("Predicted residual after the operations")
    w.table([("Plane", 0.16), ("Predicted residual", 0.42), ("Allowance", 0.2), ("Result", 0.22)],
            [[p.name, f"{fmt.unbalance(p.predicted_g_mm)} at {fmt.where(p.predicted_deg)}",
              fmt.unbalance(p.tolerance.u_per_g_mm), "PASS" if p.passed else "FAIL"] for p in order.planes])

    w.ensure(60 + 18 * len(order.planes) + 40 + 3 * 22 + 40)
    w.heading("Check run after correction")
    w.paragraph("Run only with every mass secured, guards closed and people clear of the plane of rotation. "
                "Pass: measured residual at most the allowance.", 8, _MUTED)
    w.table([("Plane", 0.16), ("Allowance", 0.18), ("Measured residual", 0.22), ("Angle", 0.16),
             ("Pass / fail", 0.14), ("Initials", 0.14)],
            [[p.name, fmt.unbalance(p.tolerance.u_per_g_mm), "", "", "", ""] for p in order.planes],
            row_height=18)

    w.heading("Sign-off")
    w.table([("Role", 0.3), ("Name", 0.25), ("Signature", 0.27), ("Date", 0.18)],
            [["Operator (balancing)", "", "", ""], ["Machinist (drilling / welding)", "", "", ""],
             ["Inspector (release)", "", "", ""]], row_height=22)


def _diagram(c, plane: PlaneOrder, fmt: Formatter, order: WorkOrder, x0: float, y0: float, width: float,
             size: float):
    """One polar diagram in the box with lower-left corner (x0, y0), ``width`` wide and ``size`` high; the
    circle sits in the left square, the legend to its right."""
    cx, cy = x0 + size * 0.5 + 14, y0 + size * 0.48  # room on the left for operation labels
    rim = size * 0.30

    def at(angle_deg: float, radius: float) -> tuple[float, float]:
        a = math.radians(angle_deg)
        return cx - radius * math.sin(a), cy + radius * math.cos(a)

    c.setFillColorRGB(*_INK)
    c.setFont("Helvetica-Bold", 10)
    c.drawString(x0, y0 + size - 4, _latin(f"Plane {plane.name}: {plane.method}, {plane.surface} surface, "
                                           f"radius {fmt.length(plane.radius_mm)}"))
    # rotor outline and degree marks
    c.setStrokeColorRGB(*_INK)
    c.setLineWidth(1.2)
    c.circle(cx, cy, rim, stroke=1, fill=0)
    c.setLineWidth(0.5)
    c.setFont("Helvetica", 6.5)
    c.setFillColorRGB(*_MUTED)
    for deg in range(0, 360, 30):
        xa, ya = at(deg, rim)
        xb, yb = at(deg, rim - 5)
        c.line(xa, ya, xb, yb)
        if deg:
            xt, yt = at(deg, rim - 12)
            c.drawCentredString(xt, yt - 2, f"{deg}°")
    # reference mark at 0
    c.setStrokeColorRGB(*_ACCENT)
    c.setLineWidth(2)
    xa, ya = at(0, rim - 6)
    xb, yb = at(0, rim + 10)
    c.line(xa, ya, xb, yb)
    c.setFillColorRGB(*_ACCENT)
    c.setFont("Helvetica-Bold", 7.5)
    c.drawRightString(cx - 4, yb + 2, _latin(f"0° = {order.angle_reference}"))  # left of the tick: an
    # operation at 0° is labelled to its right
    # angle sense arrow (angles grow counter-clockwise on the page)
    _arc_arrow(c, cx, cy, rim + 26, 305, 340, ccw=True, color=_ACCENT)
    tx, ty = at(300, rim + 30)
    c.setFont("Helvetica", 7)
    c.drawString(tx + 2, ty - 8, "angles grow this way")
    # direction of rotation
    rot_ccw = order.angle_sense == "with rotation"
    _arc_arrow(c, cx, cy, rim + 26, 205, 240, ccw=rot_ccw, color=_MUTED)
    tx, ty = at(240, rim + 30)
    c.setFillColorRGB(*_MUTED)
    c.drawString(tx + 2, ty - 8, "direction of rotation")
    # scale: the largest vector reaches 85 % of the rim
    top = max(plane.initial_g_mm, plane.tolerance.u_per_g_mm, plane.predicted_g_mm, 1e-12)
    scale = rim * 0.85 / top
    # allowance circle
    c.setStrokeColorRGB(*_ACCENT)
    c.setLineWidth(0.9)
    c.setDash(3, 2)
    c.circle(cx, cy, plane.tolerance.u_per_g_mm * scale, stroke=1, fill=0)
    c.setDash()
    # initial unbalance: solid arrow
    _arrow(c, cx, cy, *at(plane.initial_deg, plane.initial_g_mm * scale), color=_WARN, width=1.8, filled=True)
    # predicted residual: open arrow
    if plane.predicted_g_mm * scale > 2:
        _arrow(c, cx, cy, *at(plane.predicted_deg, plane.predicted_g_mm * scale), color=_INK, width=0.9,
               filled=False)
    else:
        c.setFillColorRGB(*_INK)
        c.circle(cx, cy, 1.5, stroke=0, fill=1)
    # operations on the rim
    for op in plane.operations:
        _marker(c, op.kind, op.angle_deg, at, rim)
        lx, ly = at(op.angle_deg, rim + 20)
        lines = [_latin(f"{op.number}: {_kind_word(op.kind)},"), _latin(f"{op.action} {fmt.mass(op.mass_g)}")]
        c.setFillColorRGB(*_INK)
        c.setFont("Helvetica-Bold", 7)
        widest = max(c.stringWidth(line, "Helvetica-Bold", 7) for line in lines)
        for k, line in enumerate(lines):
            if lx >= cx:
                c.drawString(min(lx + 2, x0 + width - widest), ly - 2 - 8 * k, line)
            else:  # right-aligned to the left of the rim, never past the left margin
                c.drawRightString(max(lx - 2, x0 + widest), ly - 2 - 8 * k, line)
    # legend, in words
    lx = x0 + size + 36
    ly = y0 + size * 0.82
    c.setFont("Helvetica", 7)
    entries = [
        ("arrow", _WARN, f"initial unbalance {fmt.unbalance(plane.initial_g_mm)} at {fmt.angle(plane.initial_deg)}"),
        ("open", _INK, f"predicted residual {fmt.unbalance(plane.predicted_g_mm)} at "
                       f"{fmt.angle(plane.predicted_deg)}"),
        ("dash", _ACCENT, f"allowance circle {fmt.unbalance(plane.tolerance.u_per_g_mm)}"),
    ]
    shapes = {"hole": "ring inside rim: drilled hole (remove)", "plate": "bar outside rim: weld-on plate (add)",
              "washers": "stacked bars: washers (add)", "mass": "diamond: added mass"}
    for kind in sorted({op.kind for op in plane.operations}):
        entries.append((kind, _INK, shapes[kind]))
    for kind, color, text in entries:
        c.setStrokeColorRGB(*color)
        c.setFillColorRGB(*color)
        c.setLineWidth(1)
        if kind == "arrow":
            c.line(lx - 30, ly + 2, lx - 10, ly + 2)
        elif kind == "open":
            c.setDash(1, 0)
            c.line(lx - 30, ly + 2, lx - 10, ly + 2)
            c.circle(lx - 10, ly + 2, 1.5, stroke=1, fill=0)
        elif kind == "dash":
            c.setDash(3, 2)
            c.line(lx - 30, ly + 2, lx - 10, ly + 2)
            c.setDash()
        else:
            _legend_marker(c, kind, lx - 20, ly + 2)
        c.setDash()
        c.setFillColorRGB(*_INK)
        lines = _wrap(_latin(text), "Helvetica", 7, x0 + width - lx)
        for k, line in enumerate(lines):
            c.drawString(lx - 4, ly - k * 8.5, line)
        ly -= 8.5 * len(lines) + 6
    c.setFillColorRGB(*_MUTED)
    c.setFont("Helvetica", 6.5)
    c.drawString(x0, y0 + 4, _latin(f"Scale: the rotor outline stands for {fmt.unbalance(rim / scale)}. "
                                    f"{fmt.convention()}"))


def _kind_word(kind: str) -> str:
    return {"hole": "drilled hole", "plate": "weld-on plate", "washers": "washers", "mass": "mass"}[kind]


def _arrow(c, x0, y0, x1, y1, color, width, filled):
    c.setStrokeColorRGB(*color)
    c.setFillColorRGB(*color)
    c.setLineWidth(width)
    length = math.hypot(x1 - x0, y1 - y0)
    if length < 1e-9:
        return
    ux, uy = (x1 - x0) / length, (y1 - y0) / length
    head = min(8.0, length * 0.4)
    bx, by = x1 - ux * head, y1 - uy * head
    c.line(x0, y0, bx, by)
    p = c.beginPath()
    p.moveTo(x1, y1)
    p.lineTo(bx - uy * head * 0.45, by + ux * head * 0.45)
    p.lineTo(bx + uy * head * 0.45, by - ux * head * 0.45)
    p.close()
    c.setLineWidth(0.8)
    c.drawPath(p, stroke=1, fill=1 if filled else 0)


def _arc_arrow(c, cx, cy, r, start, end, ccw, color):
    """An arc on the page from ``start`` to ``end`` (diagram degrees) with a head showing the sense."""
    c.setStrokeColorRGB(*color)
    c.setFillColorRGB(*color)
    c.setLineWidth(0.9)
    steps = 16
    pts = []
    for k in range(steps + 1):
        a = math.radians(start + (end - start) * k / steps)
        pts.append((cx - r * math.sin(a), cy + r * math.cos(a)))
    p = c.beginPath()
    p.moveTo(*pts[0])
    for pt in pts[1:]:
        p.lineTo(*pt)
    c.drawPath(p, stroke=1, fill=0)
    tip, prev = (pts[-1], pts[-2]) if ccw else (pts[0], pts[1])
    _arrow(c, prev[0], prev[1], tip[0], tip[1], color, 0.9, True)


def _marker(c, kind, angle_deg, at, rim):
    """The shape of an operation on the rim: ring inside (hole), bar outside (plate), stacked bars
    (washers), diamond (mass)."""
    a = math.radians(angle_deg)
    c.setStrokeColorRGB(*_INK)
    c.setLineWidth(1)
    if kind == "hole":
        x, y = at(angle_deg, rim - 9)
        c.setFillColorRGB(1, 1, 1)
        c.circle(x, y, 4.2, stroke=1, fill=1)
        c.setFillColorRGB(*_INK)
        c.circle(x, y, 1.6, stroke=0, fill=1)
        return
    c.saveState()
    x, y = at(angle_deg, rim)
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


def _legend_marker(c, kind, x, y):
    c.setStrokeColorRGB(*_INK)
    c.setLineWidth(1)
    if kind == "hole":
        c.setFillColorRGB(1, 1, 1)
        c.circle(x, y, 4.2, stroke=1, fill=1)
        c.setFillColorRGB(*_INK)
        c.circle(x, y, 1.6, stroke=0, fill=1)
    elif kind == "plate":
        c.setFillColorRGB(0.35, 0.37, 0.40)
        c.rect(x - 9, y - 2.5, 18, 5, stroke=1, fill=1)
    elif kind == "mass":
        p = c.beginPath()
        p.moveTo(x, y - 4)
        p.lineTo(x + 4, y)
        p.lineTo(x, y + 4)
        p.lineTo(x - 4, y)
        p.close()
        c.setFillColorRGB(0.35, 0.37, 0.40)
        c.drawPath(p, stroke=1, fill=1)
    else:
        c.setFillColorRGB(0.35, 0.37, 0.40)
        for k in range(3):
            c.rect(x - 5, y - 4 + k * 3.2, 10, 2.2, stroke=1, fill=1)


def _diagrams(w: _Writer, fmt: Formatter):
    w.heading("Polar diagram per correction plane")
    size = 330.0
    for plane in w.order.planes:
        if w.y - size < 44:
            w.doc.new_page()
            w.y = _H - _M
            w.small_header()
        _diagram(w.c, plane, fmt, w.order, _M, w.y - size, _W - 2 * _M, size)
        w.y -= size + 12


def _closing(w: _Writer):
    order = w.order
    if order.settings:
        w.heading("Values used")
        w.table([("Setting", 0.24), ("Value", 0.2), ("Mark", 0.07), ("Given by", 0.11), ("How to override", 0.38)],
                [[s.name, s.value, s.mark, "job file" if s.given else "default", s.how] for s in order.settings])
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


def render(doc: _Doc, order: WorkOrder) -> None:
    """Draw one work order into ``doc`` (its pages numbered on their own)."""
    fmt = Formatter(order.units, order.angle_reference, order.angle_sense)
    doc.start_order(f"Work order {order.ident.number}", f"Work order {order.ident.number}")
    w = _Writer(doc, order)
    _first_page(w, fmt)
    _diagrams(w, fmt)
    _closing(w)
    doc.end_order()


def render_order(order: WorkOrder) -> tuple[bytes, tuple[bytes, ...]]:
    """Draw one work order: its PDF file, and its pages' compressed content streams (for
    :class:`Document`)."""
    buffer = BytesIO()
    with _binary_streams():
        doc = _Doc(buffer)
        render(doc, order)
        mapping = dict(doc.c._doc.fontMapping)
        doc.save()
    expected = {name: f"/F{n}" for n, name in enumerate(FONTS, start=1)}
    if mapping != expected:  # a font added to the layout must be added to FONTS as well
        raise RuntimeError(f"unexpected fonts in the work order: {mapping}")
    return buffer.getvalue(), tuple(doc.streams)


def to_bytes(order: WorkOrder) -> bytes:
    """The PDF of one work order as bytes (deterministic for the same order)."""
    return render_order(order)[0]


class Document:
    """Several work orders in one PDF, added one at a time (a batch's combined document).

    The pages go to a temporary file as they come (their content already compressed), so memory does
    not grow with the number of orders; :meth:`write_to` then writes the file: header, the pages, the page
    tree, the three standard fonts, the cross-reference table and the trailer (PDF 1.4, ISO 32000-1
    structure). Each order keeps the page numbers of its own file.

    >>> doc = Document(); files = [doc.add(example_order(n)) for n in ("A", "B")]; doc.orders
    2
    >>> out = BytesIO(); doc.write_to(out); out.getvalue()[:8]
    b'%PDF-1.4'
    """

    _FIXED = 6  # objects 1..6: catalog, page tree, resources, three fonts; info is the last object

    def __init__(self):
        import tempfile

        self._body = tempfile.TemporaryFile()
        self._offsets: list[int] = []   # of objects 7, 8, ... within the body
        self._pages: list[int] = []     # object numbers of the page objects
        self.orders = 0

    def _object(self, data: bytes) -> int:
        number = self._FIXED + len(self._offsets) + 1
        self._offsets.append(self._body.tell())
        self._body.write(b"%d 0 obj\n" % number + data + b"\nendobj\n")
        return number

    def add(self, order: WorkOrder) -> bytes:
        """Add one order; returns its own PDF file (the same bytes as :func:`to_bytes`)."""
        data, streams = render_order(order)
        self.add_pages(streams)
        return data

    def add_pages(self, streams) -> None:
        """Add the compressed page streams of one order (from :func:`render_order`)."""
        for content in streams:
            stream = self._object(b"<< /Filter /FlateDecode /Length %d >>\nstream\n" % len(content) + content
                                  + b"\nendstream")
            page = self._object(b"<< /Type /Page /Parent 2 0 R /MediaBox [0 0 %s %s] /Resources 3 0 R "
                                b"/Contents %d 0 R >>" % (_num(_W), _num(_H), stream))
            self._pages.append(page)
        self.orders += 1

    def write_to(self, handle) -> None:
        """Write the finished PDF to a binary file object (call once)."""
        header = b"%PDF-1.4\n%\xe2\xe3\xcf\xd3\n"
        handle.write(header)
        offsets = [len(header) + o for o in self._offsets]
        self._body.seek(0)
        while True:
            chunk = self._body.read(1 << 20)
            if not chunk:
                break
            handle.write(chunk)
        position = len(header) + self._body.tell()
        fixed = [
            b"<< /Type /Catalog /Pages 2 0 R >>",
            b"<< /Type /Pages /Count %d /Kids [%s] >>" % (len(self._pages),
                                                          b" ".join(b"%d 0 R" % p for p in self._pages)),
            b"<< /Font << /F1 4 0 R /F2 5 0 R /F3 6 0 R >> /ProcSet [/PDF /Text] >>",
            *(b"<< /Type /Font /Subtype /Type1 /BaseFont /%s /Name /F%d /Encoding /WinAnsiEncoding >>"
              % (name.encode("ascii"), n) for n, name in enumerate(FONTS, start=1)),
        ]
        fixed_offsets = []
        for number, data in enumerate(fixed, start=1):
            fixed_offsets.append(position)
            block = b"%d 0 obj\n" % number + data + b"\nendobj\n"
            handle.write(block)
            position += len(block)
        info_number = self._FIXED + len(self._offsets) + 1
        info = (b"%d 0 obj\n<< /Title (Work orders) /Creator (Counterpoise) /Producer (Counterpoise) >>\nendobj\n"
                % info_number)
        handle.write(info)
        all_offsets = fixed_offsets + offsets + [position]
        position += len(info)
        xref = [b"xref\n0 %d\n0000000000 65535 f \n" % (info_number + 1)]
        xref += [b"%010d 00000 n \n" % o for o in all_offsets]
        handle.write(b"".join(xref))
        handle.write(b"trailer\n<< /Size %d /Root 1 0 R /Info %d 0 R >>\nstartxref\n%d\n%%%%EOF\n"
                     % (info_number + 1, info_number, position))
        self._body.close()

    def finish(self) -> bytes:
        """The finished PDF as bytes (small documents; a batch uses :meth:`write_to`)."""
        out = BytesIO()
        self.write_to(out)
        return out.getvalue()

    def close(self) -> None:
        """Drop the temporary pages (when a batch stops early)."""
        self._body.close()


def _num(x: float) -> bytes:
    return (b"%.4f" % x).rstrip(b"0").rstrip(b".")


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
