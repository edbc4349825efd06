"""The arbor index method as a job measurement kind: the part's share is the unbalance the order corrects,
the arbor's share and the consistency check go on the order.

Check values: the two-position separation A = (U1 + U2)/2, P = (U1 - U2)/2 and, for N equal steps,
A = mean(U_k), P = mean(U_k e^{-i phi_k}) (derived here, D, from U_k = A + P e^{i phi_k}); both written out in
the test with cmath, independently of the library's least-squares solver.
"""

from __future__ import annotations

import cmath
import io
import math
from pathlib import Path

import pytest
from pypdf import PdfReader

from toolkit.cli import main
from toolkit.export import pdf
from toolkit.workorder.build import build_order
from toolkit.workorder.job import EXAMPLE, JobError, load_job, parse_job

ARBOR_EXAMPLE = Path(__file__).resolve().parent.parent / "examples" / "job-impeller-arbor.toml"
MACHINE = 'kind = "machine"\n[measurement.readings]\nA = "21000 g*mm@40"\nB = "16500 g*mm@200"'


def _job(readings: str, extra: str = "") -> str:
    assert MACHINE in EXAMPLE
    return EXAMPLE.replace(MACHINE, f'kind = "arbor-index"\n{extra}[measurement.readings]\n{readings}')


def _z(amount: float, angle: float) -> complex:
    return cmath.rect(amount, math.radians(angle))


def test_two_positions_the_part_share_is_half_the_difference():
    job = parse_job(_job('A = ["0=21000 g*mm@40", "180=15000 g*mm@230"]\n'
                         'B = ["0=16500 g*mm@200", "180=14000 g*mm@15"]'))
    order = build_order(job)
    for plane, (u1, u2) in zip(order.planes, (((21000, 40), (15000, 230)), ((16500, 200), (14000, 15)))):
        part = (_z(*u1) - _z(*u2)) / 2          # P = (U1 - U2)/2 (D)
        arbor = (_z(*u1) + _z(*u2)) / 2         # A = (U1 + U2)/2 (D)
        assert plane.initial_g_mm == pytest.approx(abs(part), rel=1e-9)
        assert plane.initial_deg == pytest.approx(math.degrees(cmath.phase(part)) % 360, abs=1e-6)
        shares = order.arbor_index[plane.name]
        assert shares["arbor"]["amount_g_mm"] == pytest.approx(abs(arbor), rel=1e-9)
        assert shares["arbor"]["angle_deg"] == pytest.approx(math.degrees(cmath.phase(arbor)) % 360, abs=1e-6)
    assert "index method" in order.measurement and "the arbor's share stays with the arbor" in order.measurement
    # two readings cannot show their consistency: the order says so for each plane
    assert sum("cannot show their consistency" in w for w in order.warnings) == 2


def test_three_equal_steps_use_every_reading_and_the_spread_check_warns():
    readings = (("16500", 200.0), ("9000", 300.0), ("12000", 80.0))
    job = parse_job(_job('A = ["21000 g*mm@40", "20000 g*mm@160", "21500 g*mm@280"]\n'
                         'B = ["16500 g*mm@200", "9000 g*mm@300", "12000 g*mm@80"]'))
    order = build_order(job)
    b = next(p for p in order.planes if p.name == "B")
    u = [_z(float(a), ang) for a, ang in readings]
    part = sum(x * cmath.exp(-1j * math.radians(120.0 * k)) for k, x in enumerate(u)) / 3   # mean(U e^-i phi) (D)
    assert b.initial_g_mm == pytest.approx(abs(part), rel=1e-9)
    # the misfits of plane B are large: the order carries the consistency warning with the key to check
    warning = next(w for w in order.warnings if w.startswith("plane B: arbor index readings"))
    assert "[measurement.readings] B" in warning and "not consistent" in warning
    assert any(w.startswith("plane B: arbor's share") and "NOT consistent" in w for w in order.warnings)
    setting = next(s for s in order.settings if s.name.startswith("arbor index"))
    assert (setting.mark, setting.given) == ("CP", False)


def test_max_spread_is_an_override_the_order_names():
    job = parse_job(_job('A = ["21000 g*mm@40", "20000 g*mm@160", "21500 g*mm@280"]\n'
                         'B = ["16500 g*mm@200", "9000 g*mm@300", "12000 g*mm@80"]', "max_spread = 0.5\n"))
    order = build_order(job)
    assert not any("not consistent" in w for w in order.warnings)
    setting = next(s for s in order.settings if s.name.startswith("arbor index"))
    assert setting.given and setting.mark == "job" and "0.5" in setting.value


def test_mass_readings_are_taken_at_the_plane_radius():
    a = parse_job(_job('A = ["0=70 g@40", "180=50 g@230"]\nB = ["0=16500 g*mm@200", "180=14000 g*mm@15"]'))
    b = parse_job(_job('A = ["0=21000 g*mm@40", "180=15000 g*mm@230"]\n'
                       'B = ["0=16500 g*mm@200", "180=14000 g*mm@15"]'))
    # 70 g and 50 g at plane A's 300 mm radius are 21 000 and 15 000 g*mm (U = m*r, D)
    assert a.measurement.readings["A"][0].m_as("g*mm") == pytest.approx(b.measurement.readings["A"][0].m_as("g*mm"))


@pytest.mark.parametrize("readings, extra, needle", [
    ('A = ["0=21000 g*mm@40"]\nB = ["0=1 g*mm@2", "180=1 g*mm@3"]', "", "measurement.readings.A: readings: 1 given"),
    ('A = "21000 g*mm@40"\nB = ["0=1 g*mm@2", "180=1 g*mm@3"]', "", "measurement.readings.A: '21000 g*mm@40' is not a list"),
    ('A = ["0=21000 g*mm@40", "21000 g*mm@40"]\nB = ["0=1 g*mm@2", "180=1 g*mm@3"]', "",
     "give INDEX=AMOUNT@ANGLE for every reading, or for none"),
    ('A = ["0=21000 g*mm@40", "0=2 g*mm@4"]\nB = ["0=1 g*mm@2", "180=1 g*mm@3"]', "", "every reading is at the same index"),
    ('B = ["0=1 g*mm@2", "180=1 g*mm@3"]', "", "measurement.readings.A: missing"),
    ('A = ["0=1 g*mm@2", "180=1 g*mm@3"]\nB = ["0=1 g*mm@2", "180=1 g*mm@3"]', "max_spread = 2\n",
     "measurement.max_spread: 2 is not allowed"),
    ('A = ["0=1 g*mm@2", "180=1 g*mm@3"]\nB = ["0=1 g*mm@2", "180=1 g*mm@3"]', "shows = \"add\"\n",
     "measurement.shows: unknown key"),
])
def test_bad_index_readings_name_the_key_and_line(readings, extra, needle):
    with pytest.raises(JobError) as info:
        parse_job(_job(readings, extra), "arbor.toml")
    assert needle in str(info.value)
    assert "line " in str(info.value)


def test_the_arbor_example_runs_and_the_pdf_shows_the_arbor_share(tmp_path, capsys):
    job = load_job(ARBOR_EXAMPLE)
    assert "invented example" in ARBOR_EXAMPLE.read_text(encoding="utf-8").lower()
    order = build_order(job)
    assert order.passed and order.arbor_index["shroud"]["consistent"] is True
    note = next(w for w in order.warnings if w.startswith("plane shroud: arbor's share"))
    assert "stays with the arbor" in note and "readings consistent" in note
    text = " ".join(" ".join(p.extract_text().split()) for p in PdfReader(io.BytesIO(pdf.to_bytes(order))).pages)
    assert "index method" in text and "from the arbor's mark" in text
    assert "arbor index: largest consistent spread" in text
    assert main(["order", str(ARBOR_EXAMPLE), "--out", str(tmp_path), "--format", "pdf"]) == 0
    capsys.readouterr()
