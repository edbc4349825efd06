"""The PDF work order: known text in the extracted pages (pypdf), page numbering, determinism, vector-only
diagrams, combined documents, odd characters, overwrite refusal."""

import dataclasses
import io

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from pypdf import PdfReader

from toolkit.errors import OutputError
from toolkit.export import pdf, pdfpage
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


#: Texts in four scripts (and a few signs) as a user might type them; each must come back from the PDF.
SCRIPTS = {"Latin": "Łódź Čech Zakład Müller-Groß", "Greek": "Δ-line θ-Ρότορας", "Cyrillic": "Ротор Щётка",
           "CJK": "東京 工場 ローター 회전자"}


def _scripts_order(number="ŁÓDŹ-1 ✓"):
    base = example_order()
    ident = Identification(number, f"{SCRIPTS['Cyrillic']} → {SCRIPTS['Greek']}", SCRIPTS["Latin"],
                           notes=SCRIPTS["CJK"])
    return dataclasses.replace(base, ident=ident, angle_reference=f"Δ mark {SCRIPTS['CJK']}")


def test_every_script_keeps_every_character():
    order = _scripts_order()
    text = _flat(" ".join(_pages(pdf.to_bytes(order))))
    for script, sample in SCRIPTS.items():
        for word in sample.split():
            assert word in text, (script, word)
    assert "ŁÓDŹ-1 ✓" in text and "→" in text
    assert "?" not in text.replace("Work order", "")  # nothing replaced by a question mark


def test_the_drilling_sources_keep_theta(demo):
    order, data = demo
    assert any("θ" in s for s in order.sources)
    text = _flat(" ".join(_pages(data)))
    assert "tan(θ/2)" in text and "tan(?/2)" not in text


def test_a_character_no_font_has_prints_as_a_visible_mark():
    # U+10000 (Linear B syllable B008 A) is in neither shipped font
    order = dataclasses.replace(example_order(), ident=Identification("WO-\U00010000", "rotor", "Works"))
    text = _flat(" ".join(_pages(pdf.to_bytes(order))))
    assert "WO-\ufffd" in text and "WO-?" not in text


def test_fonts_are_embedded_unicode_subsets():
    data = pdf.to_bytes(_scripts_order())
    fonts = set()
    for page in PdfReader(io.BytesIO(data)).pages:
        for font in page["/Resources"]["/Font"].values():
            font = font.get_object()
            assert font["/Subtype"] == "/TrueType"
            assert "/FontFile2" in font["/FontDescriptor"].get_object()  # the glyphs travel with the file
            assert "/ToUnicode" in font  # so that the text can be searched and copied
            fonts.add(str(font["/BaseFont"]).split("+", 1)[1])
    assert fonts == {"DejaVuSansCondensed", "DejaVuSansCondensed-Bold", "DejaVuSansCondensed-Oblique",
                     "DroidSansFallback"}


def test_font_files_and_licences_ship_in_the_package():
    from importlib.resources import files

    folder = files("toolkit.export") / "fonts"
    for name in ("DejaVuSansCondensed.ttf", "DejaVuSansCondensed-Bold.ttf", "DejaVuSansCondensed-Oblique.ttf",
                 "DroidSansFallback.ttf"):
        assert (folder / name).read_bytes()[:4] == b"\x00\x01\x00\x00"  # TrueType outlines (glyf)
    assert "Bitstream" in (folder / "LICENSE-DejaVu.txt").read_text(encoding="utf-8")
    assert "Apache License" in (folder / "LICENSE-DroidSansFallback.txt").read_text(encoding="utf-8")


def test_deterministic_with_every_script():
    order = _scripts_order()
    assert pdf.to_bytes(order) == pdf.to_bytes(order)


def test_combined_document_keeps_each_orders_characters():
    one, two = _scripts_order("ZAMÓWIENIE-Ł"), example_order("PLAIN-2")
    data = pdf.combined_bytes([one, two, one])
    pages = [_flat(p) for p in _pages(data)]
    n_one = len(_pages(pdf.to_bytes(one)))
    assert "ZAMÓWIENIE-Ł" in pages[0] and "東京" in " ".join(pages[:n_one])
    assert "PLAIN-2" in pages[n_one]
    assert "東京" in " ".join(pages[-n_one:])
    # the third order's fonts are the first one's, written once
    assert len(data) < len(pdf.to_bytes(one)) * 1.6 + len(pdf.to_bytes(two))


@pytest.mark.parametrize("units, paper, size", [
    ("metric", "", (595.2756, 841.8898)),    # ISO 216 A4, 210 mm x 297 mm in points
    ("imperial", "", (612, 792)),            # ANSI Letter, 8.5 in x 11 in in points
    ("metric", "Letter", (612, 792)),
    ("imperial", "A4", (595.2756, 841.8898)),
])
def test_paper(units, paper, size):
    order = dataclasses.replace(example_order(units=units), paper=paper)
    for page in PdfReader(io.BytesIO(pdf.to_bytes(order))).pages:
        box = page.mediabox
        assert float(box.width) == pytest.approx(size[0], abs=0.01)
        assert float(box.height) == pytest.approx(size[1], abs=0.01)


def test_write_refuses_to_overwrite(tmp_path):
    path = tmp_path / "o.pdf"
    pdf.write_pdf(example_order(), path)
    before = path.read_bytes()
    with pytest.raises(OutputError, match="already exists; give force to overwrite it"):
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


def test_output_does_not_depend_on_what_was_drawn_before(demo):
    order, data = demo
    pdf.to_bytes(_scripts_order())  # other characters, the fallback font read
    assert pdf.to_bytes(order) == data


def test_plate_orientation_in_words(demo):
    _order, data = demo
    text = _flat(" ".join(_pages(data)))
    # the plate's operation says which size is which, and the diagram's label and legend repeat it
    assert "sizes read width × length: the width runs across the seat, the length along the rim" in text
    assert "length along the rim, width across the seat" in text


@settings(max_examples=150, deadline=None)
@given(text=st.text(alphabet=st.sampled_from("ab XY-Łźθ東京の1234567890"), max_size=200),
       limit=st.floats(20, 400), style=st.sampled_from(["regular", "bold", "italic"]))
def test_wrapped_lines_fit_and_keep_every_character(text, limit, style):
    # derived here (D): a property of our wrapping, not a published number
    lines = pdfpage.wrap(text, style, 8.0, limit)
    for line in lines:
        assert pdfpage.width(line, style, 8.0) <= limit + 1e-9 or len(line) == 1
    assert "".join(lines).replace(" ", "") == text.replace(" ", "")
