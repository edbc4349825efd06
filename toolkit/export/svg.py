"""Diagrams as SVG for the browser face: a work order's polar diagram per correction plane, a live polar
diagram of readings and corrections before an order exists, and the rotor seen from the side, to scale.

The polar diagrams draw the same :class:`toolkit.export.diagram.Layout` that the PDF draws, so the
browser shows the same picture with the same guarantees (no text box overlaps another, an arc, a circle, a
shape, an arrow or a leader; nothing leaves the picture). The side view is laid out here with the same kind
of boxes (:func:`side_view_layout`), so that tests can check it geometrically too.

Text widths are measured with the PDF's font metrics (DejaVu Sans Condensed, with Droid Sans Fallback for
CJK; :func:`toolkit.export.pdfpage.width`). The SVG names that font (:data:`FONT_FAMILY`); the web app
serves the files (:func:`font_files`, :func:`font_face_css`). Every text line also carries its measured
width as ``textLength``, so that a browser falling back to another font still fits each line into the box
the layout reserved for it. A character neither font has is shown as U+FFFD, as in the PDF.

Coordinates: the layouts use page points with y up; the SVG uses the same points with y down, measured
from the layout's top-left corner (``x - layout.x0``, ``layout.top - y``).

User text (titles, references, labels, plane names) is escaped: ``<script>`` or ``&`` prints as text.
Colours come from classes named after each item's role (``cp-ink``, ``cp-reading``, ...), defined in the
SVG's own style sheet.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import Callable
from xml.sax.saxutils import escape

from toolkit.errors import BadInput
from toolkit.export import diagram as dia
from toolkit.export import pdfpage

__all__ = ["plane_svg", "vectors_svg", "side_view_svg", "side_view_layout", "layout_svg", "font_files",
           "font_face_css", "vectors_layout", "FONT_FAMILY", "FALLBACK_FAMILY", "ROLES", "VECTOR_ROLES",
           "SideView"]

#: The font family the SVG names (the web app declares it with :func:`font_face_css`).
FONT_FAMILY = "Counterpoise Sans"
#: The family of the CJK fallback font.
FALLBACK_FAMILY = "Counterpoise Sans CJK"
_FAMILIES = (f"'{FONT_FAMILY}', '{FALLBACK_FAMILY}', 'DejaVu Sans Condensed', 'DejaVu Sans', 'Liberation Sans "
             "Narrow', sans-serif")

#: Colour of each role (our own palette; the first four are the PDF's).
ROLES = {
    "ink": "#1a1f24", "accent": "#0d5c66", "muted": "#737880", "warn": "#9e1a14",
    "reading": "#9e1a14", "trial": "#a8620a", "correction": "#0d5c66", "residual": "#1a1f24",
    "allowance": "#4f6b1f", "body": "#d9dde1",
}
#: The roles a vector of :func:`vectors_svg` may have.
VECTOR_ROLES = ("reading", "trial", "correction", "residual", "allowance")
_SENSES = ("with rotation", "against rotation")
_QUOTE = {'"': "&quot;"}
_PAD = 4.0  # around the layout, for line widths


def font_files() -> dict[str, Path]:
    """The font files the SVG text is measured with, by style (``regular``, ``bold``, ``italic`` and
    ``fallback`` for CJK), for the web app to serve. Their licences lie beside them.

    >>> sorted(font_files())
    ['bold', 'fallback', 'italic', 'regular']
    """
    folder = Path(pdfpage.__file__).with_name("fonts")
    return {style: folder / filename for style, (_name, filename) in pdfpage.FONT_FILES.items()}


def font_face_css(url: Callable[[str], str]) -> str:
    """``@font-face`` rules that declare :data:`FONT_FAMILY` and :data:`FALLBACK_FAMILY` from the files of
    :func:`font_files`; ``url`` turns a file name into the URL the web app serves it at.

    >>> "font-weight: 700" in font_face_css(lambda name: "/fonts/" + name)
    True
    """
    faces = {"regular": (FONT_FAMILY, "400", "normal"), "bold": (FONT_FAMILY, "700", "normal"),
             "italic": (FONT_FAMILY, "400", "italic"), "fallback": (FALLBACK_FAMILY, "400", "normal")}
    rules = []
    for style, path in font_files().items():
        family, weight, slant = faces[style]
        rules.append(f"@font-face {{ font-family: '{family}'; src: url('{url(path.name)}') format('truetype'); "
                     f"font-weight: {weight}; font-style: {slant}; }}")
    return "\n".join(rules)


# -- drawing a layout -------------------------------------------------------------------------------------

def _n(v: float) -> str:
    """A coordinate as SVG text (two decimals, no trailing zeros)."""
    text = f"{v:.2f}"
    if text[-1] != "0":  # the common case (a last digit other than zero): nothing to strip
        return text
    text = text.rstrip("0").rstrip(".")
    return "0" if text in ("-0", "") else text


def _style_sheet() -> str:
    """The SVG's colours and font. Every rule is scoped to ``svg.cp-diagram``: a style element inside an SVG
    that sits in an HTML page applies to the whole page."""
    d = "svg.cp-diagram"
    rules = [f"{d} text {{ font-family: {_FAMILIES}; }}", f"{d} .cp-stroke {{ fill: none; }}",
             f"{d} .cp-hole {{ fill: #ffffff; stroke: #1a1f24; }}",
             f"{d} .cp-shape {{ fill: #595e66; stroke: #1a1f24; }}"]
    for role, colour in ROLES.items():
        rules.append(f"{d} text.cp-{role}, {d} .cp-fill.cp-{role} {{ fill: {colour}; }}")
        rules.append(f"{d} .cp-stroke.cp-{role}, {d} .cp-fill.cp-{role} {{ stroke: {colour}; }}")
    rules.append(f"{d} .cp-fill.cp-body {{ stroke: #1a1f24; }}")
    return "<style>" + " ".join(rules) + "</style>"


class _Canvas:
    """Collects SVG elements in layout coordinates (page points, y up) and writes them y down."""

    def __init__(self, x0: float, top: float):
        self.x0, self.top = x0, top
        self.parts: list[str] = []

    def p(self, x: float, y: float) -> str:
        return f"{_n(x - self.x0)},{_n(self.top - y)}"

    def polyline(self, pts, role: str, width: float, dash=()) -> None:
        extra = f' stroke-dasharray="{" ".join(_n(d) for d in dash)}"' if dash else ""
        self.parts.append(f'<polyline class="cp-stroke cp-{role}" stroke-width="{_n(width)}"{extra} '
                          f'points="{" ".join(self.p(x, y) for x, y in pts)}"/>')

    def polygon(self, pts, role: str, width: float, filled: bool) -> None:
        cls = f"cp-fill cp-{role}" if filled else f"cp-stroke cp-{role}"
        self.parts.append(f'<polygon class="{cls}" stroke-width="{_n(width)}" '
                          f'points="{" ".join(self.p(x, y) for x, y in pts)}"/>')

    def arrow(self, pts, role: str, width: float, head: float, filled: bool) -> None:
        """A polyline whose last point carries an arrow head ``head`` points long (as the PDF draws it)."""
        parts = dia.arrow_head(pts, head)
        if parts is not None:
            self.polyline(parts[0], role, width)
            self.polygon(parts[1], role, 0.8, filled)

    def circle(self, x: float, y: float, r: float, cls: str, width: float, dash=()) -> None:
        """A circle of classes ``cls`` (``cp-stroke cp-ROLE`` outlined, ``cp-fill cp-ROLE`` filled,
        ``cp-hole`` white with an ink outline)."""
        extra = f' stroke-dasharray="{" ".join(_n(d) for d in dash)}"' if dash else ""
        self.parts.append(f'<circle class="{cls}" stroke-width="{_n(width)}"{extra} cx="{_n(x - self.x0)}" '
                          f'cy="{_n(self.top - y)}" r="{_n(r)}"/>')

    def text(self, t: dia.Text) -> None:
        """Each line of a text item as one ``<text>``, at the left edge the PDF computes for it."""
        weight = ' font-weight="700"' if t.style == "bold" else ""
        slant = ' font-style="italic"' if t.style == "italic" else ""
        for k, line in enumerate(t.lines):
            line = pdfpage.clean(line)
            if not line:
                continue
            w = pdfpage.width(line, t.style, t.size)
            x = t.x - w if t.align == "right" else t.x - w / 2 if t.align == "centre" else t.x
            y = t.y - k * t.size * dia.LINE
            shown = "".join(chars for _font, chars in pdfpage.runs(line, t.style))
            self.parts.append(
                f'<text class="cp-{t.role}" data-kind="{t.kind}" x="{_n(x - self.x0)}" y="{_n(self.top - y)}" '
                f'font-size="{_n(t.size)}"{weight}{slant} textLength="{_n(w)}" lengthAdjust="spacingAndGlyphs" '
                f'xml:space="preserve">{escape(shown)}</text>')

    def marker(self, kind: str, x: float, y: float, angle_deg: float) -> None:
        """An operation's shape on the rim, as the PDF draws it (bars turned to run along the rim)."""
        if kind == "hole":
            self.circle(x, y, 4.2, "cp-hole", 1)
            self.circle(x, y, 1.6, "cp-fill cp-ink", 0)
            return
        g = f'<g transform="translate({self.p(x, y).replace(",", " ")}) rotate({_n(-angle_deg)})">'
        if kind == "plate":
            shapes = ['<rect class="cp-shape" stroke-width="1" x="-9" y="-5.5" width="18" height="5"/>']
        elif kind == "washers":
            shapes = [f'<rect class="cp-shape" stroke-width="1" x="-5" y="{_n(-(3.0 + k * 3.2))}" width="10" '
                      f'height="2.2"/>' for k in range(3)]
        else:
            shapes = ['<polygon class="cp-shape" stroke-width="1" points="0,-1 4,-5 0,-9 -4,-5"/>']
        self.parts.append(g + "".join(shapes) + "</g>")

    def legend_symbol(self, kind: str, role: str, x: float, y: float) -> None:
        """The symbol in front of a legend line, as the PDF draws it."""
        if kind == "arrow":
            self.polyline([(x - 10, y), (x + 8, y)], role, 1)
            self.arrow([(x - 10, y), (x + 10, y)], role, 1.6, 5, True)
        elif kind == "open":
            self.arrow([(x - 10, y), (x + 10, y)], role, 0.9, 5, False)
        elif kind == "dash":
            self.polyline([(x - 10, y), (x + 10, y)], role, 1, (3, 2))
        elif kind == "hole":
            self.marker("hole", x, y, 0)
        elif kind == "plate":
            self.parts.append(f'<rect class="cp-shape" stroke-width="1" x="{_n(x - 9 - self.x0)}" '
                              f'y="{_n(self.top - y - 2.5)}" width="18" height="5"/>')
        elif kind == "mass":
            self.parts.append('<polygon class="cp-shape" stroke-width="1" points="'
                              + " ".join(self.p(px, py) for px, py in ((x, y - 4), (x + 4, y), (x, y + 4),
                                                                      (x - 4, y))) + '"/>')
        elif kind == "washers":
            for k in range(3):
                self.parts.append(f'<rect class="cp-shape" stroke-width="1" x="{_n(x - 5 - self.x0)}" '
                                  f'y="{_n(self.top - (y - 4 + k * 3.2 + 2.2))}" width="10" height="2.2"/>')


def _document(canvas: _Canvas, width: float, height: float, title: str, label: str) -> str:
    vb = f"{_n(-_PAD)} {_n(-_PAD)} {_n(width + 2 * _PAD)} {_n(height + 2 * _PAD)}"
    return (f'<svg xmlns="http://www.w3.org/2000/svg" class="cp-diagram" viewBox="{vb}" width="{_n(width + 2 * _PAD)}" '
            f'height="{_n(height + 2 * _PAD)}" role="img" aria-label="{escape(pdfpage.clean(label), _QUOTE)}">'
            f"<title>{escape(pdfpage.clean(title))}</title>{_style_sheet()}"
            + "".join(canvas.parts) + "</svg>")


def _draw(canvas: _Canvas, lay: dia.Layout) -> None:
    for circle in lay.circles:
        if circle.fill:
            canvas.circle(circle.x, circle.y, circle.r, f"cp-fill cp-{circle.role}", 0)
        else:
            canvas.circle(circle.x, circle.y, circle.r, f"cp-stroke cp-{circle.role}", circle.width or 0.5,
                          circle.dash)
    for line in lay.lines:
        if line.head:
            head = min(8.0 if line.kind == "arrow" else 6.0, math.dist(line.points[0], line.points[-1]) * 0.4)
            canvas.arrow(line.points, line.role, line.width, head, line.filled)
        else:
            canvas.polyline(line.points, line.role, line.width, line.dash)
    for m in lay.markers:
        canvas.marker(m.kind, m.x, m.y, m.angle_deg)
    for kind, role, x, y in lay.legend_symbols:
        canvas.legend_symbol(kind, role, x, y)
    for t in lay.texts:
        canvas.text(t)


def layout_svg(lay: dia.Layout, title: str) -> str:
    """A polar-diagram :class:`~toolkit.export.diagram.Layout` as a complete ``<svg>`` element whose
    viewBox holds the layout (plus a 4-point border for line widths); ``title`` is its ``<title>``."""
    canvas = _Canvas(lay.x0, lay.top)
    if isinstance(lay, SideView):
        for x0, y0, x1, y1, role in lay.rects:
            canvas.polygon([(x0, y0), (x1, y0), (x1, y1), (x0, y1)], role, 0.8, True)
        for pts, role in lay.polygons:
            canvas.polygon(pts, role, 0.8, True)
        for x, y, r in lay.centres:
            _centre_symbol(canvas, x, y, r)
    _draw(canvas, lay)
    return _document(canvas, lay.width, lay.height, title, title)


# -- the work order's diagram ------------------------------------------------------------------------------

def plane_svg(order, plane_index: int) -> str:
    """The polar diagram of plane ``plane_index`` (0 for the first) of a work order, as the PDF draws it
    (the same layout, text measured with the same fonts, on the order's paper width).

    >>> from toolkit.workorder.model import example_order
    >>> plane_svg(example_order(), 0).startswith("<svg")
    True
    """
    from toolkit.workorder.model import Formatter

    planes = order.planes
    if isinstance(plane_index, bool) or not isinstance(plane_index, int) or not 0 <= plane_index < len(planes):
        raise BadInput(f"plane_index: {plane_index!r} is not a plane of order {order.ident.number}; give 0 to "
                       f"{len(planes) - 1}")
    plane = planes[plane_index]
    fmt = Formatter(order.units, order.angle_reference, order.angle_sense)
    page_w, page_h = pdfpage.paper_size(order.paper_name)
    lay = dia.plane_layout(plane, fmt, order, pdfpage.MARGIN, page_h - pdfpage.MARGIN, page_w - 2 * pdfpage.MARGIN,
                           measure=pdfpage.width, wrap=pdfpage.wrap)
    return layout_svg(lay, f"Work order {order.ident.number}, plane {plane.name}: polar diagram")


# -- the live diagram ---------------------------------------------------------------------------------------

_VECTOR_LEGEND = {"reading": ("arrow", "reading (as measured)"), "trial": ("open", "trial mass"),
                  "correction": ("arrow", "correction"), "residual": ("open", "residual"),
                  "allowance": ("dash", "allowance circle")}


def _finite(value, name: str, *, nonnegative: bool = False) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value):
        raise BadInput(f"{name}: {value!r} is not a finite number; give a number such as 12.5")
    if nonnegative and value < 0:
        raise BadInput(f"{name}: {value!r} is negative; give the amount as a size of 0 or more and the "
                       f"direction as its angle")
    return float(value)


def _text_value(value, name: str, *, empty: bool = False) -> str:
    if not isinstance(value, str) or (not empty and not value.strip()):
        raise BadInput(f"{name}: {value!r} is not a text; give a text such as 'keyway'")
    return value


def vectors_layout(*, title: str, reference: str, angle_sense: str, vectors: list[dict], width: float = 511.2,
                   x0: float = 0.0, top: float = 0.0) -> dia.Layout:
    """The layout of :func:`vectors_svg` (see there), ``width`` points wide."""
    from toolkit.units import format_number
    from toolkit.workorder.model import Formatter

    title = _text_value(title, "title")
    reference = _text_value(reference, "reference")
    if angle_sense not in _SENSES:
        raise BadInput(f"angle_sense: {angle_sense!r} is not allowed; use 'with rotation' or 'against rotation'")
    if not isinstance(vectors, (list, tuple)):
        raise BadInput(f"vectors: {vectors!r} is not a list of vectors")
    if len(vectors) > 48:
        raise BadInput(f"vectors: {len(vectors)} vectors are too many for one diagram; give at most 48")
    rim = 82.0
    items = []
    for i, v in enumerate(vectors):
        name = f"vectors[{i}]"
        if not isinstance(v, dict):
            raise BadInput(f"{name}: {v!r} is not a mapping with label, amount, unit, angle_deg and role")
        missing = [k for k in ("label", "amount", "unit", "angle_deg", "role") if k not in v]
        if missing:
            raise BadInput(f"{name}: missing {', '.join(missing)}")
        role = v["role"]
        if role not in VECTOR_ROLES:
            raise BadInput(f"{name}.role: {role!r} is not allowed; use one of {', '.join(VECTOR_ROLES)}")
        action = v.get("action")
        if action is not None and action not in ("add", "remove"):
            raise BadInput(f"{name}.action: {action!r} is not allowed; use 'add' or 'remove'")
        items.append((_text_value(v["label"], f"{name}.label", empty=True),
                      _finite(v["amount"], f"{name}.amount", nonnegative=True),
                      _text_value(v["unit"], f"{name}.unit"),
                      _finite(v["angle_deg"], f"{name}.angle_deg") % 360.0, role, action))
    biggest: dict[str, float] = {}
    for _label, amount, unit, _angle, _role, _action in items:
        biggest[unit] = max(biggest.get(unit, 0.0), amount)
    biggest = {unit: top_ or 1.0 for unit, top_ in biggest.items()}  # the largest of each unit at 85 %
    arrows, rings, callouts, legend = [], [], [], []
    for label, amount, unit, angle, role, action in items:
        length = rim * 0.85 * (amount / biggest[unit])  # a ratio first: no overflow for tiny amounts
        amount_text = f"{format_number(amount, 4) if amount else '0'} {unit}"
        if role == "allowance":
            rings.append((length, role))
            legend.append(("dash", role, f"{label + ': ' if label.strip() else ''}allowance circle {amount_text}"))
            continue
        arrows.append(dia.Arrow(angle, length, role, 1.8 if role in ("reading", "correction") else 1.1,
                                filled=_VECTOR_LEGEND[role][0] == "arrow"))
        words = f"{action} " if action else "(add or remove not stated) " if role == "correction" else ""
        text = f"{label + ': ' if label.strip() else ''}{role} {words}{amount_text} at {Formatter.angle(angle)}"
        callouts.append(dia.Callout(angle, rim, (text,), role))
    for role in VECTOR_ROLES:
        if role != "allowance" and any(r == role for *_x, r, _a in items):
            kind, words = _VECTOR_LEGEND[role]
            legend.append((kind, role, words))
    fmt = Formatter("metric", reference, angle_sense)
    scale_words = "; ".join(f"{format_number(top_ / 0.85, 4)} {unit}" for unit, top_ in biggest.items())
    note = (f"Scale: the rotor outline stands for {scale_words}. " if biggest else "No vectors given yet. ") \
        + fmt.convention()
    if any(role in ("trial", "correction") for *_x, role, _a in items):
        note += (" Secure every trial and correction mass before a run and keep clear of the rotor while it "
                 "turns; the rotor maker's instructions and local codes come first.")
    return dia.layout(title=title, reference=reference, angles_ccw_rotation=angle_sense == "with rotation",
                      callouts=callouts, markers=[], initial=None, predicted=None, allowance=0.0, legend=legend,
                      note=note, x0=x0, top=top, width=width, measure=pdfpage.width, wrap=pdfpage.wrap, rim=rim,
                      arrows=tuple(arrows), rings=tuple(rings))


def vectors_svg(*, title: str, reference: str, angle_sense: str, vectors: list[dict]) -> str:
    """A live polar diagram of readings and corrections before a work order exists.

    Each vector is a dict with ``label`` (text), ``amount`` (a number of 0 or more), ``unit`` (text, e.g.
    ``"mm/s"`` or ``"g"``), ``angle_deg`` (from the reference, in ``angle_sense``) and ``role``:
    ``"reading"``, ``"trial"``, ``"correction"``, ``"residual"`` (arrows from the centre, each labelled
    with its amount, unit and angle) or ``"allowance"`` (a dashed circle). A correction should carry
    ``action`` (``"add"`` or ``"remove"``), printed in words; without it its label says that add or remove
    is not stated. With trial masses or corrections shown, the note carries the caution to secure them.
    Vectors of one unit share a scale: the largest of each unit reaches 85 % of the rotor outline, and the
    note says what the outline stands for in each unit. ``angle_sense`` is ``"with rotation"`` or
    ``"against rotation"``; it and the reference are printed on the diagram. Bad input raises
    :class:`~toolkit.errors.BadInput` naming the field.

    >>> svg = vectors_svg(title="Run 1", reference="keyway", angle_sense="against rotation",
    ...                   vectors=[dict(label="original", amount=4.2, unit="mm/s", angle_deg=75, role="reading")])
    >>> "original: reading 4.200 mm/s at 75°" in svg
    True
    """
    lay = vectors_layout(title=title, reference=reference, angle_sense=angle_sense, vectors=vectors)
    return layout_svg(lay, title)


# -- the side view ---------------------------------------------------------------------------------------------

@dataclass
class SideView(dia.Layout):
    """The side view's geometry: the texts, lines and shapes of a :class:`~toolkit.export.diagram.Layout`
    plus filled rectangles (x0, y0, x1, y1, role), polygons (points, role) and centre-of-mass symbols
    (x, y, radius); :attr:`symbol_boxes` lists the boxes of bearings and centre-of-mass symbols."""

    rects: list[tuple[float, float, float, float, str]] = field(default_factory=list)
    polygons: list[tuple[tuple[tuple[float, float], ...], str]] = field(default_factory=list)
    centres: list[tuple[float, float, float]] = field(default_factory=list)
    symbol_boxes: list[dia.Box] = field(default_factory=list)


def _centre_symbol(canvas: _Canvas, x: float, y: float, r: float) -> None:
    """The centre-of-mass symbol: a circle with two opposite quarters filled."""
    canvas.circle(x, y, r, "cp-hole", 0.8)
    for a0 in (0, 180):
        pts = [(x, y)] + [(x + r * math.cos(math.radians(a0 + k * 15)), y + r * math.sin(math.radians(a0 + k * 15)))
                          for k in range(7)]
        canvas.polygon(pts, "ink", 0.5, True)


def _mm(value, name: str) -> float:
    """A length in mm: a number (the parameter's name says mm), a pint quantity or a text with its unit."""
    if isinstance(value, bool):
        raise BadInput(f"{name}: {value!r} is not a length; give millimetres as a number or a text such as "
                       f"'150 mm'")
    if isinstance(value, (int, float)):
        if not math.isfinite(value):
            raise BadInput(f"{name}: {value!r} is not a finite length; give millimetres, e.g. 150")
        return float(value)
    from toolkit.units import magnitude

    return float(magnitude(value, "length", "mm", name))


def side_view_layout(*, length_mm, bearings_mm, planes, centre_of_mass_mm, diameter_mm=None,
                     units: str = "metric") -> SideView:
    """The geometry of :func:`side_view_svg` (see there) in points, y up, with every text box."""
    from toolkit.units import format_number
    from toolkit.workorder.model import Formatter

    if units not in ("metric", "imperial"):
        raise BadInput(f"units: {units!r} is not allowed; use 'metric' or 'imperial'")
    fmt = Formatter(units, "", "")
    length = _mm(length_mm, "length_mm")
    if length <= 0:
        raise BadInput(f"length_mm: {length:g} mm is not a rotor length; give more than 0 mm")
    diameter = None if diameter_mm is None else _mm(diameter_mm, "diameter_mm")
    if diameter is not None and diameter <= 0:
        raise BadInput(f"diameter_mm: {diameter:g} mm is not a diameter; give more than 0 mm, or leave it out")

    def within(value, name):
        mm = _mm(value, name)
        if not 0 <= mm <= length:
            raise BadInput(f"{name}: {mm:g} mm lies outside the rotor; give 0 to {length:g} mm from its left end")
        return mm

    if not isinstance(bearings_mm, (list, tuple)) or not 1 <= len(bearings_mm) <= 8:
        raise BadInput(f"bearings_mm: {bearings_mm!r}; give a list of 1 to 8 bearing positions in mm")
    bearings = [within(b, f"bearings_mm[{i}]") for i, b in enumerate(bearings_mm)]
    if not isinstance(planes, (list, tuple)) or len(planes) > 12:
        raise BadInput(f"planes: {planes!r}; give a list of at most 12 (name, position in mm) pairs")
    named = []
    for i, item in enumerate(planes):
        if not isinstance(item, (list, tuple)) or len(item) != 2:
            raise BadInput(f"planes[{i}]: {item!r} is not a (name, position in mm) pair")
        named.append((_text_value(item[0], f"planes[{i}] name"), within(item[1], f"planes[{i}] position")))
    com = within(centre_of_mass_mm, "centre_of_mass_mm")

    s = 480.0 / length if diameter is None else min(480.0 / length, 160.0 / diameter)
    h = diameter * s / 2 if diameter is not None else 3.0
    out = SideView(0.0, 0.0, 0.0)

    def X(mm: float) -> float:  # noqa: N802 - a coordinate
        return mm * s

    size = 7.0
    step = size * dia.LINE + 3.0
    out.rects.append((0.0, -h, X(length), h, "body"))
    out.lines.append(dia.Line(((-8.0, 0.0), (X(length) + 8, 0.0)), "muted", 0.5, "axis", dash=(6, 2, 1, 2)))
    for b in bearings:
        tri = ((X(b), -h), (X(b) + 6, -h - 10), (X(b) - 6, -h - 10))
        out.polygons.append((tri, "muted"))
        out.symbol_boxes.append(dia.Box(X(b) - 6, -h - 10, X(b) + 6, -h))
    for _name, pos in named:
        out.lines.append(dia.Line(((X(pos), -h - 4), (X(pos), h + 4)), "accent", 1.2, "plane", dash=(4, 2)))
    out.centres.append((X(com), 0.0, 4.0))
    out.symbol_boxes.append(dia.Box(X(com) - 4, -4, X(com) + 4, 4))

    # names above the rotor: left-aligned just right of a vertical leader; placed right to left, each in
    # the lowest row where neither its box nor its leader meets what is already placed
    labels = [(X(pos), pdfpage.shorten(f"plane {name}", "bold", size, 200), "accent", "bold")
              for name, pos in named]
    labels += [(X(b), f"bearing {chr(65 + k)}", "ink", "regular") for k, b in enumerate(bearings)]
    labels.append((X(com), "centre of mass", "warn", "regular"))
    placed: list[tuple[dia.Box, tuple]] = []
    for x, text, role, style in sorted(labels, key=lambda item: -item[0]):
        row = 0
        while True:
            bottom = h + 8 + row * step
            t = dia._text((text,), x + 3, bottom + dia.DESCENT * size, style, size, "left", role, pdfpage.width,
                          "label")
            leader = ((x, h + 1), (x, bottom + 0.4 * size))
            if not any(dia.overlaps(t.box.inflate(1.5), b) or dia.segment_hits_box(*leader, b)
                       or dia.segment_hits_box(*seg, t.box.inflate(1.0)) for b, seg in placed):
                break
            row += 1
        placed.append((t.box, leader))
        out.texts.append(t)
        out.lines.append(dia.Line(leader, "muted", 0.4, "leader"))

    # dimensions below: one row per feature, from the left end, shortest on top; the text inside its span
    # when it fits, else to the left of the left end (no extension line passes either place)
    features = sorted([(pos, f"plane {name}") for name, pos in named]
                      + [(b, f"bearing {chr(65 + k)}") for k, b in enumerate(bearings)]
                      + [(com, "centre of mass"), (length, "overall length")], key=lambda f: f[0])
    row_step = size * dia.LINE + 8.0
    first = -h - 16 - size * (dia.ASCENT + dia.DESCENT)
    lowest = first - (len(features) - 1) * row_step
    out.lines.append(dia.Line(((0.0, -h), (0.0, lowest - 3)), "muted", 0.4, "extension"))
    for k, (pos, name) in enumerate(features):
        y = first - k * row_step
        text = f"{pdfpage.shorten(name, 'regular', size, 200)}: {fmt.length(pos)}"
        w = pdfpage.width(text, "regular", size)
        base = y + 3 + dia.DESCENT * size
        if w + 8 <= X(pos):
            t = dia._text((text,), X(pos) / 2, base, "regular", size, "centre", "ink", pdfpage.width, "dimension")
        else:
            t = dia._text((text,), -4.0, base, "regular", size, "right", "ink", pdfpage.width, "dimension")
        out.texts.append(t)
        if pos > 0:
            out.lines.append(dia.Line(((X(pos), -h - (11 if pos in bearings else 1)), (X(pos), y - 3)), "muted",
                                      0.4, "extension"))
            mid = (X(pos) / 2, y)
            head = min(4.0, X(pos) * 0.4)
            out.lines.append(dia.Line((mid, (0.0, y)), "ink", 0.5, "dimension", head=head > 0.5))
            out.lines.append(dia.Line((mid, (X(pos), y)), "ink", 0.5, "dimension", head=head > 0.5))
    if diameter is not None:
        xd = X(length) + 10
        out.lines.append(dia.Line(((xd, 0.0), (xd, h)), "ink", 0.5, "dimension", head=h > 3))
        out.lines.append(dia.Line(((xd, 0.0), (xd, -h)), "ink", 0.5, "dimension", head=h > 3))
        out.lines.append(dia.Line(((X(length), h), (xd + 3, h)), "muted", 0.4, "extension"))
        out.lines.append(dia.Line(((X(length), -h), (xd + 3, -h)), "muted", 0.4, "extension"))
        out.texts.append(dia._text((f"Ø {fmt.length(diameter)}",), xd + 4, -0.35 * size, "regular", size, "left",
                                   "ink", pdfpage.width, "dimension"))

    # the frame: everything so far, then the title above and the note below, wrapped to its width
    boxes = [t.box for t in out.texts] + out.symbol_boxes + [dia.Box(0, -h, X(length), h)]
    pts = [p for line in out.lines for p in line.points]
    left = min([b.x0 for b in boxes] + [p[0] for p in pts])
    right = max([b.x1 for b in boxes] + [p[0] for p in pts] + [left + 360])
    top = max([b.y1 for b in boxes] + [p[1] for p in pts])
    bottom = min([b.y0 for b in boxes] + [p[1] for p in pts])
    tsize = 10.0
    title_lines = pdfpage.wrap("Rotor side view, to scale", "bold", tsize, right - left)
    y = top + 8 + (len(title_lines) - 1) * tsize * dia.LINE + dia.DESCENT * tsize
    out.texts.append(dia._text(title_lines, left, y, "bold", tsize, "left", "ink", pdfpage.width, "title"))
    top = out.texts[-1].box.y1
    nsize = 6.5
    per = "100 mm" if units == "metric" else "1 in"
    scale_text = (f"Drawn to scale: {per} on the rotor is {format_number(s * (100 if units == 'metric' else 25.4), 3)}"
                  " pt here; lengths from the left end of the rotor.")
    if diameter is None:
        scale_text += " Diameter not given: the shaft is drawn 6 pt thick, not to scale."
    note_lines = pdfpage.wrap(scale_text, "regular", nsize, right - left)
    out.texts.append(dia._text(note_lines, left, bottom - 8 - dia.ASCENT * nsize, "regular", nsize, "left", "muted",
                               pdfpage.width, "note"))
    bottom = out.texts[-1].box.y0
    out.x0, out.top, out.width, out.height = left, top, right - left, top - bottom
    return out


def side_view_svg(*, length_mm, bearings_mm: list[float], planes: list[tuple[str, float]],
                  centre_of_mass_mm: float, diameter_mm: float | None = None, units: str = "metric") -> str:
    """The rotor seen from the side, to scale: the shaft (its diameter to the same scale when given),
    bearings as supports below it (named A, B, ... in the order given), correction planes as dashed lines with their names, the centre of mass,
    and a dimension line from the left end to each of them and to the right end, with units (``units``
    ``"metric"`` or ``"imperial"`` for the printed lengths).

    Positions are millimetres from the rotor's left end: numbers, pint quantities or texts such as
    ``"150 mm"`` or ``"6 in"``; each must lie on the rotor. Labels never collide (see
    :func:`side_view_layout`, whose boxes the tests check).

    >>> svg = side_view_svg(length_mm=1200, bearings_mm=[0, 1200], planes=[("A", 150), ("B", 1050)],
    ...                     centre_of_mass_mm=540, diameter_mm=300)
    >>> "centre of mass: 540.0 mm" in svg
    True
    """
    lay = side_view_layout(length_mm=length_mm, bearings_mm=bearings_mm, planes=planes,
                           centre_of_mass_mm=centre_of_mass_mm, diameter_mm=diameter_mm, units=units)
    return layout_svg(lay, "Rotor side view, to scale")
