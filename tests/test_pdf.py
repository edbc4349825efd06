"""The PDF work order: known text in the extracted pages (pypdf), page numbering, determinism, vector-only
diagrams, combined documents, odd characters, overwrite refusal."""

import dataclasses
import io

import pytest
from pypdf import PdfReader

from toolkit.errors import OutputError
from toolkit.workorder import pdf
from toolkit.workorder.build import demo_order
from toolkit.workorder.model import Identification, example_order


def _pages(data: bytes) -> list[str]:
    return [page.extract_text() for page in PdfReader(io.BytesIO(data)).pages]


def _flat(text: str) -> str:
    return " ".join(text.split())


@pytest.fixture(scope="module")
def demo():
    order = demo_order()
    return order, pdf.to_bytes(order)


def test_first_page_identification_and_allowances(demo):
    order, data = demo
    first = _flat(_pages(data)[0])
    assert "BALANCING WORK ORDER" in first and "DEMO-0001" in first
    assert "counted against rotation" in first and "keyway" in first
    for plane in order.planes:
        # the allowance printed to 4 significant figures, with its unit
        assert f"{plane.tolerance.u_per_g_mm:.0f} g·mm" in first
    assert "ISO 21940-11:2016, 6.3.3" in first


def test_operations_with_action_and_angle_sense(demo):
    order, data = demo
    text = _flat(" ".join(_pages(data)))
    hole, plate = order.operations
    assert "REMOVE: hole 1 of 1: drill radial" in text
    assert f"{hole.angle_deg:g}° from keyway, against rotation" in text
    assert "ADD: plate: weld a rolled" in text
    assert f"{plate.angle_deg:g}° from keyway, against rotation" in text
    assert "PASS" in text


def test_diagram_labels_in_words(demo):
    _order, data = demo
    text = _flat(" ".join(_pages(data)))
    assert "Plane drive-end hub: drill, outer surface" in text
    assert "1: drilled hole, remove" in text
    assert "2: weld-on plate, add" in text
    assert "ring inside rim: drilled hole (remove)" in text
    assert "bar outside rim: weld-on plate (add)" in text
    assert "allowance circle" in text and "initial unbalance" in text and "predicted residual" in text
    assert "0° = keyway" in text and "angles grow this way" in text and "direction of rotation" in text


def test_cautions_sign_off_and_sources(demo):
    order, data = demo
    text = _flat(" ".join(_pages(data)))
    for caution in order.cautions:
        assert _flat(caution)[:60] in text
    for role in ("Operator (balancing)", "Machinist (drilling / welding)", "Inspector (release)"):
        assert role in text
    assert "SOURCES" in text and "OSHA 29 CFR 1910.147" in text
    assert "VALUES USED" in text and "[shop] angle_step" in text


def test_every_page_numbered(demo):
    _order, data = demo
    pages = _pages(data)
    for n, page in enumerate(pages, start=1):
        assert f"Work order DEMO-0001 | page {n} of {len(pages)}" in _flat(page)


def test_deterministic(demo):
    order, data = demo
    assert pdf.to_bytes(order) == data


def test_vector_graphics_only(demo):
    _order, data = demo
    for page in PdfReader(io.BytesIO(data)).pages:
        xobjects = page.get("/Resources", {}).get("/XObject", {})
        assert not xobjects, "the diagrams must be drawn, not pasted as images"


def test_imperial_units():
    text = _flat(" ".join(_pages(pdf.to_bytes(example_order(units="imperial")))))
    assert "oz·in" in text and "g·mm" not in text


def test_combined_document_numbers_each_order():
    one, two = example_order("INV-A"), example_order("INV-B")
    pages = [_flat(p) for p in _pages(pdf.combined_bytes([one, two]))]
    n_one = len(_pages(pdf.to_bytes(one)))
    assert len(pages) == n_one + len(_pages(pdf.to_bytes(two)))
    assert f"Work order INV-A | page 1 of {n_one}" in pages[0]
    assert "Work order INV-B | page 1 of" in pages[n_one]


def test_text_outside_latin1_does_not_break_the_document():
    order = dataclasses.replace(example_order(), ident=Identification("ŁÓDŹ-1 ✓", "wirnik → test", "Zakład Łódź"))
    text = _flat(" ".join(_pages(pdf.to_bytes(order))))
    assert "LÓDZ-1" in text  # folded to letters the standard fonts can show


def test_write_refuses_to_overwrite(tmp_path):
    path = tmp_path / "o.pdf"
    pdf.write_pdf(example_order(), path)
    before = path.read_bytes()
    with pytest.raises(OutputError, match="already exists; give --force"):
        pdf.write_pdf(example_order("X"), path)
    assert path.read_bytes() == before
    pdf.write_pdf(example_order("X"), path, force=True)
    assert path.read_bytes() != before


def test_tabs_and_line_breaks_in_text_are_drawn_as_spaces():
    # a rotor description typed with a line break (allowed in job text) must not break the page drawing
    order = dataclasses.replace(example_order(), ident=Identification("WO-7", "fan\trotor\nsecond line",
                                                                      "Works\r\nLtd"))
    text = _flat(" ".join(_pages(pdf.to_bytes(order))))
    assert "fan rotor second line" in text
