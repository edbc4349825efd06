"""The diagrams of the browser face through Starlette's test client: the tolerance page's side view, the
guided run's live polar diagram and each plane's work-order diagram; the SVG is in the page, parses as XML,
escapes what a person typed, and the fonts it names are served.

Behaviour checks only: the numbers drawn are those of the command line and of the work order (tested
there), so no published check value is needed here.
"""

from __future__ import annotations

import re
import xml.etree.ElementTree as ET

import pytest
from starlette.testclient import TestClient

from toolkit.register.store import open_register
from toolkit.web.app import create_app
from toolkit.web.run import example_values
from toolkit.export.svg import font_files

SVG = "{http://www.w3.org/2000/svg}svg"


@pytest.fixture
def client(tmp_path):
    reg = open_register(tmp_path / "register.sqlite3")
    yield TestClient(create_app(reg, out=tmp_path / "orders"), base_url="http://127.0.0.1:8470",
                     follow_redirects=False)
    reg.close()


def _token(client, path="/tolerance") -> str:
    return re.search(r'name="csrf" value="([^"]+)"', client.get(path).text).group(1)


def _svgs(html: str) -> list[ET.Element]:
    """Every <svg> element of the page, each parsed as XML on its own."""
    found = re.findall(r"<svg\b.*?</svg>", html, re.S)
    return [ET.fromstring(s) for s in found]


def _texts(svg: ET.Element) -> str:
    return " ".join("".join(t.itertext()) for t in svg.iter("{http://www.w3.org/2000/svg}text"))


def test_tolerance_page_draws_the_rotor_from_the_side(client):
    page = client.post("/tolerance", data={"csrf": _token(client), "grade": "G6.3", "mass": "412 kg",
                                           "speed": "1480 rpm", "bearing_span": "900 mm", "com_from_a": "400 mm",
                                           "plane": "I=-120 mm\nII=1010 mm"})
    assert page.status_code == 200
    (svg,) = _svgs(page.text)
    assert svg.tag == SVG
    words = _texts(svg)
    assert "plane I" in words and "plane II" in words and "bearing A" in words and "centre of mass" in words
    # plane I lies 120 mm outboard of bearing A: the left end is plane I, so bearing A is 120 mm from it
    assert "bearing A: 120.0 mm" in words and "centre of mass: 520.0 mm" in words


def test_tolerance_page_without_a_span_draws_no_side_view(client):
    page = client.post("/tolerance", data={"csrf": _token(client), "grade": "G6.3", "mass": "412 kg",
                                           "speed": "1480 rpm"})
    assert page.status_code == 200 and "Allowance" in page.text and "<svg" not in page.text


def test_the_readings_step_shows_a_live_diagram_and_its_script(client):
    token = _token(client, "/run")
    page = client.post("/run", data={"csrf": token, "step": "angles", "go": "next", **example_values()})
    assert page.status_code == 200 and 'src="/static/live.js"' in page.text
    (svg,) = _svgs(page.text)
    words = _texts(svg)
    assert "reading 96.50 g at 112°" in words and "reading 64.50 g at 251°" in words and "keyway" in words
    assert client.get("/static/live.js").status_code == 200


def test_the_live_diagram_follows_what_is_typed_and_escapes_it(client):
    values = example_values() | {"p1_reading": "40 g@30", "reference": "<script>alert(1)</script> & mark"}
    drawn = client.get("/run/diagram", params=values)
    assert drawn.status_code == 200
    assert "<script>" not in drawn.text and "&lt;script&gt;" in drawn.text
    (svg,) = _svgs(drawn.text)
    words = _texts(svg)
    assert "reading 40.00 g at 30°" in words and "<script>alert(1)</script> & mark" in words
    # the corrections of a complete run come with add or remove in words
    assert re.search(r"correction (add|remove) ", words)


def test_an_unfinished_reading_is_named_not_drawn(client):
    drawn = client.get("/run/diagram", params=example_values() | {"p1_reading": "96.5 g@<b>"})
    (svg,) = _svgs(drawn.text)
    assert "reading 96.50 g at 112°" not in _texts(svg)
    assert "Not drawn" in drawn.text and "&lt;b&gt;" in drawn.text and "<b>" not in drawn.text


def test_trial_runs_are_drawn_with_their_trial_masses(client):
    values = example_values() | {"kind": "runs", "sensors": "near\nfar", "original": "4.2 mm/s@285\n3.1 mm/s@40",
                                 "trial1": "drive-end hub=25 g@0", "readings1": "6.0 mm/s@250\n3.4 mm/s@60"}
    (svg,) = _svgs(client.get("/run/diagram", params=values).text)
    words = _texts(svg)
    assert "original, near: reading 4.200 mm/s at 285°" in words
    assert "trial run 1, drive-end hub: trial 25.00 g at 0°" in words


def test_the_corrections_step_shows_each_planes_work_order_diagram(client):
    token = _token(client, "/run")
    page = client.post("/run", data={"csrf": token, "step": "runs", "go": "next", **example_values()})
    assert page.status_code == 200
    svgs = _svgs(page.text)
    assert len(svgs) == 3  # the live diagram and one per plane
    titles = [svg.get("aria-label") or "".join(svg.find("{http://www.w3.org/2000/svg}title").itertext())
              for svg in svgs[1:]]
    assert any("drive-end hub" in t for t in titles) and any("fan-end rim" in t for t in titles)


def test_the_diagrams_style_is_allowed_by_its_hash_and_no_other_inline_style(client):
    page = client.get("/tolerance")
    policy = page.headers["content-security-policy"]
    style_src = re.search(r"style-src ([^;]+)", policy).group(1).split()
    assert "'unsafe-inline'" not in style_src and any(s.startswith("'sha256-") for s in style_src)


def test_the_fonts_the_diagrams_name_are_served_and_nothing_else(client):
    sheet = client.get("/fonts.css")
    assert sheet.status_code == 200 and sheet.headers["content-type"].startswith("text/css")
    for path in font_files().values():
        assert f"/fonts/{path.name}" in sheet.text
        served = client.get(f"/fonts/{path.name}")
        assert served.status_code == 200 and served.content == path.read_bytes()
    for crafted in ("..%2Fpdfpage.py", "LICENSE", "%2Fetc%2Fpasswd", "DejaVuSans.ttf.bak"):
        assert client.get(f"/fonts/{crafted}").status_code == 404
    assert '<link rel="stylesheet" href="/fonts.css">' in client.get("/tolerance").text


#: Two sensors and two trial runs of the invented field job in examples/job-fan-runs.toml (invented data).
TRIAL_RUNS = {"p1_name": "near", "p2_name": "far", "kind": "runs", "sensors": "drive end\nfree end",
              "original": "17.50 um@253.7\n15.28 um@52.2", "trial1": "near=25 g@0",
              "readings1": "29.94 um@230.9\n13.26 um@35.6", "trial2": "near=25 g@0\nfar=25 g@90",
              "readings2": "35.07 um@229.3\n13.51 um@313.4"}


def test_the_corrections_step_shows_the_influence_coefficients_with_units(client):
    from toolkit.web.run import preview

    values = example_values() | TRIAL_RUNS
    _text, order, errors, _v = preview(values)
    assert not errors
    page = client.post("/run", data={"csrf": _token(client, "/run"), "step": "runs", "go": "next", **values})
    assert page.status_code == 200
    table = re.search(r'<table class="numbers" id="coefficients">(.*?)</table>', page.text, re.S).group(1)
    for sensor, plane, words in order.field_record.coefficient_rows():
        assert f"<td>{sensor}</td><td>{plane}</td><td>{words}</td>" in table
        assert " µm per g at " in words and words.endswith("(lag)")
    assert table.count("<tr>") == 1 + 4
    assert "Condition number of the coefficient matrix" in page.text
    assert "What the check run should read" in page.text


def test_a_coefficient_warning_is_shown(client):
    # the far trial barely changes the readings (invented): a small trial effect, ill-conditioned planes
    values = example_values() | TRIAL_RUNS | {"trial2": "far=25 g@90", "readings2": "17.9 um@253\n15.0 um@52"}
    page = client.post("/run", data={"csrf": _token(client, "/run"), "step": "runs", "go": "next", **values})
    assert page.status_code == 200
    assert "Warning (trial runs): trial effect too small in run &#39;trial run 2&#39;" in page.text
    assert "Warning (trial runs): ill-conditioned planes: condition number 64.5" in page.text


@pytest.mark.parametrize("readings, unit", [({}, "g"), ({"p1_reading": "15440 g*mm@112", "p2_reading": "50310 g*mm@251"},
                                                         "g*mm")])
def test_the_live_diagram_draws_corrections_and_allowances_in_the_readings_unit(client, readings, unit):
    from toolkit.units import format_number
    from toolkit.web.run import preview

    values = example_values() | readings
    _text, order, errors, _v = preview(values)
    assert not errors
    page = client.post("/run", data={"csrf": _token(client, "/run"), "step": "runs", "go": "next", **values})
    live, *planes = _svgs(page.text)
    words = _texts(live)
    radius = {"g": lambda p: p.radius_mm, "g*mm": lambda p: 1.0}[unit]
    for p in order.planes:  # one scale: the correction and the allowance in the unit the reading was typed in
        assert f"correction {p.correction_action} {format_number(p.correction_g_mm / radius(p), 4)} {unit} at" \
            in " ".join(words.split())
        assert f"plane {p.name}: allowance circle {format_number(p.limit / radius(p), 4)} {unit}" in words
    assert ("g·mm" in words) is False and words.count("Scale: the rotor outline stands for") == 1
    assert "; " not in words.split("Scale: the rotor outline stands for", 1)[1].split(".", 1)[0]
    for svg in [live, *planes]:  # the angle sense on every polar diagram
        assert "counted against rotation" in _texts(svg)
    for svg, p in zip(planes, order.planes):  # each plane's own diagram: its allowance circle, value and unit
        assert f"allowance circle {format_number(p.limit, 4)} g·mm" in _texts(svg)
