"""The polar diagram of a correction plane as geometry: where every circle, arc, marker, leader line and text
box goes (page points, y up), independent of any drawing library, so that the PDF (and later an SVG face)
draws the same picture.

The layout (our own): the title across the top; the name of the angle reference centred above the 0°
tick (shortened when it is long, the full text then in the legend); the rotor outline with degree marks
every 30° counting counter-clockwise on the page; an arc saying which way angles grow and an arc for the
direction of rotation; the operations as shapes on the rim, each labelled in a column to the left or right
of the circle and joined to its shape by a leader line; the legend and the scale note below, wrapped to
the width. Labels in a column are stacked in the order of their anchors, so leaders do not cross, and the
column grows downwards when there are many, so text never overlaps other text, an arc or a shape.

Every text item carries its box; :meth:`Layout.boxes` lists them with the shapes, arcs and leaders so that
tests can check the picture geometrically.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Callable

__all__ = ["Box", "Text", "Line", "Marker", "Callout", "Arrow", "Layout", "layout", "plane_layout", "overlaps",
           "segment_hits_box", "circle_meets_box", "arrow_head", "ASCENT", "DESCENT", "LINE"]

#: Text box extent above and below the baseline, and the line step, as fractions of the font size
#: (DejaVu Sans: ascender 0.93, descender 0.24 of the em; accents and CJK stay inside).
ASCENT, DESCENT, LINE = 0.95, 0.26, 1.22

Measure = Callable[[str, str, float], float]     # (text, style, size) -> width in points
Wrap = Callable[[str, str, float, float], tuple]  # (text, style, size, width) -> lines


@dataclass(frozen=True)
class Box:
    x0: float
    y0: float
    x1: float
    y1: float

    def inflate(self, d: float) -> "Box":
        return Box(self.x0 - d, self.y0 - d, self.x1 + d, self.y1 + d)


def overlaps(a: Box, b: Box) -> bool:
    """True when two boxes share more than an edge."""
    return a.x0 < b.x1 and b.x0 < a.x1 and a.y0 < b.y1 and b.y0 < a.y1


def segment_hits_box(p: tuple[float, float], q: tuple[float, float], b: Box) -> bool:
    """True when the segment p-q passes through the inside of box ``b`` (Liang-Barsky clipping)."""
    (x0, y0), (x1, y1) = p, q
    dx, dy = x1 - x0, y1 - y0
    t0, t1 = 0.0, 1.0
    for pk, qk in ((-dx, x0 - b.x0), (dx, b.x1 - x0), (-dy, y0 - b.y0), (dy, b.y1 - y0)):
        if pk == 0:
            if qk <= 0:
                return False
            continue
        t = qk / pk
        if pk < 0:
            t0 = max(t0, t)
        else:
            t1 = min(t1, t)
        if t0 >= t1:
            return False
    return True


def circle_meets_box(cx: float, cy: float, r: float, b: Box) -> bool:
    """True when the circle of radius ``r`` about (cx, cy) passes through the inside of box ``b``."""
    near = math.hypot(max(b.x0 - cx, 0, cx - b.x1), max(b.y0 - cy, 0, cy - b.y1))
    far = max(math.hypot(x - cx, y - cy) for x in (b.x0, b.x1) for y in (b.y0, b.y1))
    return near < r < far


@dataclass(frozen=True)
class Text:
    """Lines of text: the first baseline at ``y``; ``x`` is the left edge, the right edge or the centre
    (``align``); ``role`` names the colour (ink, accent, muted, warn)."""

    lines: tuple[str, ...]
    x: float
    y: float
    style: str
    size: float
    align: str
    role: str
    box: Box
    kind: str = "text"


@dataclass(frozen=True)
class Line:
    """A polyline: an arc (sampled), a tick, a leader, an arrow shaft. ``head`` puts an arrow head at the
    last point (``filled`` or open); ``dash`` is a dash pattern or ()."""

    points: tuple[tuple[float, float], ...]
    role: str
    width: float
    kind: str
    head: bool = False
    filled: bool = True
    dash: tuple[float, ...] = ()


@dataclass(frozen=True)
class Marker:
    """An operation's shape at ``(x, y)`` on the rim, turned by ``angle_deg`` (page degrees,
    counter-clockwise from the top): hole, plate, washers or mass."""

    kind: str
    x: float
    y: float
    angle_deg: float
    box: Box


@dataclass(frozen=True)
class Circle:
    x: float
    y: float
    r: float
    role: str
    width: float
    dash: tuple[float, ...] = ()
    fill: bool = False


@dataclass(frozen=True)
class Callout:
    """One thing to label beside the circle: its anchor angle (page degrees) and radius, and its lines."""

    angle_deg: float
    radius: float
    lines: tuple[str, ...]
    role: str = "ink"
    style: str = "bold"


@dataclass(frozen=True)
class Arrow:
    """An arrow from the centre: its page angle (degrees, counter-clockwise from the top), its length in
    points, its colour role, line width and whether its head is filled."""

    angle_deg: float
    length: float
    role: str
    width: float = 1.4
    filled: bool = True


@dataclass
class Layout:
    x0: float
    top: float
    width: float
    height: float = 0.0
    texts: list[Text] = field(default_factory=list)
    lines: list[Line] = field(default_factory=list)
    markers: list[Marker] = field(default_factory=list)
    circles: list[Circle] = field(default_factory=list)
    legend_symbols: list[tuple[str, str, float, float]] = field(default_factory=list)  # kind, role, x, y

    @property
    def bottom(self) -> float:
        return self.top - self.height

    def text_boxes(self) -> list[Box]:
        return [t.box for t in self.texts]

    def arcs(self) -> list[Line]:
        return [line for line in self.lines if line.kind == "arc"]


def arrow_head(pts, head: float):
    """The shaft and head of a polyline whose last point carries an arrow head ``head`` points long: the
    shaft's points (ending where the head begins) and the head's triangle, or None for a zero-length end.
    On an arc (more than two points) the head follows its last two samples."""
    (x0, y0), (x1, y1) = pts[-2], pts[-1]
    if len(pts) > 2:
        x0, y0 = pts[-3]
    length = math.hypot(x1 - x0, y1 - y0)
    if length < 1e-9:
        return None
    ux, uy = (x1 - x0) / length, (y1 - y0) / length
    bx, by = x1 - ux * head, y1 - uy * head
    shaft = list(pts[:-1]) + [(bx, by)] if len(pts) > 2 else [pts[0], (bx, by)]
    return shaft, ((x1, y1), (bx - uy * head * 0.45, by + ux * head * 0.45),  # same float order as before
                   (bx + uy * head * 0.45, by - ux * head * 0.45))


def _text(lines, x, y, style, size, align, role, measure: Measure, kind="text") -> Text:
    lines = tuple(lines)
    w = max((measure(s, style, size) for s in lines), default=0.0)
    left = x if align == "left" else x - w if align == "right" else x - w / 2
    box = Box(left, y - (len(lines) - 1) * size * LINE - DESCENT * size, left + w, y + ASCENT * size)
    return Text(lines, x, y, style, size, align, role, box, kind)


def _arc(cx, cy, r, start, end, steps=24):
    pts = []
    for k in range(steps + 1):
        a = math.radians(start + (end - start) * k / steps)
        pts.append((cx - r * math.sin(a), cy + r * math.cos(a)))
    return tuple(pts)


def _spread(wanted: list[tuple[float, float]], gap: float) -> list[float]:
    """Top edges for boxes of the given heights that want the given top edges (in the given order, top
    first), each below the one before with ``gap`` between them: boxes that would overlap are merged into
    a block centred on their wishes (the least squares shift), block by block from the top."""
    blocks: list[list] = []  # [top, height, members]
    for k, (want, h) in enumerate(wanted):
        blocks.append([want, h, [k]])
        while len(blocks) > 1 and blocks[-2][0] - blocks[-2][1] - gap < blocks[-1][0]:
            cur = blocks.pop()
            prev = blocks[-1]
            members = prev[2] + cur[2]
            offsets, o = [], 0.0
            for m in members:
                offsets.append(o)
                o += wanted[m][1] + gap
            prev[0] = sum(wanted[m][0] + off for m, off in zip(members, offsets)) / len(members)
            prev[1] = o - gap
            prev[2] = members
    tops = [0.0] * len(wanted)
    for top, _h, members in blocks:
        o = 0.0
        for m in members:
            tops[m] = top - o
            o += wanted[m][1] + gap
    return tops


def layout(*, title: str, reference: str, angles_ccw_rotation: bool, callouts: list[Callout],
           markers: list[tuple[str, float]], initial: tuple[float, float] | None,
           predicted: tuple[float, float] | None, allowance: float, legend: list[tuple[str, str, str]], note: str,
           x0: float, top: float, width: float, measure: Measure, wrap: Wrap, rim: float = 82.0,
           arrows: tuple[Arrow, ...] = (), rings: tuple[tuple[float, str], ...] = ()) -> Layout:
    """Lay out one polar diagram in a box ``width`` points wide whose top edge is at ``top``.

    ``callouts`` are the operations' labels (anchor angle in page degrees); ``markers`` the shapes on the
    rim as (kind, page angle); ``initial`` and ``predicted`` are (angle, length in points) of the two
    arrows; ``allowance`` is the radius of the allowance circle in points; ``legend`` lists (symbol kind,
    colour role, text); ``note`` is the scale note. ``angles_ccw_rotation``: the rotor turns
    counter-clockwise on the page. ``initial`` or ``predicted`` may be None (no such arrow); ``arrows``
    are further arrows from the centre and ``rings`` further dashed circles (radius in points, colour role),
    all inside the rim. Returns the :class:`Layout` with its height.
    """
    out = Layout(x0, top, width)
    y = top
    # title
    size = 10.0
    lines = wrap(title, "bold", size, width)
    out.texts.append(_text(lines, x0, y - ASCENT * size, "bold", size, "left", "ink", measure, "title"))
    y -= len(lines) * size * LINE + 6
    # angle reference, centred above the circle, two lines at most
    rsize = 7.5
    ref_text = f"0° = {reference}"
    ref_lines = wrap(ref_text, "bold", rsize, 2 * (rim + 38))
    shortened = len(ref_lines) > 2
    if shortened:
        from_wrap = ref_lines[:2]
        last = from_wrap[1]
        while last and measure(last + "… (see legend)", "bold", rsize) > 2 * (rim + 38):
            last = last[:-1]
        ref_lines = (from_wrap[0], last.rstrip() + "… (see legend)")
    keep = rim + 30.0  # keep-out radius: rim, ticks, shapes, arcs and their heads
    arc_r = rim + 20
    cx = x0 + width / 2
    ref_base = y - ASCENT * rsize
    ref = _text(ref_lines, cx, ref_base, "bold", rsize, "centre", "accent", measure, "reference")
    out.texts.append(ref)
    # label columns left and right of the keep-out circle, placed relative to the circle's centre first
    gap = 8.0
    col = (width - 2 * (keep + gap)) / 2
    callouts = list(callouts) + [Callout(322.5, arc_r, ("angles grow this way",), "accent", "regular"),
                                 Callout(137.5, arc_r, ("direction of rotation",), "muted", "regular")]
    csize = 7.0 if len(callouts) <= 24 else 6.0
    step = csize * LINE
    sides: dict[str, list] = {"left": [], "right": []}
    for c in callouts:
        a = math.radians(c.angle_deg)
        ax, ay = -c.radius * math.sin(a), c.radius * math.cos(a)
        side = "right" if ax > 1e-6 or (abs(ax) <= 1e-6 and c.angle_deg < 180) else "left"
        lines = tuple(line for text in c.lines for line in wrap(text, c.style, csize, col))
        sides[side].append((ay, ax, c, lines))
    placed = []
    for side, items in sides.items():
        items.sort(key=lambda item: (-item[0], item[1] if side == "right" else -item[1]))
        wanted = [(ay + (len(lines) * step) / 2, len(lines) * step) for ay, _ax, _c, lines in items]
        for item, t in zip(items, _spread(wanted, 3.0)):
            placed.append((side, t, item))
    highest = max((t for _side, t, _item in placed), default=0.0)
    # the circle as high as the reference text and the labels allow; no label reaches above the bottom of
    # the reference text, so that no leader runs through it
    cy = ref.box.y0 - 4 - max(keep, highest)
    # rotor outline, degree marks and their numbers
    out.circles.append(Circle(cx, cy, rim, "ink", 1.2))

    def at(angle: float, radius: float) -> tuple[float, float]:
        a = math.radians(angle)
        return cx - radius * math.sin(a), cy + radius * math.cos(a)

    for kind, angle in markers:
        x, y_ = at(angle, rim - 9 if kind == "hole" else rim)
        reach = 5.0 if kind == "hole" else 10.0
        out.markers.append(Marker(kind, x, y_, angle, Box(x - reach, y_ - reach, x + reach, y_ + reach)))
    dsize = 6.5
    degrees: list[Text] = []
    for deg in range(0, 360, 30):
        out.lines.append(Line((at(deg, rim), at(deg, rim - 5)), "ink", 0.5, "tick"))
        if deg:
            xt, yt = at(deg, rim - 15)
            degrees.append(_text((f"{deg}°",), xt, yt - 2, "regular", dsize, "centre", "muted", measure,
                                 "degree"))
    out.lines.append(Line((at(0, rim - 6), at(0, rim + 10)), "accent", 2.0, "tick"))
    # the two arcs: angles grow counter-clockwise on the page (upper right); rotation (lower left)
    sense = _arc(cx, cy, arc_r, 305, 340)
    out.lines.append(Line(sense, "accent", 0.9, "arc", head=True))
    rot = _arc(cx, cy, arc_r, 120, 155)
    out.lines.append(Line(rot if angles_ccw_rotation else rot[::-1], "muted", 0.9, "arc", head=True))
    # allowance circle and the arrows
    if allowance > 0:
        out.circles.append(Circle(cx, cy, allowance, "accent", 0.9, (3, 2)))
    for radius, role in rings:
        if radius > 0:
            out.circles.append(Circle(cx, cy, radius, role, 0.9, (3, 2)))
    if initial is not None:
        out.lines.append(Line((at(0, 0), at(initial[0], initial[1])), "warn", 1.8, "arrow", head=True))
    if predicted is None:
        pass
    elif predicted[1] > 2:
        out.lines.append(Line((at(0, 0), at(predicted[0], predicted[1])), "ink", 0.9, "arrow", head=True,
                              filled=False))
    else:
        out.circles.append(Circle(cx, cy, 1.5, "ink", 0, fill=True))
    for arrow in arrows:
        if arrow.length > 2:
            out.lines.append(Line((at(0, 0), at(arrow.angle_deg, arrow.length)), arrow.role, arrow.width, "arrow",
                                  head=True, filled=arrow.filled))
        else:
            out.circles.append(Circle(cx, cy, 1.5, arrow.role, 0, fill=True))
    lowest = cy - keep
    for side, t_rel, (_ay, _ax, c, lines) in placed:
        t = cy + t_rel
        base = t - ASCENT * csize
        if side == "right":
            lx = cx + keep + gap
            text = _text(lines, lx, base, c.style, csize, "left", c.role, measure, "label")
            end = (lx - 2, t - len(lines) * step / 2)
        else:
            lx = cx - keep - gap
            text = _text(lines, lx, base, c.style, csize, "right", c.role, measure, "label")
            end = (lx + 2, t - len(lines) * step / 2)
        out.texts.append(text)
        start = at(c.angle_deg, c.radius + (12 if c.radius <= rim else 4))
        out.lines.append(Line((start, end), "muted", 0.4, "leader"))
        lowest = min(lowest, text.box.y0)
    # a degree number under a shape, an arrow or a leader is left out (the tick stays)
    segments = [(p, q) for line in out.lines if line.kind in ("arrow", "leader")
                for p, q in zip(line.points, line.points[1:])]  # gathered once for all the labels
    for label in degrees:
        box = label.box.inflate(0.5)
        if any(overlaps(box, m.box) for m in out.markers):
            continue
        if any(segment_hits_box(p, q, box) for p, q in segments):
            continue
        if any(circle_meets_box(c.x, c.y, c.r, box) for c in out.circles):  # the allowance circle
            continue
        out.texts.append(label)
    # legend and scale note below
    y = lowest - 10
    lsize = 7.0
    for kind, role, text in legend + ([("none", "ink", ref_text)] if shortened else []):
        lines = wrap(text, "regular", lsize, width - 34)
        base = y - ASCENT * lsize
        out.legend_symbols.append((kind, role, x0 + 14, base + 2))
        out.texts.append(_text(lines, x0 + 32, base, "regular", lsize, "left", "ink", measure, "legend"))
        y -= len(lines) * lsize * LINE + 3
    nsize = 6.5
    lines = wrap(note, "regular", nsize, width)
    out.texts.append(_text(lines, x0, y - 2 - ASCENT * nsize, "regular", nsize, "left", "muted", measure, "note"))
    y -= 2 + len(lines) * nsize * LINE
    out.height = top - y + 4
    return out


def _kind_word(kind: str) -> str:
    return {"hole": "drilled hole", "plate": "weld-on plate", "washers": "washers", "mass": "mass"}[kind]


_SHAPES = {"hole": "ring inside rim: drilled hole (remove)",
           "plate": "bar outside rim: weld-on plate (add), drawn with its length along the rim; its width runs "
                    "across the seat, along the shaft axis (into the page)",
           "washers": "stacked bars: washers (add)", "mass": "diamond: added mass"}


def plane_layout(plane, fmt, order, x0: float, top: float, width: float, *, measure: Measure,
                 wrap: Wrap) -> Layout:
    """The polar diagram of one correction plane of a work order (a ``model.PlaneOrder`` printed with a
    ``model.Formatter``), in a box ``width`` points wide whose top edge is at ``top``, with text measured
    and wrapped by ``measure`` and ``wrap``. The PDF and the SVG face both draw this layout."""
    rim = 82.0
    scale_top = max(plane.initial_g_mm, plane.tolerance.u_per_g_mm, plane.predicted_g_mm, 1e-12)
    scale = rim * 0.85 / scale_top  # the largest vector reaches 85 % of the rim
    callouts = []
    for op in plane.operations:
        lines = [f"{op.number}: {_kind_word(op.kind)}, {op.action} {fmt.mass(op.mass_g)}"]
        if op.kind == "plate":
            lines.append("length along the rim, width across the seat")
        callouts.append(Callout(op.angle_deg, rim, tuple(lines)))
    legend = [
        ("arrow", "warn", f"initial unbalance {fmt.unbalance(plane.initial_g_mm)} at {fmt.angle(plane.initial_deg)}"),
        ("open", "ink", f"predicted residual {fmt.unbalance(plane.predicted_g_mm)} at "
                        f"{fmt.angle(plane.predicted_deg)}"),
        ("dash", "accent", f"allowance circle {fmt.unbalance(plane.tolerance.u_per_g_mm)}"),
    ]
    for kind in sorted({op.kind for op in plane.operations}):
        legend.append((kind, "ink", _SHAPES[kind]))
    return layout(
        title=f"Plane {plane.name}: {plane.method}, {plane.surface} surface, radius {fmt.length(plane.radius_mm)}",
        reference=order.angle_reference, angles_ccw_rotation=order.angle_sense == "with rotation",
        callouts=callouts, markers=[(op.kind, op.angle_deg) for op in plane.operations],
        initial=(plane.initial_deg, plane.initial_g_mm * scale), predicted=(plane.predicted_deg,
                                                                            plane.predicted_g_mm * scale),
        allowance=plane.tolerance.u_per_g_mm * scale, legend=legend,
        note=f"Scale: the rotor outline stands for {fmt.unbalance(rim / scale)}. {fmt.convention()}",
        x0=x0, top=top, width=width, measure=measure, wrap=wrap, rim=rim)
