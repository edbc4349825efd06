"""Paper: A4 or Letter from the job's [shop] paper, the command line or the unit system, in the PDF's page
size, the workbook's page set-up and the values-used list."""

import io
from pathlib import Path

import openpyxl
import pytest
from pypdf import PdfReader

from toolkit.cli import main
from toolkit.export import pdf, xlsx
from toolkit.workorder.build import demo_order, order_from_file
from toolkit.workorder.job import JobError

EXAMPLES = Path(__file__).resolve().parents[1] / "examples"
A4 = (595.2756, 841.8898)   # ISO 216: 210 mm x 297 mm, in points (1 in = 72 pt = 25.4 mm)
LETTER = (612.0, 792.0)     # ANSI/ASME Y14.1 Letter: 8.5 in x 11 in, in points
XL_A4, XL_LETTER = 9, 1     # ECMA-376 Part 1, 18.3.1.63 pageSetup paperSize: 1 Letter, 9 A4


def _job(tmp_path, paper_line: str, units: str = "imperial") -> Path:
    text = (EXAMPLES / "job-blower-imperial.toml").read_text(encoding="utf-8")
    text = text.replace('[shop]\nunits = "imperial"', f'[shop]\nunits = "{units}"\n{paper_line}')
    path = tmp_path / "job.toml"
    path.write_text(text, encoding="utf-8")
    return path


def _size(data: bytes):
    box = PdfReader(io.BytesIO(data)).pages[0].mediabox
    return float(box.width), float(box.height)


def _paper_row(order):
    return next(s for s in order.settings if s.name == "paper")


def test_default_follows_the_unit_system():
    metric, imperial = demo_order(), order_from_file(EXAMPLES / "job-blower-imperial.toml")
    assert metric.paper == "A4" and imperial.paper == "Letter"
    assert _size(pdf.to_bytes(metric)) == pytest.approx(A4, abs=0.01)
    assert _size(pdf.to_bytes(imperial)) == pytest.approx(LETTER, abs=0.01)
    assert "the default for imperial units" in _paper_row(imperial).value and not _paper_row(imperial).given


@pytest.mark.parametrize("line, paper, size, xl", [('paper = "A4"', "A4", A4, XL_A4),
                                                   ('paper = "letter"', "Letter", LETTER, XL_LETTER)])
def test_job_file_chooses(tmp_path, line, paper, size, xl):
    order = order_from_file(_job(tmp_path, line, units="metric" if paper == "Letter" else "imperial"))
    assert order.paper == paper
    row = _paper_row(order)
    assert row.given and "from the job file" in row.value
    assert _size(pdf.to_bytes(order)) == pytest.approx(size, abs=0.01)
    wb = openpyxl.load_workbook(io.BytesIO(xlsx.to_bytes(order)))
    assert int(wb.active.page_setup.paperSize) == xl
    text = " ".join(" ".join(p.extract_text().split()) for p in PdfReader(io.BytesIO(pdf.to_bytes(order))).pages)
    assert f"paper {row.value}" in text  # the values-used list says which paper and why


def test_bad_paper_in_the_job_is_refused(tmp_path):
    with pytest.raises(JobError, match=r"paper.*'B5' is not allowed"):
        order_from_file(_job(tmp_path, 'paper = "B5"'))


def test_command_line_option(tmp_path, capsys):
    out = tmp_path / "o"
    assert main(["order", str(_job(tmp_path, 'paper = "Letter"')), "--paper", "a4", "--out", str(out)]) in (0, 1)
    (pdf_file,) = out.glob("*.pdf")
    assert _size(pdf_file.read_bytes()) == pytest.approx(A4, abs=0.01)
    (xlsx_file,) = out.glob("*.xlsx")
    assert int(openpyxl.load_workbook(xlsx_file).active.page_setup.paperSize) == XL_A4
    text = " ".join(" ".join(p.extract_text().split()) for p in PdfReader(pdf_file).pages)
    assert "from the command line" in text and "command line" in text
    assert main(["demo", "--paper", "Letter", "--out", str(tmp_path / "d")]) == 0
    assert _size((tmp_path / "d" / "DEMO-0001.pdf").read_bytes()) == pytest.approx(LETTER, abs=0.01)


def test_command_line_refuses_other_papers(tmp_path, capsys):
    assert main(["demo", "--paper", "B5", "--out", str(tmp_path / "d")]) == 2
    err = capsys.readouterr().err.strip()
    assert len(err.splitlines()) == 1 and "A4 or Letter" in err
    assert not (tmp_path / "d").exists()


def test_batch_option(tmp_path):
    out = tmp_path / "b"
    main(["batch", str(EXAMPLES / "planner.csv"), "--paper", "Letter", "--out", str(out)])
    files = [f for f in out.glob("*.pdf")]
    assert files
    for f in files:
        for page in PdfReader(f).pages:
            assert (float(page.mediabox.width), float(page.mediabox.height)) == pytest.approx(LETTER, abs=0.01)
