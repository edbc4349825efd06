"""The series-statistics charts as geometry (toolkit/web/charts.py): for any data no label overlaps
another label, a dot, a bar, a circle, an axis or a tick, and everything lies inside the chart.

Behaviour checks only (layout rules of our own): no published check value here, so none needs a source.
"""

from __future__ import annotations

import xml.etree.ElementTree as ET

from hypothesis import given, settings
from hypothesis import strategies as st

from toolkit.web import charts
from toolkit.export import diagram as dia

names = st.text(alphabet=st.characters(codec="utf-8", categories=("L", "N", "Zs", "Pd")), min_size=1, max_size=60)
amount = st.floats(min_value=0.0, max_value=1e7, allow_nan=False)
angle = st.floats(min_value=0.0, max_value=359.999, allow_nan=False)
allowance = st.one_of(st.none(), st.floats(min_value=0.01, max_value=1e7, allow_nan=False))


def _clear(lay: dia.Layout) -> None:
    texts = lay.texts
    for i, a in enumerate(texts):
        for b in texts[i + 1:]:
            assert not dia.overlaps(a.box, b.box), (a.lines, b.lines)
        box = a.box
        assert lay.x0 - 0.01 <= box.x0 and box.x1 <= lay.x0 + lay.width + 0.01, a.lines
        assert lay.bottom - 0.01 <= box.y0 and box.y1 <= lay.top + 0.01, a.lines
        for line in lay.lines:
            for p, q in zip(line.points, line.points[1:]):
                assert not dia.segment_hits_box(p, q, box), (a.lines, line.kind)
        for c in lay.circles:
            if c.fill:  # a dot: its square must stay clear of the label
                assert not dia.overlaps(dia.Box(c.x - c.r, c.y - c.r, c.x + c.r, c.y + c.r), box), a.lines
            else:
                assert not dia.circle_meets_box(c.x, c.y, c.r, box), (a.lines, c.role)


@settings(max_examples=60, deadline=None)
@given(plane=names, points=st.lists(st.tuples(amount, angle), max_size=80), allow=allowance)
def test_the_scatter_never_lets_a_label_touch_anything(plane, points, allow):
    lay = charts.scatter_layout(plane=plane, points=points, allowance_g_mm=allow)
    _clear(lay)
    dots = [c for c in lay.circles if c.fill]
    assert len(dots) == len(points)
    rim = lay.circles[0]
    for c in dots:  # every dot inside the outline
        assert (c.x - rim.x) ** 2 + (c.y - rim.y) ** 2 <= (rim.r + 1e-6) ** 2


@settings(max_examples=60, deadline=None)
@given(plane=names, counts=st.lists(st.integers(min_value=0, max_value=100000), min_size=1, max_size=12),
       width=st.floats(min_value=1e-3, max_value=1e6, allow_nan=False), allow=allowance)
def test_the_histogram_never_lets_a_label_touch_anything(plane, counts, width, allow):
    lay = charts.histogram_layout(plane=plane, counts=counts, bin_width_g_mm=width, allowance_g_mm=allow)
    _clear(lay)
    assert len([line for line in lay.lines if line.kind == "bar"]) == sum(1 for c in counts if c)


months = st.lists(st.fixed_dictionaries({"month": st.sampled_from(["2025-11", "2026-01", "2026-12"]),
                                         "jobs": st.integers(1, 500),
                                         "as_found_mean_g_mm": amount}), min_size=0, max_size=60)


@settings(max_examples=60, deadline=None)
@given(months=months)
def test_the_trend_never_lets_a_label_touch_anything(months):
    _clear(charts.trend_layout(months=months))


def test_a_chart_is_one_svg_and_escapes_its_text():
    svg = charts.chart_svg(charts.scatter_layout(plane="<b>&", points=[(100.0, 30.0)], allowance_g_mm=50.0), "t")
    root = ET.fromstring(svg)
    words = " ".join("".join(t.itertext()) for t in root.iter("{http://www.w3.org/2000/svg}text"))
    assert "Plane <b>&: as found" in words and "allowance 50.00 g·mm" in words  # four figures, as the CLI prints
    assert "each job's reference mark, in the sense each job declared" in words
