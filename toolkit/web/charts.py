"""The series-statistics charts of the browser face as geometry, drawn as SVG by
:func:`toolkit.export.svg.layout_svg`: per plane the as-found unbalance as a polar scatter and as a
histogram, and the monthly trend of the as-found mean.

Each chart is a :class:`toolkit.export.diagram.Layout` (page points, y up) whose text items carry
their boxes, measured with the PDF's font metrics, so that tests check geometrically that no label
overlaps another label, a dot, a bar, a circle or a line, and that everything lies inside the chart.
Labels that would collide are thinned (degree numbers every 30°, axis numbers at a step wide enough for
the widest number); long titles wrap. The layouts and colours are our own.
"""

from __future__ import annotations

import math

from toolkit.export import diagram as dia
from toolkit.export import pdfpage

__all__ = ["scatter_layout", "histogram_layout", "trend_layout", "nice_step", "chart_svg"]

_SIZE = 7.0      # label size, points
_GAP = 3.0       # space kept between a label and anything else, points


def _label(lines, x: float, y: float, align: str, role: str, kind: str, size: float = _SIZE,
           style: str = "regular") -> dia.Text:
    """A text item whose first baseline is at ``y`` with its box (as the work-order diagrams measure it)."""
    lines = tuple(pdfpage.clean(line) for line in lines)
    w = max((pdfpage.width(s, style, size) for s in lines), default=0.0)
    left = x if align == "left" else x - w if align == "right" else x - w / 2
    box = dia.Box(left, y - (len(lines) - 1) * size * dia.LINE - dia.DESCENT * size, left + w, y + dia.ASCENT * size)
    return dia.Text(lines, x, y, style, size, align, role, box, kind)


def _wrapped(text: str, x: float, top: float, width: float, role: str, kind: str, size: float = _SIZE,
             style: str = "regular") -> dia.Text:
    return _label(pdfpage.wrap(text, style, size, width), x, top - dia.ASCENT * size, "left", role, kind, size, style)


def nice_step(top: float, ticks: int = 4) -> float:
    """A round step (1, 2 or 5 times a power of ten) so that ``ticks`` steps reach at least ``top``.

    >>> nice_step(7300), nice_step(0.9), nice_step(41)
    (2000.0, 0.5, 20.0)
    """
    raw = max(float(top), 1e-12) / ticks
    power = 10.0 ** math.floor(math.log10(raw))
    for m in (1.0, 2.0, 5.0, 10.0):
        if m * power >= raw * (1 - 1e-12):
            return m * power
    return 10.0 * power


def _number(value: float) -> str:
    from toolkit.units import format_number

    return format_number(value) if value else "0"


def scatter_layout(*, plane: str, points, allowance_g_mm: float | None, width: float = 360.0,
                   x0: float = 0.0, top: float = 0.0) -> dia.Layout:
    """The as-found unbalances of one plane, ``points`` as (g·mm, degrees), as dots on a polar plot: 0° at
    the top, degrees counted counter-clockwise on the page, dashed rings at round amounts and the plane's
    allowance as a circle of its own, all named below the plot."""
    out = dia.Layout(x0, top, width)
    title = _wrapped(f"Plane {plane}: as found (heavy spot), {len(points)} rotor(s)", x0, top, width, "ink",
                     "title", 9.0, "bold")
    out.texts.append(title)
    rim = min(120.0, (width - 70.0) / 2)
    cx, cy = x0 + width / 2, title.box.y0 - 6 - (rim + 4 + _GAP + (dia.ASCENT + dia.DESCENT) * _SIZE)
    amounts = [float(a) for a, _d in points] + ([float(allowance_g_mm)] if allowance_g_mm else [])
    step = nice_step(max(amounts, default=1.0) or 1.0)
    outline = 4 * step

    def at(angle: float, radius: float) -> tuple[float, float]:
        a = math.radians(angle)
        return cx - radius * math.sin(a), cy + radius * math.cos(a)

    out.circles.append(dia.Circle(cx, cy, rim, "ink", 1.0))
    for k in (1, 2, 3):
        out.circles.append(dia.Circle(cx, cy, rim * k / 4, "muted", 0.4, (2, 2)))
    if allowance_g_mm:
        out.circles.append(dia.Circle(cx, cy, rim * float(allowance_g_mm) / outline, "allowance", 1.1, (4, 2)))
    for deg in range(0, 360, 30):
        out.lines.append(dia.Line((at(deg, rim), at(deg, rim + 4)), "ink", 0.5, "tick"))
        # the label's centre far enough out that its box stays clear of the tick by _GAP in any direction
        w, h = pdfpage.width(f"{deg}°", "regular", _SIZE), (dia.ASCENT + dia.DESCENT) * _SIZE
        a = math.radians(deg)
        x, y = at(deg, rim + 4 + _GAP + abs(w / 2 * math.sin(a)) + abs(h / 2 * math.cos(a)))
        out.texts.append(_label((f"{deg}°",), x, y - (dia.ASCENT - dia.DESCENT) / 2 * _SIZE, "centre",
                                "accent" if deg == 0 else "muted", "degree"))
    for amount, deg in points:
        x, y = at(float(deg), rim * min(float(amount) / outline, 1.0))
        out.circles.append(dia.Circle(x, y, 1.8, "reading", 0, fill=True))
    y = cy - rim - 4 - _GAP - (dia.ASCENT + dia.DESCENT) * _SIZE - 6
    legend = [f"Rings every {_number(step)} g·mm; the outline stands for {_number(outline)} g·mm."]
    if allowance_g_mm:
        legend.append(f"Green dashed circle: allowance {_number(float(allowance_g_mm))} g·mm (the largest of the "
                      f"selected jobs).")
    legend.append("Angles in degrees from each job's reference mark, in the sense each job declared; on the page "
                  "they grow counter-clockwise. An unbalance is the heavy spot.")
    for text in legend:
        t = _wrapped(text, x0, y, width, "ink", "legend")
        out.texts.append(t)
        y = t.box.y0 - 3
    out.height = top - y + 2
    return out


def histogram_layout(*, plane: str, counts, bin_width_g_mm: float, allowance_g_mm: float | None,
                     width: float = 360.0, x0: float = 0.0, top: float = 0.0) -> dia.Layout:
    """How many rotors were found in each band of as-found unbalance (``counts`` per band of
    ``bin_width_g_mm``), as bars; the allowance as a dashed line named in its own row above the bars."""
    out = dia.Layout(x0, top, width)
    counts = [int(c) for c in counts]
    title = _wrapped(f"Plane {plane}: as-found unbalance, rotors per band", x0, top, width, "ink", "title", 9.0,
                     "bold")
    out.texts.append(title)
    high = max(counts, default=0) or 1
    ystep = max(1.0, math.ceil(nice_step(high)))
    ytop = ystep * math.ceil(high / ystep)
    ynums = [ystep * k for k in range(int(round(ytop / ystep)) + 1)]
    left_w = max(pdfpage.width(str(int(v)), "regular", _SIZE) for v in ynums) + 6  # rotors: whole numbers
    px0, px1 = x0 + left_w + 4, x0 + width - 4
    row = _SIZE * dia.LINE + 2
    ptop = title.box.y0 - 6 - row  # a row for the allowance's name
    height = 120.0
    pbot = ptop - height
    span = bin_width_g_mm * max(len(counts), 1)

    def xat(g_mm: float) -> float:
        return px0 + (px1 - px0) * (g_mm / span if span else 0.0)

    out.lines.append(dia.Line(((px0, pbot), (px1, pbot)), "ink", 0.8, "axis"))
    out.lines.append(dia.Line(((px0, pbot), (px0, ptop)), "ink", 0.8, "axis"))
    for v in ynums:
        y = pbot + height * v / ytop
        out.lines.append(dia.Line(((px0 - 3, y), (px0, y)), "ink", 0.5, "tick"))
        out.texts.append(_label((str(int(v)),), px0 - 5, y - _SIZE * 0.35, "right", "muted", "axis-number"))
    bar_w = (px1 - px0) / max(len(counts), 1)
    for k, c in enumerate(counts):
        if c:
            h = height * c / ytop
            xa, xb = px0 + k * bar_w + 1, px0 + (k + 1) * bar_w - 1
            out.lines.append(dia.Line(((xa, pbot), (xa, pbot + h), (xb, pbot + h), (xb, pbot)), "correction", 0.8,
                                      "bar"))
    # numbers under the band edges, every so many bands so that the widest fits with room to spare
    edges = [bin_width_g_mm * k for k in range(len(counts) + 1)]
    widest = max(pdfpage.width(_number(e), "regular", _SIZE) for e in edges)
    every = max(1, math.ceil((1.5 * widest + 2 * _GAP) / max(bar_w, 1e-9)))  # the end labels are flush
    base = pbot - 7 - dia.ASCENT * _SIZE
    for k in range(0, len(edges), every):
        x = xat(edges[k])
        out.lines.append(dia.Line(((x, pbot), (x, pbot - 3)), "ink", 0.5, "tick"))
        align = "left" if k == 0 else "right" if k == len(edges) - 1 else "centre"
        out.texts.append(_label((_number(edges[k]),), x, base, align, "muted", "axis-number"))
    y = base - dia.DESCENT * _SIZE - 4
    if allowance_g_mm and 0 < float(allowance_g_mm) <= span:
        x = xat(float(allowance_g_mm))
        out.lines.append(dia.Line(((x, pbot), (x, ptop)), "allowance", 1.1, "allowance", dash=(4, 2)))
        words = f"allowance {_number(float(allowance_g_mm))} g·mm"
        w = pdfpage.width(words, "regular", _SIZE)
        lx = min(max(x - w / 2, px0), x0 + width - w)
        out.texts.append(_label((words,), lx, ptop + 2 + dia.DESCENT * _SIZE, "left", "allowance", "allowance"))
    elif allowance_g_mm:
        t = _wrapped(f"The allowance, {_number(float(allowance_g_mm))} g·mm, lies beyond the largest band.", x0, y,
                     width, "allowance", "legend")
        out.texts.append(t)
        y = t.box.y0 - 3
    t = _wrapped(f"As-found unbalance in g·mm, bands of {_number(bin_width_g_mm)} g·mm (the last band holds the "
                 "largest); height: rotors in the band.", x0, y, width, "ink", "legend")
    out.texts.append(t)
    out.height = top - t.box.y0 + 4
    return out


def trend_layout(*, months, width: float = 520.0, x0: float = 0.0, top: float = 0.0) -> dia.Layout:
    """The as-found mean per month (``months``: dicts with month, jobs, as_found_mean_g_mm) as a line
    through one dot per month; month names thinned so that they never touch."""
    out = dia.Layout(x0, top, width)
    title = _wrapped("As-found unbalance, mean of all planes per month", x0, top, width, "ink", "title", 9.0, "bold")
    out.texts.append(title)
    values = [float(m["as_found_mean_g_mm"]) for m in months]
    ystep = nice_step(max(values, default=1.0) or 1.0)
    ytop = 4 * ystep
    ynums = [ystep * k for k in range(5)]
    left_w = max(pdfpage.width(_number(v), "regular", _SIZE) for v in ynums) + 6
    px0, px1 = x0 + left_w + 4, x0 + width - 20
    ptop = title.box.y0 - 8
    height = 110.0
    pbot = ptop - height
    out.lines.append(dia.Line(((px0, pbot), (px1, pbot)), "ink", 0.8, "axis"))
    out.lines.append(dia.Line(((px0, pbot), (px0, ptop)), "ink", 0.8, "axis"))
    for v in ynums:
        y = pbot + height * v / ytop
        out.lines.append(dia.Line(((px0 - 3, y), (px0, y)), "ink", 0.5, "tick"))
        out.texts.append(_label((_number(v),), px0 - 5, y - _SIZE * 0.35, "right", "muted", "axis-number"))
    n = len(values)
    pitch = (px1 - px0) / max(n, 1)
    xs = [px0 + pitch * (k + 0.5) for k in range(n)]
    pts = [(x, pbot + height * v / ytop) for x, v in zip(xs, values)]
    if len(pts) > 1:
        out.lines.append(dia.Line(tuple(pts), "correction", 1.2, "trend"))
    for x, y in pts:
        out.circles.append(dia.Circle(x, y, 2.2, "correction", 0, fill=True))
    widest = max((pdfpage.width(str(m["month"]), "regular", _SIZE) for m in months), default=0.0)
    every = max(1, math.ceil((widest + 2 * _GAP) / max(pitch, 1e-9)))
    base = pbot - 7 - dia.ASCENT * _SIZE
    for k in range(0, n, every):
        out.texts.append(_label((str(months[k]["month"]),), xs[k], base, "centre", "muted", "axis-number"))
    t = _wrapped("g·mm as found, mean over every plane of the month's jobs; one dot per month"
                 + (f", month names every {every}" if every > 1 else "") + ".",
                 x0, base - dia.DESCENT * _SIZE - 4, width, "ink", "legend")
    out.texts.append(t)
    out.height = top - t.box.y0 + 4
    return out


def chart_svg(lay: dia.Layout, title: str) -> str:
    from toolkit.export.svg import layout_svg

    return layout_svg(lay, title)
