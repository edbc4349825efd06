"""The polar diagram's layout, checked geometrically: no two text boxes overlap, no text box meets an arc,
the rotor outline, the allowance circle, a shape, an arrow or a leader line, and everything stays inside the
page margins, for generated planes (any number of operations up to the split limits, angles a degree apart,
long reference texts) and for the example jobs. Plus the plate orientation in words and on the drawing.

All expected properties are derived here (D; no published source): they check our layout, not a published number."""

import dataclasses
import math
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from toolkit.export import diagram as dia
from toolkit.export import pdf, pdfpage
from toolkit.workorder.build import demo_order, order_from_file
from toolkit.workorder.model import Formatter, Operation, example_order

EXAMPLES = Path(__file__).resolve().parents[1] / "examples"
KINDS = ("hole", "plate", "washers", "mass")


def check(lay: dia.Layout, left: float, right: float) -> None:
    """Assert the layout's geometry: see the module docstring."""
    boxes = [(t, t.box) for t in lay.texts]
    for i, (ta, a) in enumerate(boxes):
        assert left - 1e-6 <= a.x0 and a.x1 <= right + 1e-6, f"{ta.lines} outside the margins {a}"
        assert lay.bottom - 1e-6 <= a.y0 and a.y1 <= lay.top + 1e-6, f"{ta.lines} outside the diagram"
        for tb, b in boxes[i + 1:]:
            assert not dia.overlaps(a, b), f"{ta.lines} overlaps {tb.lines}"
        for m in lay.markers:
            assert not dia.overlaps(a, m.box), f"{ta.lines} overlaps the {m.kind} shape"
        for line in lay.lines:
            for p, q in zip(line.points, line.points[1:]):
                assert not dia.segment_hits_box(p, q, a), f"the {line.kind} runs through {ta.lines}"
        for c in lay.circles:
            assert not dia.circle_meets_box(c.x, c.y, c.r, a), f"a circle runs through {ta.lines}"
    for m in lay.markers:
        assert left <= m.box.x0 and m.box.x1 <= right
    for c in lay.circles:
        assert left <= c.x - c.r and c.x + c.r <= right and lay.bottom <= c.y - c.r and c.y + c.r <= lay.top


def _page(paper="A4"):
    w, _h = pdfpage.paper_size(paper)
    return pdfpage.MARGIN, w - 2 * pdfpage.MARGIN


def _layout(callouts, markers, reference, title, ccw, initial, predicted, allowance, paper="A4"):
    x0, width = _page(paper)
    legend = [("arrow", "warn", "initial unbalance 1234 g·mm at 12°"), ("dash", "accent", "allowance circle")]
    return dia.layout(title=title, reference=reference, angles_ccw_rotation=ccw, callouts=callouts,
                      markers=markers, initial=initial, predicted=predicted, allowance=allowance, legend=legend,
                      note="Scale: the rotor outline stands for 100 g·mm. " * 3, x0=x0, top=780.0, width=width,
                      measure=pdfpage.width, wrap=pdfpage.wrap)


texts = st.text(alphabet=st.sampled_from("abcdefgh XYZ-ŁódźΔθ東京ロ회0123456789°·"), max_size=260)
angle = st.floats(0, 359.99, allow_nan=False)


@st.composite
def operations(draw):
    n = draw(st.integers(0, 36))  # up to the largest hole pattern a job may allow
    if draw(st.booleans()):   # a cluster: operations a few degrees apart
        base = draw(angle)
        angles = [(base + draw(st.floats(0, 6))) % 360 for _ in range(n)]
    else:
        angles = [draw(angle) for _ in range(n)]
    kinds = [draw(st.sampled_from(KINDS)) for _ in range(n)]
    masses = [draw(st.floats(0.01, 99999)) for _ in range(n)]
    return list(zip(angles, kinds, masses))


@settings(max_examples=120, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(ops=operations(), reference=texts, title=texts, ccw=st.booleans(),
       initial=st.tuples(angle, st.floats(0, 70)), predicted=st.tuples(angle, st.floats(0, 70)),
       allowance=st.floats(0, 70), paper=st.sampled_from(["A4", "Letter"]))
def test_generated_diagrams_never_collide(ops, reference, title, ccw, initial, predicted, allowance, paper):
    callouts = []
    for k, (a, kind, m) in enumerate(ops, start=1):
        lines = (f"{k}: {kind}, add {m:.4g} g",) + (("length along the rim, width across the seat",)
                                                    if kind == "plate" else ())
        callouts.append(dia.Callout(a, 82.0, lines))
    lay = _layout(callouts, [(kind, a) for a, kind, _m in ops], reference, "Plane " + title, ccw, initial,
                  predicted, allowance, paper)
    x0, width = _page(paper)
    check(lay, x0, x0 + width)
    labels = [t for t in lay.texts if t.kind == "label"]
    assert len(labels) == len(ops) + 2  # every operation and both arcs are labelled


def _planes(order):
    fmt = Formatter(order.units, order.angle_reference, order.angle_sense)
    x0, width = _page(order.paper_name)
    for plane in order.planes:
        yield plane, pdf.diagram_layout(plane, fmt, order, x0, 760.0, width), x0, width


JOBS = sorted(EXAMPLES.glob("job-*.toml"))


@pytest.mark.parametrize("path", JOBS, ids=[p.stem for p in JOBS])
def test_example_jobs(path):
    order = order_from_file(path)
    for plane, lay, x0, width in _planes(order):
        check(lay, x0, x0 + width)
        assert sum(t.kind == "label" for t in lay.texts) == len(plane.operations) + 2


@pytest.mark.parametrize("order", [demo_order(), example_order(units="imperial")], ids=["demo", "imperial"])
def test_demo_and_imperial(order):
    for _plane, lay, x0, width in _planes(order):
        check(lay, x0, x0 + width)


def _crowded(reference: str):
    """A plane with 36 washers a degree apart and two plates nearby (derived here, D)."""
    base = example_order()
    plane = base.planes[0]
    ops = tuple(Operation(k, plane.name, "washers", "add", f"washers {k}", (350.0 + k) % 360, 12.5, 100.0, 150.0)
                for k in range(1, 37)) + (Operation(37, plane.name, "plate", "add", "plate", 3.0, 40.0, 300.0, 150.0),)
    planes = (dataclasses.replace(plane, operations=ops),) + base.planes[1:]
    return dataclasses.replace(base, planes=planes, angle_reference=reference)


def test_many_close_operations_and_a_long_reference():
    reference = ("the painted dot on the coupling half nearest the motor, next to the set screw over the key, "
                 "as marked by the maker on drawing 4711-B, sheet 2 of 3, revision F ") * 2
    order = _crowded(reference)
    for _plane, lay, x0, width in _planes(order):
        check(lay, x0, x0 + width)
        ref = next(t for t in lay.texts if t.kind == "reference")
        assert len(ref.lines) == 2 and ref.lines[1].endswith("… (see legend)")
        legend = " ".join(line for t in lay.texts if t.kind == "legend" for line in t.lines)
        assert " ".join(legend.split()).endswith(" ".join(f"0° = {reference}".split()))  # the full text
    data = pdf.to_bytes(order)  # and the real page is drawn
    assert data.startswith(b"%PDF")


def test_plate_orientation_in_words_and_on_the_drawing():
    order = demo_order()
    plate_plane = next(p for p in order.planes if any(op.kind == "plate" for op in p.operations))
    fmt = Formatter(order.units, order.angle_reference, order.angle_sense)
    lay = pdf.diagram_layout(plate_plane, fmt, order, 42, 760, 500)
    words = [" ".join(t.lines) for t in lay.texts]
    assert any("length along the rim, width across the seat" in w for w in words if "weld-on plate" in w)
    assert any("length along the rim" in w and "width runs across the seat" in w for w in words)
    plate = next(m for m in lay.markers if m.kind == "plate")
    op = next(op for op in plate_plane.operations if op.kind == "plate")
    assert plate.angle_deg == op.angle_deg  # the bar is turned to run along the rim at its angle


def test_the_check_sees_a_collision():
    # the geometric check itself must fail on a planted overlap (a label moved onto the rotor outline)
    lay = pdf.diagram_layout(demo_order().planes[0], Formatter("metric", "keyway", "against rotation"),
                             demo_order(), 42, 760, 500)
    label = next(t for t in lay.texts if t.kind == "label")
    rim = lay.circles[0]
    moved = dataclasses.replace(label, box=dia.Box(rim.x + rim.r - 5, rim.y - 3, rim.x + rim.r + 40, rim.y + 6))
    lay.texts[lay.texts.index(label)] = moved
    with pytest.raises(AssertionError):
        check(lay, 42, 542)
