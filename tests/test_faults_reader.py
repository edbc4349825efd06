"""The input half of robustness: every quantity is read exactly or refused, with its field, through every
entry point (command line, job file, planner rows in .csv and .xlsx, runs files, coefficients files).

Groups follow the faults they guard against: wrong values read as right ones; overflow and vanishing
values (bounds); hangs (checked in child processes with a timeout, so a regression cannot stall the
suite); internal errors from deeply nested files; and the wording of input messages.
"""

from __future__ import annotations

import contextlib
import csv
import io
import json
import re
import subprocess
import sys
import tempfile
import zipfile
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings, strategies as st

from toolkit.cli import main
from toolkit.errors import BadInput
from toolkit.units import KINDS, Q_, magnitude, quantity, speed_rpm

ROOT = Path(__file__).resolve().parents[1]
EXAMPLES = ROOT / "examples"
JOB = EXAMPLES / "job-fan-readings.toml"
RUNS = EXAMPLES / "runs-two-plane.toml"
SETTINGS = settings(max_examples=40, deadline=None, derandomize=True,
                    suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture])


# -- helpers ----------------------------------------------------------------------------------------------

def cli(argv: list[str]) -> tuple[int, str, str]:
    """``main(argv)`` in a scratch folder with stdout and stderr captured."""
    out, err = io.StringIO(), io.StringIO()
    with tempfile.TemporaryDirectory() as scratch, contextlib.chdir(scratch):
        with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
            rc = main(argv)
    return rc, out.getvalue(), err.getvalue()


def refused(argv: list[str], *words: str) -> str:
    """The command must refuse with exit 2 and one line on stderr holding every word."""
    rc, out, err = cli(argv)
    assert rc == 2, (argv, rc, out[:300], err)
    lines = err.splitlines()
    assert len(lines) == 1 and lines[0].startswith("counterpoise"), err
    for word in words:
        assert word in err, (word, err)
    return err


def copy_with(source: Path, tmp: Path, name: str, old: str, new: str) -> Path:
    """An example file copied to ``tmp / name`` with one text replaced (the old text must be there)."""
    text = source.read_text(encoding="utf-8")
    assert old in text, old
    path = tmp / name
    path.write_text(text.replace(old, new, 1), encoding="utf-8")
    return path


def job_with(tmp: Path, old: str, new: str) -> Path:
    return copy_with(JOB, tmp, "job.toml", old, new)


def line_of(path: Path, text: str) -> int:
    for number, line in enumerate(path.read_text(encoding="utf-8").splitlines(), start=1):
        if text in line:
            return number
    raise AssertionError(text)


def order_refused(job: Path, tmp: Path, *words: str) -> str:
    return refused(["order", str(job), "--out", str(tmp / "out"), "--format", "xlsx"], *words)


PLANNER_HEADER = ["order", "rotor", "mass", "service_speed", "bearing_span", "centre_of_mass", "reference",
                  "sense", "plane1_name", "plane1_position", "plane1_radius", "plane1_surface",
                  "plane1_methods", "plane1_reading"]
GOOD_ROW = {"order": "R-1", "rotor": "invented test rotor", "mass": "412 kg", "service_speed": "1480 rpm",
            "bearing_span": "1200 mm", "centre_of_mass": "540 mm", "reference": "keyway",
            "sense": "against rotation", "plane1_name": "A", "plane1_position": "150 mm",
            "plane1_radius": "300 mm", "plane1_surface": "outer", "plane1_methods": "drill",
            "plane1_reading": "2000 g*mm@40"}


def planner(tmp: Path, rows: list[dict], suffix: str, header=PLANNER_HEADER) -> Path:
    """An invented planner sheet of the given rows (missing cells take the good row's values)."""
    values = [[row.get(h, GOOD_ROW.get(h, "")) for h in header] for row in rows]
    path = tmp / f"sheet{suffix}"
    if suffix == ".csv":
        with path.open("w", newline="", encoding="utf-8") as handle:
            writer = csv.writer(handle)
            writer.writerow(header)
            writer.writerows(values)
    else:
        from openpyxl import Workbook

        wb = Workbook()
        ws = wb.active
        ws.append(header)
        for row in values:
            ws.append(row)
        wb.save(path)
    return path


def batch(sheet: Path, tmp: Path) -> dict:
    rc, out, err = cli(["batch", str(sheet), "--out", str(tmp / "out"), "--force", "--json"])
    assert rc in (0, 1), (rc, err)
    return json.loads(out)


def row_reasons(result: dict) -> dict[int, str]:
    return {f["row"]: f["reason"] for f in result["failures"]}


def runs_with(tmp: Path, old: str, new: str) -> Path:
    return copy_with(RUNS, tmp, "runs.toml", old, new)


@pytest.fixture(scope="module")
def coefficients(tmp_path_factory) -> Path:
    path = tmp_path_factory.mktemp("coeff") / "coefficients.json"
    rc, out, err = cli(["solve", str(RUNS), "--save-coefficients", str(path), "--json"])
    assert rc in (0, 1) and path.exists(), err
    return path


def solve_with(coeff: Path) -> list[str]:
    return ["solve", "--coefficients", str(coeff), "--original", "17.50 um@253.7", "--original", "15.28 um@52.2",
            "--original", "32.89 um@290.3", "--original", "24.74 um@93.3"]


# == Wrong values read as right ones ==========================================================================

SPOILED = ["1 480 rpm", "1480 rpm 2", "1480 rpm@2", "1480 rpm%", "1,480 rpm", "1'480 rpm", "1_480 rpm",
           "1\u202f480 rpm", "1480 rpm*2", "2*1480 rpm"]


@pytest.mark.parametrize("speed", SPOILED)
def test_cli_speed_with_anything_but_a_number_and_a_unit_is_refused(speed):
    # "1 480 rpm" was read as 480 rpm: a three times looser allowance and exit 0
    refused(["tolerance", "--grade", "G6.3", "--mass", "412 kg", "--speed", speed], "--speed")


@pytest.mark.parametrize("mass", ["412 kg@3", "2 kg 3", "1 285 kg", "412 kg%", "412 kg*percent", "412 kg*deg"])
def test_cli_mass_with_anything_but_a_number_and_a_unit_is_refused(mass):
    refused(["tolerance", "--grade", "G6.3", "--mass", mass, "--speed", "1480 rpm"], "--mass")


def test_cli_good_forms_give_the_published_allowance():
    # ISO 21940-11:2016, 6.3.3: U_per = 1000 * G * m / Omega; G 6.3, 412 kg, 1480 r/min -> 16,747 g*mm
    # (computed from the formula here; Omega = 2*pi*1480/60 rad/s)
    expected = 1000 * 6.3 * 412 / (2 * 3.141592653589793 * 1480 / 60)
    assert round(expected) == 16747
    for speed in ("1480 rpm", "1480 RPM", "1480 Rpm", "1480 r/min", "1480 R/MIN", "1480rpm", "+1480 rpm",
                  "1.48e3 rpm"):
        rc, out, err = cli(["tolerance", "--grade", "G6.3", "--mass", "412 kg", "--speed", speed, "--json"])
        assert rc == 0, err
        assert json.loads(out)["u_per_g_mm"] == pytest.approx(expected, rel=1e-12), speed


@pytest.mark.parametrize("old, new, key", [
    ('service_speed = "1780 rpm"', 'service_speed = "1 780 rpm"', "rotor.service_speed"),
    ('mass = "285 kg"', 'mass = "1 285 kg"', "rotor.mass"),
    ('mass = "285 kg"', 'mass = "285 kg@3"', "rotor.mass"),
    ('bearing_span = "1100 mm"', 'bearing_span = "1100 mm 2"', "geometry.bearing_span"),
    ('radius = "180 mm"', 'radius = "180 mm%"', "plane[1].radius"),
    ('hub = "9800 g*mm@318"', 'hub = "9 800 g*mm@318"', "measurement.readings.hub"),
])
def test_job_file_values_are_read_exactly_or_refused_with_line(tmp_path, old, new, key):
    # service_speed = "1 780 rpm" gave 21,982 instead of 9,632 g*mm and the order passed
    job = job_with(tmp_path, old, new)
    order_refused(job, tmp_path, f"line {line_of(job, new)}", key)


@pytest.mark.parametrize("suffix", [".csv", ".xlsx"])
def test_planner_cells_are_read_exactly_or_refused(tmp_path, suffix):
    rows = [{"order": "R-1"}, {"order": "R-2", "mass": "1 285 kg"}, {"order": "R-3", "service_speed": "1480 rpm 2"},
            {"order": "R-4", "plane1_reading": "2000 g*mm 2@40"}, {"order": "R-5", "mass": "1285 KG"}]
    result = batch(planner(tmp_path, rows, suffix), tmp_path)
    reasons = row_reasons(result)
    assert set(reasons) == {3, 4, 5, 6}, reasons
    assert "column mass" in reasons[3] and "column service_speed" in reasons[4]
    assert "column plane1_reading" in reasons[5]
    assert "column mass" in reasons[6]  # unit names other than speeds keep their case: KG is not kg
    assert result["done"] == 1


@pytest.mark.parametrize("old, new", [
    ('"17.50 um@253.7"', '"17 .50 um@253.7"'),
    ('"17.50 um@253.7"', '"1 750 um@253.7"'),
    ('trial = { near = "25 g@0" }', 'trial = { near = "25 g 2@0" }'),
    ('radius = { near = "310 mm"', 'radius = { near = "310 mm@2"'),
    ('speed = "1480 rpm"', 'speed = "1 480 rpm"'),
])
def test_runs_file_values_are_read_exactly_or_refused(tmp_path, old, new):
    refused(["solve", str(runs_with(tmp_path, old, new))], "runs.toml")


@pytest.mark.parametrize("amount", ["1_000", "1e3", "0.35", "nan"])
def test_coefficients_file_amounts_must_be_json_numbers(coefficients, tmp_path, amount):
    # float("1_000") is 1000.0: a text amount was read as a number
    document = json.loads(coefficients.read_text(encoding="utf-8"))
    document["coefficients"][0][0]["amount"] = amount
    path = tmp_path / "c.json"
    path.write_text(json.dumps(document), encoding="utf-8")
    refused(solve_with(path), "coefficients[1][1]", "need amount and angle_deg numbers")


# Thousands separators: refused, in every form (the reader accepts digits written together only).
SEPARATORS = st.sampled_from([" ", ",", "'", "_", "\u00a0", "\u2009", "\u202f", ".", "  "])


@SETTINGS
@given(head=st.integers(1, 999), groups=st.lists(st.integers(0, 999), min_size=1, max_size=3),
       sep=SEPARATORS, unit=st.sampled_from(["kg", "rpm", "mm", "g*mm", "r/min", "Hz"]))
def test_separators_inside_numbers_are_refused(head, groups, sep, unit):
    text = str(head) + "".join(f"{sep}{g:03d}" for g in groups) + f" {unit}"
    if sep == "." and len(groups) == 1:
        # "1.480 kg" is one decimal point: read exactly as 1.48, never as 1480
        kind = {"kg": "mass", "rpm": "speed", "mm": "length", "g*mm": "unbalance", "r/min": "speed",
                "Hz": "speed"}[unit]
        if kind == "speed":
            assert speed_rpm(text) == pytest.approx(float(text.split()[0]) * (60 if unit == "Hz" else 1))
        else:
            assert quantity(text, kind).magnitude == float(text.split()[0])
        return
    kind = {"kg": "mass", "rpm": "speed", "mm": "length", "g*mm": "unbalance", "r/min": "speed",
            "Hz": "speed"}[unit]
    with pytest.raises(BadInput, match=r"^x: cannot read"):
        quantity(text, kind, "x")


@SETTINGS
@given(number=st.floats(1e-3, 1e5).map(lambda x: f"{x:.6g}"), junk=st.sampled_from(
    [" 2", "@2", "%", " kg", "*2", " 2 3", "!", " (x)", "^2.5", "**99", " per", "/", "*"]))
def test_text_after_the_unit_is_refused(number, junk):
    with pytest.raises(BadInput, match=r"^--mass: cannot read"):
        quantity(f"{number} kg{junk}", "mass", "--mass")


def test_mil_is_a_thousandth_of_an_inch():
    # 1 in = 25.4 mm exactly (NIST SP 811, appendix B; ANSI/ASME Y14.5 inch), 1 mil = 0.001 in = 25.4 um
    from toolkit.vectors import parse_reading

    assert magnitude("1 mil", "displacement", "um") == pytest.approx(25.4, rel=1e-15)
    assert magnitude("2 mils", "length", "mm") == pytest.approx(0.0508, rel=1e-15)
    z, kind, unit = parse_reading("2 mil@90", "reading")
    assert (kind, unit) == ("displacement", "um") and z.imag == pytest.approx(50.8, rel=1e-15)
    rc, out, err = cli(["solve", "--original", "2 mil@285", "--trial", "10 g@0", "--with-trial", "3 mil@251.5",
                        "--json"])
    assert rc in (0, 1), err


def test_gram_inch_is_an_unbalance():
    # 1 in = 25.4 mm exactly (NIST SP 811, appendix B): 1 g*in = 25.4 g*mm
    assert magnitude("1 g*in", "unbalance", "g*mm") == pytest.approx(25.4, rel=1e-15)
    rc, out, err = cli(["drill", "--unbalance", "100 g*in", "--radius", "150 mm", "--axial", "--material", "steel",
                        "--json"])
    assert rc in (0, 1), err


# == Overflow and vanishing values: bounds at the input ======================================================

def test_cli_huge_mass_is_refused_at_the_input_with_its_bound():
    # "1e308 kg" made U_per infinite and tolerance printed "U_per inf g*mm" with exit 0
    refused(["tolerance", "--grade", "G6.3", "--mass", "1e308 kg", "--speed", "1480 rpm"], "--mass", "1e+07 kg",
            "[CP]")


def test_job_huge_mass_is_refused_with_file_and_line(tmp_path):
    job = job_with(tmp_path, 'mass = "285 kg"', 'mass = "1e308 kg"')
    order_refused(job, tmp_path, str(job), f"line {line_of(job, '1e308 kg')}", "rotor.mass", "1e+07 kg")


@pytest.mark.parametrize("grade, words", [("G 0.0000001", ["G 0.001"]), ("G 1e9", ["--grade"]),
                                          ("G 1 480", ["--grade"]), ("G 6.3 2", ["--grade"])])
def test_cli_custom_grades_are_bounded_and_read_exactly(grade, words):
    refused(["tolerance", "--grade", grade, "--mass", "412 kg", "--speed", "1480 rpm", "--custom-grade"], *words)


@pytest.mark.parametrize("argv, words", [
    (["plate", "--unbalance", "38 g@307", "--radius", "620 mm", "--width", "40 mm", "--material", "steel",
      "--step", "1e-320 mm"], ["--step", "plate size step", "0.01 mm"]),
    (["plate", "--unbalance", "38 g@307", "--radius", "620 mm", "--width", "40 mm", "--material", "steel",
      "--step", "0.001 mm"], ["--step", "plate size step", "0.01 mm"]),
    (["plate", "--unbalance", "38 g@307", "--radius", "620 mm", "--width", "40 mm", "--material", "steel",
      "--step", "1 m"], ["--step", "plate size step", "100 mm"]),
    (["drill", "--unbalance", "3000 g*mm", "--radius", "100 mm", "--axial", "--material", "steel",
      "--depth-step", "1e-320 mm"], ["--depth-step", "1e-06 mm"]),
    (["drill", "--unbalance", "3000 g*mm", "--radius", "100 mm", "--axial", "--material", "steel",
      "--depth-step", "1 m"], ["--depth-step", "100"]),
    (["plate", "--unbalance", "38 g@307", "--radius", "1e-320 mm", "--width", "40 mm", "--material", "steel"],
     ["--radius", "1e-06 mm"]),
    (["solve", "--bearing-mass", "200 kg", "--radius", "4.9e-324 mm", "--speed", "1480 rpm"], ["radius", "1e-06 mm"]),
    (["solve", "--bearing-mass", "200 kg", "--radius", "150 mm", "--speed", "4.9e-324 rpm"], ["speed", "0.001 rpm"]),
    (["solve", "--bearing-mass", "1e-320 kg", "--radius", "150 mm", "--speed", "1480 rpm"], ["mass", "1e-09 kg"]),
    (["tolerance", "--grade", "G6.3", "--mass", "412 kg", "--speed", "1e-400 rpm"], ["--speed", "0.001 rpm"]),
    (["tolerance", "--grade", "G6.3", "--mass", "412 kg", "--speed", "1e400 rpm"], ["--speed", "finite"]),
])
def test_cli_steps_radii_and_speeds_are_bounded(argv, words):
    refused(argv, *words)


@pytest.mark.parametrize("old, new, words", [
    ('mass_step = "0.1 g"', 'mass_step = "1e-320 g"', ["shop.mass_step", "0.001 g"]),
    ('mass_step = "0.1 g"', 'mass_step = "5 kg"', ["shop.mass_step", "weighing step", "1 kg"]),
    ('angle_step = "1 deg"', 'angle_step = "1e-320 deg"', ["shop.angle_step", "0.01"]),
    ('plate_step = "1 mm"', 'plate_step = "1e-320 mm"', ["shop.plate_step", "0.01 mm"]),
    ('plate_step = "1 mm"', 'plate_step = "1 m"', ["shop.plate_step", "100 mm"]),
    ('service_speed = "1780 rpm"', 'service_speed = "4.9e-324 rpm"', ["rotor.service_speed", "0.001 rpm"]),
    ('radius = "180 mm"', 'radius = "1e-320 mm"', ["plane[1].radius", "1e-06 mm"]),
    ('bearing_span = "1100 mm"', 'bearing_span = "1e20 mm"', ["geometry.bearing_span", "1e+06 mm"]),
    ('max_depth_ratio = 5', 'max_depth_ratio = 1e-320', ["shop.drilling.max_depth_ratio", "0.001"]),
    ('min_wall_mm = 2', 'min_wall_mm = 1e300', ["shop.drilling.min_wall_mm", "1e+06"]),
])
def test_job_steps_and_resolutions_are_bounded_with_line(tmp_path, old, new, words):
    job = job_with(tmp_path, old, new)
    order_refused(job, tmp_path, f"line {line_of(job, new)}", *words)


@pytest.mark.parametrize("suffix", [".csv", ".xlsx"])
def test_planner_huge_and_subnormal_values_fail_their_row(tmp_path, suffix):
    rows = [{"order": "R-1", "mass": "1e308 kg"}, {"order": "R-2", "plane1_radius": "1e-320 mm"},
            {"order": "R-3", "plane1_reading": "1e300 g*mm@40"}, {"order": "R-4"}]
    reasons = row_reasons(batch(planner(tmp_path, rows, suffix), tmp_path))
    assert set(reasons) == {2, 3, 4}, reasons
    assert "column mass" in reasons[2] and "1e+07 kg" in reasons[2]
    assert "column plane1_radius" in reasons[3] and "1e-06 mm" in reasons[3]


@pytest.mark.parametrize("old, new", [
    ('"17.50 um@253.7"', '"1e300 um@253.7"'),
    ('"17.50 um@253.7"', '"4.9e-324 um@253.7"'),
    ('trial = { near = "25 g@0" }', 'trial = { near = "1e-320 g@0" }'),
    ('radius = { near = "310 mm"', 'radius = { near = "1e300 mm"'),
])
def test_runs_file_magnitudes_are_bounded(tmp_path, old, new):
    refused(["solve", str(runs_with(tmp_path, old, new))], "[CP]")


@pytest.mark.parametrize("field, value", [
    ("amount", 1e300), ("amount", 5e-324), ("angle_deg", 1e300)])
def test_coefficients_file_magnitudes_are_bounded(coefficients, tmp_path, field, value):
    document = json.loads(coefficients.read_text(encoding="utf-8"))
    document["coefficients"][0][0][field] = value
    path = tmp_path / "c.json"
    path.write_text(json.dumps(document), encoding="utf-8")
    refused(solve_with(path), "coefficients[1][1]", "out of range")


@pytest.mark.parametrize("field, value", [("speed_rpm", 5e-324), ("speed_rpm", 1e300)])
def test_coefficients_file_speed_is_bounded(coefficients, tmp_path, field, value):
    document = json.loads(coefficients.read_text(encoding="utf-8"))
    document[field] = value
    path = tmp_path / "c.json"
    path.write_text(json.dumps(document), encoding="utf-8")
    refused(solve_with(path), field)


UNIT_OF = {"mass": "kg", "length": "mm", "speed": "rpm", "unbalance": "g*mm", "density": "kg/m^3",
           "vibration velocity": "mm/s", "displacement": "um", "acceleration": "m/s^2", "grade": "mm/s",
           "specific unbalance": "um", "force": "N"}


@SETTINGS
@given(kind=st.sampled_from(sorted(KINDS)), mantissa=st.integers(1, 9),
       exponent=st.one_of(st.integers(-330, -280), st.integers(-20, 20), st.integers(280, 330)))
def test_every_kind_accepts_exactly_its_bounds(kind, mantissa, exponent):
    # subnormal and huge magnitudes: read within the kind's bounds, refused outside with the bound named
    k = KINDS[kind]
    text = f"{mantissa}e{exponent} {UNIT_OF[kind]}"
    value = mantissa * 10.0 ** exponent if -308 < exponent < 308 else None
    inside = value is not None and k.lower <= value <= k.upper
    if inside:
        assert quantity(text, kind, "x").magnitude == pytest.approx(value, rel=1e-15)
    else:
        with pytest.raises(BadInput, match=r"^x: .*(bound of our own \[CP\]|not a finite number)"):
            quantity(text, kind, "x")


def test_kind_bounds_keep_the_allowance_finite():
    # derived here (D): the extreme corner of the bounds gives a finite U_per, far from overflow
    from toolkit.tolerance import permissible_unbalance

    mass, speed = KINDS["mass"], KINDS["speed"]
    u = permissible_unbalance("G 4000", f"{mass.upper:g} kg", f"{speed.lower:g} rpm").m_as("g*mm")
    assert 0 < u < 1e300


def test_quantities_built_in_code_keep_their_size():
    # the bounds apply to text a user writes; a computed quantity (a residual of 1e-12 g*mm) passes
    assert magnitude(Q_(1e-12, "g*mm"), "unbalance", "g*mm") == 1e-12


# == Hangs: in a child process, with a timeout ===============================================================

TOWERS = ["9**9**9 kg", "10**10**10 kg", "(9**9)**(9**9) kg", "9^9^9 kg", "2**2**2**2**2**2 kg",
          "9**9**9 g@20", "1e9**1e9 kg", "9 kg**9**9**9"]


def _child(code: str, *args: str, timeout: float = 120) -> subprocess.CompletedProcess:
    # the timeout only guards the suite against a hang; nothing here measures time
    return subprocess.run([sys.executable, "-c", code, *args], capture_output=True, text=True, timeout=timeout,
                          cwd=ROOT)


def _child_cli(argv: list[str], cwd: Path) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "toolkit", *argv], capture_output=True, text=True, timeout=120,
                          cwd=cwd)


@pytest.mark.parametrize("tower", ["9**9**9 kg", "10**10**10 kg", "(9**9)**(9**9) kg"])
def test_cli_tower_is_refused_promptly(tower, tmp_path):
    done = _child_cli(["tolerance", "--grade", "G6.3", "--mass", tower, "--speed", "1480 rpm"], tmp_path)
    assert done.returncode == 2 and "--mass" in done.stderr and len(done.stderr.splitlines()) == 1, done.stderr


def test_job_tower_is_refused_promptly(tmp_path):
    job = job_with(tmp_path, 'mass = "285 kg"', 'mass = "9**9**9 kg"')
    done = _child_cli(["order", str(job), "--out", str(tmp_path / "out"), "--format", "xlsx"], tmp_path)
    assert done.returncode == 2 and "rotor.mass" in done.stderr, done.stderr


def test_planner_tower_fails_its_row_and_the_batch_goes_on(tmp_path):
    sheet = planner(tmp_path, [{"order": "R-1", "plane1_reading": "9**9**9 g@20"}, {"order": "R-2"}], ".csv")
    done = _child_cli(["batch", str(sheet), "--out", str(tmp_path / "out"), "--json"], tmp_path)
    assert done.returncode == 1, done.stderr
    result = json.loads(done.stdout)
    assert result["done"] == 1 and "column plane1_reading" in row_reasons(result)[2], result
    assert "arithmetic" in row_reasons(result)[2], result


def test_runs_tower_is_refused_promptly(tmp_path):
    runs = runs_with(tmp_path, '"17.50 um@253.7"', '"9**9**9 um@253.7"')
    done = _child_cli(["solve", str(runs)], tmp_path)
    assert done.returncode == 2 and len(done.stderr.splitlines()) == 1, done.stderr


_READ_ALL = """
import sys
from toolkit.errors import BadInput
from toolkit.units import quantity
from toolkit.vectors import parse_vector
for text in sys.argv[1:]:
    try:
        (parse_vector(text, "mass", "x") if "@" in text else quantity(text, "mass", "x"))
        print("read", repr(text))
    except BadInput as exc:
        print("refused", str(exc)[:80])
"""


@settings(max_examples=10, deadline=None, derandomize=True)
@given(st.lists(st.builds(
    lambda base, ops, unit, at: base + "".join(ops) + " " + unit + at,
    st.sampled_from(["9", "10", "(9", "2", "99999"]),
    st.lists(st.sampled_from(["**9", "**99", "^9", "**(9**9)", ")**(9", "*9", "**1e9", "**-9"]), min_size=2,
             max_size=6),
    st.sampled_from(["kg", "g", "kg**9", "(kg)"]), st.sampled_from(["", "@20", "@9**9"])), min_size=5, max_size=12))
def test_operator_towers_never_make_the_reader_work_long(texts):
    done = _child(_READ_ALL, *texts)
    assert done.returncode == 0, done.stderr
    assert done.stdout.count("refused") == len(texts), done.stdout


def test_listed_towers_are_refused_in_one_child():
    done = _child(_READ_ALL, *TOWERS)
    assert done.returncode == 0 and done.stdout.count("refused") == len(TOWERS), done.stdout + done.stderr


# == Internal errors from nesting: one line, and in a batch the row fails =====================================

DEEP_ARRAY = "[" * 1000 + "]" * 1000
DEEP_TABLE = "{ a = " * 1000 + "1" + " }" * 1000


@pytest.mark.parametrize("deep", [DEEP_ARRAY, DEEP_TABLE], ids=["arrays", "inline-tables"])
def test_deep_job_file_is_refused(tmp_path, deep):
    job = job_with(tmp_path, 'notes = "', f'extra = {deep}\nnotes = "')
    order_refused(job, tmp_path, "nested more than 12 deep")


@pytest.mark.parametrize("deep", [DEEP_ARRAY, DEEP_TABLE], ids=["arrays", "inline-tables"])
def test_deep_runs_file_is_refused(tmp_path, deep):
    runs = runs_with(tmp_path, 'title = ', f'extra = {deep}\ntitle = ')
    refused(["solve", str(runs)], "runs.toml", "nested more than 12 deep")


@pytest.mark.parametrize("suffix", [".csv", ".xlsx"])
def test_deep_template_fails_its_row_not_the_batch(tmp_path, suffix):
    template = job_with(tmp_path, 'notes = "', f'extra = {DEEP_ARRAY}\nnotes = "')
    header = PLANNER_HEADER + ["job"]
    sheet = planner(tmp_path, [{"order": "R-1", "job": template.name}, {"order": "R-2"}], suffix, header)
    result = batch(sheet, tmp_path)
    assert result["done"] == 1 and "nested more than 12 deep" in row_reasons(result)[2], result


@pytest.mark.parametrize("document", ["[" * 1000 + "]" * 1000, '{"a": ' * 1000 + "1" + "}" * 1000,
                                      "[" * 100_000 + "]" * 100_000])
def test_deep_coefficients_file_is_refused(tmp_path, document):
    path = tmp_path / "c.json"
    path.write_text(document, encoding="utf-8")
    refused(solve_with(path), "c.json", "nested more than 12 deep")


def test_deep_coefficients_in_a_job_fail_the_order(tmp_path):
    (tmp_path / "c.json").write_text("[" * 1000 + "]" * 1000, encoding="utf-8")
    text = JOB.read_text(encoding="utf-8")
    start = text.index("[measurement]")
    end = text.index("[shop]")
    job = tmp_path / "job.toml"
    job.write_text(text[:start] + '[measurement]\nkind = "coefficients"\ncoefficients = "c.json"\n'
                   'original = ["17.5 um@253.7"]\n\n' + text[end:], encoding="utf-8")
    order_refused(job, tmp_path, "nested more than 12 deep")


@SETTINGS
@given(depth=st.integers(1, 3000), opener=st.sampled_from(["[", "{ a = ", "[{ a = "]))
def test_nesting_depth_is_refused_beyond_the_limit(depth, opener):
    from toolkit.fileio import MAX_NESTING, parse_json, parse_toml

    closer = {"[": "]", "{ a = ": " }", "[{ a = ": " }]"}[opener]
    levels = depth * (2 if opener == "[{ a = " else 1)
    toml_text = "x = " + opener * depth + ("1" if opener != "[" else "") + closer * depth
    if levels + 1 > MAX_NESTING:  # the document itself is one level
        with pytest.raises(BadInput, match="nested more than"):
            parse_toml(toml_text, "f.toml")
    else:
        parse_toml(toml_text, "f.toml")
    json_text = "[" * depth + "]" * depth
    if depth > MAX_NESTING:
        with pytest.raises(BadInput, match="nested more than"):
            parse_json(json_text, "f.json")
    else:
        assert parse_json(json_text, "f.json") is not None


# == Messages ================================================================================================

def test_a_million_unknown_columns_are_counted_not_listed(tmp_path):
    sheet = tmp_path / "wide.csv"
    with sheet.open("w", newline="", encoding="utf-8") as handle:
        writer = csv.writer(handle)
        writer.writerow(["order"] + [f"extra{i}" for i in range(1_000_000)])
        writer.writerow(["R-1"])
    err = refused(["batch", str(sheet), "--out", str(tmp_path / "out")], "and 999,990 more")
    assert len(err) < 1000, len(err)


def test_a_header_of_many_repeated_columns_is_refused(tmp_path):
    sheet = tmp_path / "repeated.csv"
    sheet.write_text(",".join(["order"] * 200_000) + "\nR-1\n", encoding="utf-8")
    refused(["batch", str(sheet), "--out", str(tmp_path / "out")], "column order appears twice")


def test_planes_too_close_for_the_span_are_both_named():
    # the message said both planes were at 260 mm when they were at 260 and 930 mm (span 1e20 mm)
    from toolkit.tolerance import transfer_to_planes

    with pytest.raises(BadInput, match=r"at 260 mm and 930 mm"):
        transfer_to_planes("500 g*mm", "500 g*mm", Q_(1e20, "mm"), [Q_(260, "mm"), Q_(930, "mm")])
    with pytest.raises(BadInput, match=r"both correction planes are at 260 mm"):
        transfer_to_planes("500 g*mm", "500 g*mm", "1100 mm", ["260 mm", "260 mm"])


def test_max_depth_ratio_minus_zero_is_worded_alike_in_job_and_command(tmp_path):
    from toolkit.fabricate.drilling import limit_problem

    words = limit_problem("max_depth_ratio", -0.0)
    assert "greater than zero" in words
    job = job_with(tmp_path, "max_depth_ratio = 5", "max_depth_ratio = -0")
    order_refused(job, tmp_path, "shop.drilling.max_depth_ratio", words)
    refused(["drill", "--unbalance", "3000 g*mm", "--radius", "100 mm", "--axial", "--material", "steel",
             "--max-depth-ratio", "-0"], words)


def _formula_sheet(tmp: Path, cached: str | None) -> Path:
    """A planner .xlsx whose R-1 mass is the formula =200+212; with ``cached`` its stored value is written
    into the sheet XML, as a spreadsheet program saves it."""
    from openpyxl import Workbook

    wb = Workbook()
    ws = wb.active
    ws.append(PLANNER_HEADER)
    ws.append([{"mass": "=200+212"}.get(h, GOOD_ROW[h]) for h in PLANNER_HEADER])
    row = dict(GOOD_ROW, order="R-2")
    ws.append([row[h] for h in PLANNER_HEADER])
    plain = tmp / "plain.xlsx"
    wb.save(plain)
    path = tmp / "formulas.xlsx"
    with zipfile.ZipFile(plain) as src, zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as dst:
        for item in src.infolist():
            data = src.read(item)
            if item.filename == "xl/worksheets/sheet1.xml" and cached is not None:
                data, count = re.subn(rb'<c r="C2"><f>200\+212</f>(<v\s*/>|<v></v>)',
                                      f'<c r="C2" t="str"><f>200+212</f><v>{cached}</v>'.encode(), data)
                assert count == 1, data
            dst.writestr(item, data)
    return path


def test_formula_without_stored_value_says_so_and_how_to_fix(tmp_path):
    result = batch(_formula_sheet(tmp_path, None), tmp_path)
    reason = row_reasons(result)[2]
    assert "column mass" in reason and "formula with no stored value" in reason and "save it" in reason, reason
    assert result["done"] == 1


def test_formula_with_stored_value_is_read(tmp_path):
    from toolkit.workorder.batch import read_rows

    rows = dict(read_rows(_formula_sheet(tmp_path, "412 kg")))
    assert rows[2]["mass"] == "412 kg", rows
