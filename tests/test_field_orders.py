"""Orders built from trial-mass runs record the field job in full, in both exporters: each run's trial
masses and readings per sensor, the influence coefficients with their units, the condition number and the
warnings, a trial-mass step before the operations, and the check run's predicted vibration per sensor.

Check values: the one-plane coefficient a = (V1 - V0) / T and the predicted reading V0 + a·x are the
influence-coefficient method (Thearle 1934), recomputed here by hand from the job's own numbers (D).
"""

from __future__ import annotations

import cmath
import io
import math
from pathlib import Path

import pytest

from toolkit.export import pdf, xlsx
from toolkit.workorder.build import build_order, order_from_file
from toolkit.workorder.job import parse_job

EXAMPLES = Path(__file__).resolve().parents[1] / "examples"
RUNS = EXAMPLES / "job-fan-runs.toml"


def _pdf_text(order) -> str:
    from pypdf import PdfReader

    text = " ".join((p.extract_text() or "") for p in PdfReader(io.BytesIO(pdf.to_bytes(order))).pages)
    return " ".join(text.split())  # wrapped lines read as one


def _xlsx_text(order) -> str:
    from openpyxl import load_workbook

    ws = load_workbook(io.BytesIO(xlsx.to_bytes(order))).worksheets[0]
    return " ".join(" ".join(str(c.value).split()) for row in ws.iter_rows() for c in row if c.value is not None)


@pytest.fixture(scope="module")
def order():
    return order_from_file(RUNS)


def test_the_runs_are_recorded_as_measured(order):
    record = order.field_record
    assert [r.name for r in record.runs][:2] == ["original", "trial near"]
    assert record.runs[1].trials == (("near", pytest.approx(25.0), pytest.approx(0.0)),)  # the job's 25 g@0
    assert record.runs[0].readings[0] == (pytest.approx(17.50), pytest.approx(253.7))  # "17.50 um@253.7"
    assert len(record.coefficients) == 4 * 2 and all(c.unit == "um per g" for c in record.coefficients)
    assert record.condition_number >= 1.0
    # the trials of the last run come off before the operations (trials_left_on = false)
    assert not record.trials_left_on and {t[0] for t in record.trials_on} == {"near", "far"}


@pytest.mark.parametrize("text_of", [_pdf_text, _xlsx_text], ids=["pdf", "xlsx"])
def test_both_exporters_print_the_field_record(order, text_of):
    text = text_of(order)
    assert "Trial-mass runs" in text or "TRIAL-MASS RUNS" in text
    assert "trial far added, near left on" in text
    assert "17.50 µm at 253.7° (lag)" in text  # the original run's first reading, as written in the job
    assert "µm per g at" in text and "Condition number of the coefficient matrix" in text
    assert "Remove the trial mass from plane near: 25.0 g at 180°" in text
    for check in order.field_record.check:
        assert check.sensor in text
    assert order.field_record.check_rows()[0][2] in text


def _one_plane_job(left_on: bool) -> str:
    return f'''
[order]
number = "F-1"
rotor = "Test fan (invented example)"
date = "2026-12-01"
[rotor]
mass = "100 kg"
service_speed = "1500 rpm"
grade = "G 6.3"
[geometry]
bearing_span = "1000 mm"
centre_of_mass = "500 mm"
[[plane]]
name = "hub"
position = "500 mm"
radius = "200 mm"
surface = "outer"
methods = ["plate"]
width = "40 mm"
[angles]
reference = "key"
sense = "with rotation"
[measurement]
kind = "runs"
phase = "lead"
sensors = ["bearing"]
trials_left_on = {str(left_on).lower()}
[[measurement.run]]
name = "original"
readings = ["10 um@0"]
[[measurement.run]]
name = "trial"
trial = {{ hub = "20 g@90" }}
readings = ["14.142136 um@45"]
'''


def test_coefficient_and_check_run_prediction_by_hand():
    order = build_order(parse_job(_one_plane_job(False), "f.toml"))
    record = order.field_record
    v0, v1, t = cmath.rect(10, 0), cmath.rect(14.142136, math.radians(45)), cmath.rect(20, math.radians(90))
    a = (v1 - v0) / t  # Thearle 1934: the reading caused by 1 g at 0° (D)
    c, = record.coefficients
    assert c.amount == pytest.approx(abs(a), rel=1e-6) and c.angle_deg == pytest.approx(
        math.degrees(cmath.phase(a)) % 360, abs=1e-4)
    plane = order.planes[0]
    x = sum(op.effect for op in plane.operations) / plane.radius_mm  # grams added, as planned (D)
    want = v0 + a * x
    got, = record.check
    assert got.amount == pytest.approx(abs(want), rel=1e-6, abs=1e-9)
    assert got.original == pytest.approx(10.0, rel=1e-6)
    assert record.trial_steps(__import__("toolkit.formatting", fromlist=["Formatter"]).Formatter())[0].startswith(
        "Remove the trial mass from plane hub: 20.0 g")


def test_trials_left_on_are_counted_in_the_prediction_and_stay():
    order = build_order(parse_job(_one_plane_job(True), "f.toml"))
    record = order.field_record
    v0, v1, t = cmath.rect(10, 0), cmath.rect(14.142136, math.radians(45)), cmath.rect(20, math.radians(90))
    a = (v1 - v0) / t
    plane = order.planes[0]
    x = sum(op.effect for op in plane.operations) / plane.radius_mm + t  # the trial stays on (D)
    assert record.check[0].amount == pytest.approx(abs(v0 + a * x), rel=1e-6, abs=1e-9)
    from toolkit.formatting import Formatter

    assert record.trial_steps(Formatter())[0].startswith("Leave the trial mass on plane hub")


def test_a_machine_order_has_no_field_record():
    assert order_from_file(EXAMPLES / "job-fan-readings.toml").field_record is None
