"""The SVG diagrams of the browser face, checked on the SVG itself: it parses as XML, carries a viewBox and a
title, shows every text of the layout, prints user text as text, and its text boxes (rebuilt from each
``<text>`` element's position, size and measured length) never overlap each other, a drawn line or circle,
and never leave the viewBox, for generated planes, live vector diagrams and side views (hypothesis) as well
as the examples. The polar diagram's texts stand where the PDF draws them.

Behaviour checks only: every expected property is derived here (D; no published source)."""

import dataclasses
import math
import re
import xml.etree.ElementTree as ET
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from toolkit.errors import BadInput
from toolkit.export import diagram as dia
from toolkit.export import pdf, pdfpage, svg
from toolkit.workorder.build import demo_order, order_from_file
from toolkit.workorder.model import Formatter, Operation, example_order

NS = {"s": "http://www.w3.org/2000/svg"}
EXAMPLES = Path(__file__).resolve().parents[1] / "examples"
JOBS = sorted(EXAMPLES.glob("job-*.toml"))


@dataclasses.dataclass(frozen=True)
class Drawn:
    text: str
    x: float
    y: float
    size: float
    width: float
    kind: str

    @property
    def box(self) -> dia.Box:
        """The text's box in SVG coordinates (y down): baseline ``y``, the layout's ascent and descent."""
        return dia.Box(self.x, self.y - dia.ASCENT * self.size, self.x + self.width, self.y + dia.DESCENT * self.size)


def parse(text: str) -> ET.Element:
    root = ET.fromstring(text)
    assert root.tag == "{http://www.w3.org/2000/svg}svg"
    assert root.find("s:title", NS) is not None and root.find("s:title", NS).text
    return root


def view_box(root) -> dia.Box:
    x, y, w, h = (float(v) for v in root.get("viewBox").split())
    return dia.Box(x, y, x + w, y + h)


def drawn_texts(root) -> list[Drawn]:
    return [Drawn(t.text or "", float(t.get("x")), float(t.get("y")), float(t.get("font-size")),
                  float(t.get("textLength")), t.get("data-kind")) for t in root.iter("{%s}text" % NS["s"])]


def _points(attr: str) -> list[tuple[float, float]]:
    return [tuple(float(v) for v in p.split(",")) for p in attr.split()]


def check_svg(root) -> None:
    """Assert the SVG's geometry: see the module docstring. Text boxes are shrunk by 0.05 pt, the rounding
    of the printed coordinates."""
    vb = view_box(root)
    texts = drawn_texts(root)
    segments = [(p, q) for el in root.iter("{%s}polyline" % NS["s"])
                for p, q in zip(_points(el.get("points")), _points(el.get("points"))[1:])]
    circles = [(float(c.get("cx")), float(c.get("cy")), float(c.get("r"))) for c in root.iter("{%s}circle" % NS["s"])]
    boxes = [(t, t.box.inflate(-0.05)) for t in texts]
    for i, (ta, a) in enumerate(boxes):
        assert vb.x0 <= a.x0 and a.x1 <= vb.x1 and vb.y0 <= a.y0 and a.y1 <= vb.y1, f"{ta.text!r} outside the viewBox"
        for tb, b in boxes[i + 1:]:
            assert not dia.overlaps(a, b), f"{ta.text!r} overlaps {tb.text!r}"
        for p, q in segments:
            assert not dia.segment_hits_box(p, q, a), f"a line runs through {ta.text!r}"
        for cx, cy, r in circles:
            assert not dia.circle_meets_box(cx, cy, r, a), f"a circle runs through {ta.text!r}"
            assert not (a.x0 <= cx <= a.x1 and a.y0 <= cy <= a.y1), f"a symbol sits on {ta.text!r}"


def shown(line: str, style: str) -> str:
    """A layout line as the SVG shows it (a character neither font has is U+FFFD, as in the PDF)."""
    return "".join(chars for _font, chars in pdfpage.runs(pdfpage.clean(line), style))


def _orders():
    yield "demo", demo_order()
    yield "hand-built", example_order()
    yield "imperial", example_order(units="imperial")
    for path in JOBS:
        yield path.stem, order_from_file(path)


ORDERS = list(_orders())


@pytest.mark.parametrize("order", [o for _n, o in ORDERS], ids=[n for n, _o in ORDERS])
def test_plane_svg_shows_every_text_of_the_pdf_layout(order):
    fmt = Formatter(order.units, order.angle_reference, order.angle_sense)
    width, height = pdfpage.paper_size(order.paper_name)
    for i, plane in enumerate(order.planes):
        root = parse(svg.plane_svg(order, i))
        check_svg(root)
        lay = pdf.diagram_layout(plane, fmt, order, pdfpage.MARGIN, height - pdfpage.MARGIN,
                                 width - 2 * pdfpage.MARGIN)
        expected = [shown(line, t.style) for t in lay.texts for line in t.lines if line]
        assert [d.text for d in drawn_texts(root)] == expected
        assert view_box(root).x1 - view_box(root).x0 == pytest.approx(lay.width + 8, abs=0.01)
        assert order.ident.number in root.find("s:title", NS).text


def test_plane_svg_texts_stand_where_the_pdf_draws_them(monkeypatch):
    """Record every text the PDF draws (pdfpage.draw, the one text call) and find each plane's SVG texts
    among them in the same order, at the same x and at y offset by one constant (the page position)."""
    order = demo_order()
    calls = []
    draw = pdfpage.draw

    def recording(c, x, y, text, style="regular", size=8.5, align="left"):
        w = draw(c, x, y, text, style, size, align)
        calls.append((shown(text, style), x - w if align == "right" else x - w / 2 if align == "centre" else x, y))
        return w

    monkeypatch.setattr(pdfpage, "draw", recording)
    pdf.to_bytes(order)
    for i in range(len(order.planes)):
        texts = drawn_texts(parse(svg.plane_svg(order, i)))
        words = [c[0] for c in calls]
        start = next(k for k in range(len(words)) if words[k:k + len(texts)] == [t.text for t in texts])
        offsets = set()
        for t, (_text, x, y) in zip(texts, calls[start:start + len(texts)]):
            assert t.x + pdfpage.MARGIN == pytest.approx(x, abs=0.006)  # printed with two decimals
            offsets.add(round(t.y + y, 1))
        assert len(offsets) == 1, offsets


def _with_reference(order, reference, plane_name=None):
    planes = order.planes
    if plane_name is not None:
        planes = (dataclasses.replace(planes[0], name=plane_name),) + planes[1:]
    return dataclasses.replace(order, angle_reference=reference, planes=planes)


def test_user_text_prints_as_text():
    order = _with_reference(example_order(), "<script>alert('x')</script> & keyway", plane_name="A&B <i>")
    text = svg.plane_svg(order, 0)
    root = parse(text)
    assert "<script" not in text and "<i>" not in text
    assert not list(root.iter("{%s}script" % NS["s"]))
    words = " ".join(d.text for d in drawn_texts(root))
    assert "0° = <script>alert('x')</script> & keyway" in words
    assert "Plane A&B <i>" in words
    vec = svg.vectors_svg(title="run <1> & co", reference="a\"quote\" <b>", angle_sense="with rotation",
                          vectors=[dict(label="<img src=x>", amount=1.5, unit="mm/s", angle_deg=10, role="reading")])
    root = parse(vec)
    assert "<img" not in vec and "<b>" not in vec
    assert root.find("s:title", NS).text == "run <1> & co"
    assert root.get("aria-label") == "run <1> & co"
    assert any(d.text.startswith("<img src=x>: reading 1.500 mm/s") for d in drawn_texts(root))
    side = svg.side_view_svg(length_mm=500, bearings_mm=[0, 500], planes=[("<A> & </svg>", 100)],
                             centre_of_mass_mm=250)
    assert "plane <A> & </svg>" in [d.text for d in drawn_texts(parse(side))]


def test_text_neither_font_has_shows_the_replacement_mark():
    order = _with_reference(example_order(), "mark \u0f00 here")  # Tibetan: in neither font
    words = [d.text for d in drawn_texts(parse(svg.plane_svg(order, 0)))]
    assert "0° = mark \ufffd here" in words


# -- generated polar diagrams -----------------------------------------------------------------------------

texts = st.text(alphabet=st.sampled_from("abcdefgh XYZ-ŁódźΔθ東京ロ회0123456789°·<&>\"'"), max_size=200)
angle = st.floats(0, 359.99, allow_nan=False)
KINDS = ("hole", "plate", "washers", "mass")


@st.composite
def operations(draw, plane: str):
    """Up to 36 operations (the largest hole pattern a job may allow), either anywhere on the rim or in a
    cluster a few degrees wide."""
    spread = draw(st.sampled_from([6.0, 360.0]))
    base = draw(angle)
    picks = draw(st.lists(st.tuples(st.floats(0, 1), st.sampled_from(KINDS), st.floats(0.01, 99999)), max_size=36))
    return tuple(Operation(k, plane, kind, "remove" if kind == "hole" else "add", f"operation {k}",
                           (base + f * spread) % 360.0, mass, 100.0, 150.0)
                 for k, (f, kind, mass) in enumerate(picks, start=1))


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(data=st.data(), reference=texts, units=st.sampled_from(["metric", "imperial"]),
       paper=st.sampled_from(["A4", "Letter"]), sense=st.sampled_from(["with rotation", "against rotation"]),
       initial=st.floats(0, 1e6), predicted=st.floats(0, 1e6), allowance=st.floats(1e-3, 1e6))
def test_generated_plane_svgs_never_collide(data, reference, units, paper, sense, initial, predicted, allowance):
    base = example_order(units=units)
    plane = base.planes[0]
    ops = data.draw(operations(plane.name))
    plane = dataclasses.replace(plane, operations=ops, initial_g_mm=initial, predicted_g_mm=predicted,
                                tolerance=dataclasses.replace(plane.tolerance, u_per_g_mm=allowance))
    order = dataclasses.replace(base, planes=(plane,) + base.planes[1:], angle_reference=reference,
                                angle_sense=sense, paper=paper)
    root = parse(svg.plane_svg(order, 0))
    check_svg(root)
    labels = [d for d in drawn_texts(root) if d.kind == "label"]
    assert len(labels) >= len(ops) + 2  # every operation and both arcs are labelled (a label may wrap)


ROLES = st.sampled_from(svg.VECTOR_ROLES)


@st.composite
def vectors(draw):
    n = draw(st.integers(0, 24))
    out = []
    for _ in range(n):
        v = dict(label=draw(texts), amount=draw(st.floats(0, 1e5)), unit=draw(st.sampled_from(["mm/s", "µm", "g"])),
                 angle_deg=draw(st.floats(-720, 720)), role=draw(ROLES))
        if v["role"] == "correction" and draw(st.booleans()):
            v["action"] = draw(st.sampled_from(["add", "remove"]))
        out.append(v)
    return out


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(vs=vectors(), title=texts.filter(str.strip), reference=texts.filter(str.strip),
       sense=st.sampled_from(["with rotation", "against rotation"]))
def test_generated_vector_svgs_never_collide(vs, title, reference, sense):
    root = parse(svg.vectors_svg(title=title, reference=reference, angle_sense=sense, vectors=vs))
    check_svg(root)
    words = " ".join(d.text for d in drawn_texts(root))
    assert sense in words and "0° = " in words  # the sense and the reference are printed
    arrows = [v for v in vs if v["role"] != "allowance"]
    assert sum(d.kind == "label" for d in drawn_texts(root)) >= len(arrows) + 2


def test_vector_labels_carry_unit_angle_and_action():
    args = dict(title="Invented run", reference="keyway", angle_sense="against rotation", vectors=[
        dict(label="original", amount=4.2, unit="mm/s", angle_deg=75, role="reading"),
        dict(label="T1", amount=20, unit="g", angle_deg=-30, role="trial"),
        dict(label="C1", amount=31.5, unit="g", angle_deg=242.4, role="correction", action="remove"),
        dict(label="", amount=1.2, unit="mm/s", angle_deg=0, role="allowance")])
    root = parse(svg.vectors_svg(**args))
    lay = svg.vectors_layout(**args)
    assert [d.text for d in drawn_texts(root)] == [line for t in lay.texts for line in t.lines]
    words = [" ".join(t.lines) for t in lay.texts]  # a label may wrap
    assert "original: reading 4.200 mm/s at 75°" in words
    assert "T1: trial 20.00 g at 330°" in words  # -30° is 330° in the same sense
    assert "C1: correction remove 31.50 g at 242.4°" in words
    assert "allowance circle 1.200 mm/s" in words
    note = " ".join(d.text for d in drawn_texts(root) if d.kind == "note")
    assert "4.941 mm/s" in note and "37.06 g" in note  # per unit: largest at 85 % of the outline (D)
    assert "counted against rotation" in note
    assert "Secure every trial and correction mass before a run" in note  # a caution where masses are shown
    bare = svg.vectors_layout(title="t", reference="keyway", angle_sense="with rotation", vectors=[
        dict(label="C2", amount=3, unit="g", angle_deg=10, role="correction")])
    assert "C2: correction (add or remove not stated) 3.000 g at 10°" in [" ".join(t.lines) for t in bare.texts]
    classes = {el.get("class") for el in root.iter()}
    for role in ("reading", "trial", "correction", "allowance"):
        assert any(c and f"cp-{role}" in c.split() for c in classes)
        assert re.search(rf"\.cp-{role}\b[^}}]*\{{ *(fill|stroke): #[0-9a-f]{{6}}", root.find("s:style", NS).text)


@pytest.mark.parametrize("kwargs, match", [
    (dict(angle_sense="clockwise"), "angle_sense: 'clockwise' is not allowed"),
    (dict(vectors=[dict(label="a", amount=1, unit="g", angle_deg=0, role="heavy")]), r"vectors\[0\].role"),
    (dict(vectors=[dict(label="a", amount=-1, unit="g", angle_deg=0, role="reading")]), r"vectors\[0\].amount"),
    (dict(vectors=[dict(label="a", amount=1, unit="g", angle_deg=math.nan, role="reading")]), "angle_deg"),
    (dict(vectors=[dict(label="a", amount=1, unit="", angle_deg=0, role="reading")]), r"vectors\[0\].unit"),
    (dict(vectors=[dict(label="a", amount=1, unit="g", angle_deg=0)]), "missing role"),
    (dict(vectors=[dict(label="a", amount=1, unit="g", angle_deg=0, role="correction", action="put")]), "action"),
    (dict(reference=""), "reference"),
])
def test_vectors_svg_refuses_bad_input(kwargs, match):
    args = dict(title="t", reference="keyway", angle_sense="with rotation", vectors=[]) | kwargs
    with pytest.raises(BadInput, match=match):
        svg.vectors_svg(**args)


def test_plane_index_is_checked():
    with pytest.raises(BadInput, match="plane_index: 2 is not a plane of order INV-HAND-01; give 0 to 1"):
        svg.plane_svg(example_order(), 2)
    with pytest.raises(BadInput, match="plane_index"):
        svg.plane_svg(example_order(), -1)


# -- the side view ---------------------------------------------------------------------------------------------

def check_side(lay: svg.SideView) -> None:
    """The side view's own boxes: no text box overlaps another, a bearing or centre-of-mass symbol, the
    rotor body, or any line (leaders, extension and dimension lines, plane lines, the axis)."""
    body = dia.Box(*lay.rects[0][:4])
    for i, a in enumerate(lay.texts):
        assert lay.x0 - 1e-6 <= a.box.x0 and a.box.x1 <= lay.x0 + lay.width + 1e-6 \
            and lay.bottom - 1e-6 <= a.box.y0 and a.box.y1 <= lay.top + 1e-6, f"{a.lines} outside the picture"
        for b in lay.texts[i + 1:]:
            assert not dia.overlaps(a.box, b.box), f"{a.lines} overlaps {b.lines}"
        for s in lay.symbol_boxes + [body]:
            assert not dia.overlaps(a.box, s), f"{a.lines} overlaps a symbol or the rotor"
        for line in lay.lines:
            for p, q in zip(line.points, line.points[1:]):
                assert not dia.segment_hits_box(p, q, a.box), f"the {line.kind} line runs through {a.lines}"


@st.composite
def rotors(draw):
    length = draw(st.floats(10, 20000))
    at = st.floats(0, 1).map(lambda f: f * length)
    bearings = draw(st.lists(at, min_size=1, max_size=4))
    if draw(st.booleans()):  # features crowded together
        base = draw(at)
        near = st.floats(0, 0.02).map(lambda f: min(length, base + f * length))
        planes = [(draw(texts.filter(str.strip)), draw(near)) for _ in range(draw(st.integers(0, 6)))]
        bearings = bearings + [draw(near)]
    else:
        planes = [(draw(texts.filter(str.strip)), draw(at)) for _ in range(draw(st.integers(0, 6)))]
    diameter = draw(st.none() | st.floats(1, 5000))
    return dict(length_mm=length, bearings_mm=bearings[:8], planes=planes, centre_of_mass_mm=draw(at),
                diameter_mm=diameter)


@settings(max_examples=80, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(rotor=rotors(), units=st.sampled_from(["metric", "imperial"]))
def test_generated_side_views_never_collide(rotor, units):
    lay = svg.side_view_layout(**rotor, units=units)
    check_side(lay)
    root = parse(svg.side_view_svg(**rotor, units=units))
    check_side_svg(root)
    dims = [d.text for d in drawn_texts(root) if d.kind == "dimension"]
    unit = " mm" if units == "metric" else " in"
    assert len(dims) == len(rotor["planes"]) + len(rotor["bearings_mm"]) + 2 + (rotor["diameter_mm"] is not None)
    assert all(d.endswith(unit) for d in dims), dims  # a unit on every dimension


def check_side_svg(root) -> None:
    """The SVG-level check of the side view (its lines run through the body and the symbols on purpose,
    so only texts against texts, lines and the viewBox)."""
    vb = view_box(root)
    texts = drawn_texts(root)
    segments = [(p, q) for el in root.iter("{%s}polyline" % NS["s"])
                for p, q in zip(_points(el.get("points")), _points(el.get("points"))[1:])]
    for i, a in enumerate(texts):
        box = a.box.inflate(-0.05)
        assert vb.x0 <= box.x0 and box.x1 <= vb.x1 and vb.y0 <= box.y0 and box.y1 <= vb.y1, a.text
        for b in texts[i + 1:]:
            assert not dia.overlaps(box, b.box.inflate(-0.05)), f"{a.text!r} overlaps {b.text!r}"
        for p, q in segments:
            assert not dia.segment_hits_box(p, q, box), f"a line runs through {a.text!r}"


def test_side_view_to_scale_with_its_dimensions():
    kwargs = dict(length_mm="1200 mm", bearings_mm=[0, "1.2 m"], planes=[("drive end", 150), ("fan end", 1050)],
                  centre_of_mass_mm=540, diameter_mm=300)
    lay = svg.side_view_layout(**kwargs)
    check_side(lay)
    x0, y0, x1, y1, _role = lay.rects[0]
    assert (x1 - x0) / (y1 - y0) == pytest.approx(1200 / 300)  # length and diameter on one scale
    words = [" ".join(t.lines) for t in lay.texts]
    for expected in ("plane drive end", "plane fan end", "bearing A", "bearing B", "centre of mass",
                     "plane drive end: 150.0 mm", "centre of mass: 540.0 mm", "overall length: 1200 mm",
                     "Ø 300.0 mm"):
        assert expected in words
    planes = [line for line in lay.lines if line.kind == "plane"]
    assert [p.points[0][0] for p in planes] == pytest.approx([150 * (x1 - x0) / 1200, 1050 * (x1 - x0) / 1200])
    imperial = svg.side_view_layout(**kwargs, units="imperial")
    assert "centre of mass: 21.26 in" in [" ".join(t.lines) for t in imperial.texts]  # 540 / 25.4
    root = parse(svg.side_view_svg(**kwargs))
    check_side_svg(root)


@pytest.mark.parametrize("kwargs, match", [
    (dict(length_mm=0), "length_mm: 0 mm"),
    (dict(bearings_mm=[1300]), r"bearings_mm\[0\]: 1300 mm lies outside the rotor"),
    (dict(bearings_mm=[]), "bearings_mm"),
    (dict(planes=[("A", -5)]), r"planes\[0\] position"),
    (dict(planes=[("", 5)]), r"planes\[0\] name"),
    (dict(centre_of_mass_mm="3 kg"), "centre_of_mass_mm"),
    (dict(centre_of_mass_mm=True), "centre_of_mass_mm"),
    (dict(diameter_mm=math.inf), "diameter_mm"),
    (dict(units="furlongs"), "units"),
])
def test_side_view_refuses_bad_input(kwargs, match):
    args = dict(length_mm=1200, bearings_mm=[0, 1200], planes=[("A", 150)], centre_of_mass_mm=540) | kwargs
    with pytest.raises(BadInput, match=match):
        svg.side_view_svg(**args)


# -- fonts, and the checks themselves ---------------------------------------------------------------------

def test_fonts_named_and_served():
    files = svg.font_files()
    assert set(files) == {"regular", "bold", "italic", "fallback"}
    assert all(path.is_file() and path.stat().st_size > 100_000 for path in files.values())
    css = svg.font_face_css(lambda name: "/fonts/" + name)
    for path in files.values():
        assert f"url('/fonts/{path.name}')" in css
    style = parse(svg.plane_svg(example_order(), 0)).find("s:style", NS).text
    assert f"'{svg.FONT_FAMILY}'" in style and "sans-serif" in style  # the font, and a fallback
    selectors = [sel.strip() for rule in style.split("}") if "{" in rule for sel in rule.split("{")[0].split(",")]
    assert selectors and all(sel.startswith("svg.cp-diagram ") for sel in selectors)  # nothing else on a page


def test_the_checks_see_a_collision():
    root = parse(svg.plane_svg(demo_order(), 0))
    text = next(t for t in root.iter("{%s}text" % NS["s"]) if t.get("data-kind") == "label")
    rim = next(root.iter("{%s}circle" % NS["s"]))
    text.set("x", str(float(rim.get("cx")) + float(rim.get("r")) - 5))  # a label moved onto the outline
    text.set("y", rim.get("cy"))
    with pytest.raises(AssertionError):
        check_svg(root)
    lay = svg.side_view_layout(length_mm=1000, bearings_mm=[0, 1000], planes=[("A", 100)], centre_of_mass_mm=500)
    label = lay.texts[0]
    lay.texts.append(dataclasses.replace(label, box=label.box.inflate(1)))
    with pytest.raises(AssertionError):
        check_side(lay)
