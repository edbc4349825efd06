"""The register's documents (toolkit.export.certificate, toolkit.export.statistics): printed with the work
orders' embedded fonts, so names in any script the fonts cover come out as written, and the certificate's
acceptance rule is the order's own rule."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from toolkit.cli import main

EXAMPLES = Path(__file__).resolve().parents[1] / "examples"

#: Names in Polish, Russian, Japanese, Greek and Korean script (invented people and firms).
CUSTOMER = "Zakład Łódź — 東京精機 (invented)"
ROTOR = "Ротор вентилятора (invented)"
OPERATOR = "Δ. Παπαδόπουλος (invented)"
INSPECTOR = "김 검사 (invented)"


def _run(capsys, *argv):
    status = main([str(a) for a in argv])
    out, err = capsys.readouterr()
    assert status == 0, err
    return json.loads(out) if "--json" in argv else out


def _fill(path: Path, target: Path) -> Path:
    from openpyxl import load_workbook

    wb = load_workbook(path)

    def cell(name):
        sheet, coord = next(iter(wb.defined_names[name].destinations))
        return wb[sheet][coord.replace("$", "")]

    cell("measured_1").value, cell("measured_2").value = 310, 420
    k = 1
    while f"cp_status_{k}" in wb.defined_names:
        cell(f"cp_status_{k}").value = "done"
        k += 1
    cell("cp_signoff_operator_name").value = OPERATOR
    cell("cp_signoff_inspector_name").value = INSPECTOR
    wb.save(target)
    return target


@pytest.fixture
def released(capsys, tmp_path):
    text = (EXAMPLES / "job-fan-readings.toml").read_text(encoding="utf-8")
    lines = [f'customer = "{CUSTOMER}"' if ln.startswith("customer =") else
             f'rotor = "{ROTOR}"' if ln.startswith("rotor =") else ln for ln in text.splitlines()]
    job = tmp_path / "job.toml"
    job.write_text("\n".join(lines) + "\n", encoding="utf-8")
    reg = tmp_path / "reg.sqlite3"
    order = _run(capsys, "order", job, "--record", "--register", reg, "--out", tmp_path / "out", "--json")
    number = order["order"]["ident"]["number"]
    xlsx = next(p for p in order["files"] if p.endswith(".xlsx"))
    _run(capsys, "register", "record", "--workbook", _fill(Path(xlsx), tmp_path / "r.xlsx"), "--register", reg, "--json")
    _run(capsys, "register", "record", number, "--status", "released", "--register", reg, "--json")
    return reg, number, order


def _fonts(reader) -> set[str]:
    names = set()
    for page in reader.pages:
        for font in page["/Resources"]["/Font"].values():
            names.add(str(font.get_object()["/BaseFont"]))
    return names


def test_certificate_prints_every_script_with_the_embedded_fonts(capsys, released, tmp_path):
    from pypdf import PdfReader

    reg, number, order = released
    cert = _run(capsys, "register", "certificate", number, "--register", reg, "--out", tmp_path / "c", "--json")
    reader = PdfReader(cert["file"])
    text = " ".join(page.extract_text() for page in reader.pages)
    for name in (CUSTOMER, ROTOR, OPERATOR, INSPECTOR, "g·mm", "°"):
        assert name in text, name
    assert "?" not in text  # nothing squeezed to a replacement character
    # embedded subsets of our fonts only, no standard (unembedded) font such as Helvetica
    assert {f.split("+", 1)[-1] for f in _fonts(reader)} <= {"DejaVuSansCondensed", "DejaVuSansCondensed-Bold",
                                                             "DroidSansFallback"}
    assert all("+" in f for f in _fonts(reader))


def test_certificate_states_the_orders_own_acceptance_rule(capsys, released, tmp_path):
    from pypdf import PdfReader

    from toolkit.workorder.model import rule_words

    reg, number, order = released
    rule = rule_words(p["rule"] for p in order["order"]["planes"])
    assert rule  # the order has a rule in words
    cert = _run(capsys, "register", "certificate", number, "--register", reg, "--out", tmp_path / "c", "--json")
    assert cert["acceptance_rule"] == rule
    text = " ".join(page.extract_text() for page in PdfReader(cert["file"]).pages)
    assert " ".join(f"Acceptance rule: {rule}.".split()) in " ".join(text.split())


def test_certificate_on_the_orders_paper(capsys, released, tmp_path):
    from pypdf import PdfReader

    from toolkit.export.pdfpage import PAPER

    reg, number, _ = released
    cert = _run(capsys, "register", "certificate", number, "--register", reg, "--out", tmp_path / "c", "--json")
    assert cert["paper"] == "A4"  # a metric job prints on A4 unless it says otherwise
    box = PdfReader(cert["file"]).pages[0].mediabox
    assert (float(box.width), float(box.height)) == pytest.approx(PAPER["A4"], abs=0.01)


def test_statistics_pdf_is_drawn_with_the_embedded_fonts(capsys, released, tmp_path):
    from pypdf import PdfReader

    reg, _, _ = released
    out = tmp_path / "s"
    stats = _run(capsys, "register", "stats", "--register", reg, "--out", out, "--status", "released", "--json")
    reader = PdfReader(next(f for f in stats["files"] if f.endswith(".pdf")))
    text = reader.pages[0].extract_text()
    assert "SERIES STATISTICS" in text and "status released" in text and "g·mm" in text
    assert all("+" in f for f in _fonts(reader))
