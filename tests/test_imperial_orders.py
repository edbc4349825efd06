"""An inch-pound job's work order speaks inch-pound in its operations, in both exporters.

Regression for a defect where `examples/job-blower-imperial.toml` gave a row "Mass [oz] 0.797" beside
"radius 228.6 mm ... (weigh the stack: 22.6 g)": the fabrication planner was called without the job's
unit system. Unit factors (source): 1 in = 25.4 mm and 1 oz = 28.349523125 g exactly (international yard and pound
agreement, 1959).
"""

from __future__ import annotations

import io
import re
from pathlib import Path

import pytest

from toolkit.export import pdf, xlsx
from toolkit.workorder.build import order_from_file

EXAMPLE = Path(__file__).resolve().parents[1] / "examples" / "job-blower-imperial.toml"
METRIC = re.compile(r"\d\s*(?:mm|g)\b(?!·)|\bg·mm\b")


@pytest.fixture(scope="module")
def order():
    return order_from_file(EXAMPLE)


def test_operations_carry_inch_and_ounce_only(order):
    assert order.units == "imperial"
    for op in order.operations:
        words = op.description + " " + " ".join(f"{k}: {v}" for k, v in op.details)
        assert not METRIC.search(words), words
        assert " in" in op.description or " oz" in words
    # the washer stack's weight reads in ounces: 9 in is 228.6 mm exactly
    assert any(v.endswith(" oz") for op in order.operations for _k, v in op.details)
    assert all(op.radius_mm == pytest.approx(9 * 25.4) for op in order.operations)


def test_the_pdf_operations_table_has_no_metric_figure(order):
    from pypdf import PdfReader

    text = " ".join((page.extract_text() or "") for page in PdfReader(io.BytesIO(pdf.to_bytes(order))).pages)
    operations = text[text.index("OPERATIONS"):text.upper().index("PREDICTED RESIDUAL")]
    assert not METRIC.search(operations), METRIC.findall(operations)


def test_the_workbook_operation_rows_have_no_metric_figure(order):
    from openpyxl import load_workbook

    ws = load_workbook(io.BytesIO(xlsx.to_bytes(order))).worksheets[0]
    rows = [" ".join(str(c.value) for c in row if c.value is not None) for row in ws.iter_rows()]
    ops = [r for r in rows if "washers: stack" in r]
    assert len(ops) == len(order.operations)
    for r in ops:
        assert not METRIC.search(r), r


def test_an_inch_job_stacks_inch_washers_unless_it_names_a_metric_series(order):
    from toolkit.workorder.build import build_order
    from toolkit.workorder.job import parse_job

    assert all(op.details and "inch SAE" in op.description for op in order.operations)
    assert not any(re.search(r"\bM\d+\b", op.description) for op in order.operations)
    used = {s.name: s.value for s in order.settings}
    assert used["washer series, plane inboard"] == "inch SAE (the default for imperial units)"
    text = EXAMPLE.read_text(encoding="utf-8").replace('washer_size = "5/16"\n', 'washer_series = "ISO 7089"\n')
    metric = build_order(parse_job(text, origin=str(EXAMPLE), base=EXAMPLE.parent))
    outboard = [op for op in metric.operations if op.plane == "outboard"]
    assert outboard and all("ISO 7089" in op.description for op in outboard)
    assert all("inch SAE" in op.description for op in metric.operations if op.plane == "inboard")
    assert {s.name: s for s in metric.settings}["washer series, plane outboard"].given


def test_an_inch_gram_job_prints_grams_and_gram_inches(order):
    from toolkit.workorder.build import build_order
    from toolkit.workorder.job import parse_job

    text = EXAMPLE.read_text(encoding="utf-8").replace('units = "imperial"', 'units = "inch-gram"')
    gram = build_order(parse_job(text, origin=str(EXAMPLE), base=EXAMPLE.parent))
    assert gram.units == "inch-gram" and gram.paper_name == "Letter"
    for op in gram.operations:
        words = op.description + " " + " ".join(v for _k, v in op.details)
        assert re.search(r"\d g\b", words) and " in" in words and not re.search(r"\d\s*(mm|oz)\b", words), words
    from toolkit.formatting import Formatter

    shown = Formatter("inch-gram").unbalance(gram.planes[0].initial_g_mm)
    assert shown.endswith(" g·in")
    # 6.4 oz·in in g·in: 6.4 × 28.349523125 g (exact, international yard and pound, 1959)
    assert float(shown.split()[0]) == pytest.approx(6.4 * 28.349523125, rel=1e-3)


def test_an_inch_job_drills_from_the_basic_inch_set_and_says_so():
    from toolkit.fabricate.stock import drills
    from toolkit.workorder.build import build_order
    from toolkit.workorder.job import parse_job

    fan = EXAMPLE.parent / "job-fan-readings.toml"
    text = (fan.read_text(encoding="utf-8").replace('units = "metric" ', 'units = "imperial"', 1)
            .replace('drills = ["6 mm", "8 mm", "10 mm", "12 mm", "14 mm", "16 mm", "20 mm"]', ""))
    order = build_order(parse_job(text, str(fan), fan.parent))
    holes = [op for op in order.operations if op.kind == "hole"]
    basic = {d.size for d in drills("inch-basic")}
    assert holes and all(any(f"drill radial {size} " in op.description for size in basic) for op in holes)
    for op in order.operations:
        assert not METRIC.search(op.description + " " + " ".join(v for _k, v in op.details)), op.description
    used = {s.name: s.value for s in order.settings}["drill set"]
    assert used.startswith("the basic inch set (1/8,") and used.endswith("the default for imperial units")
