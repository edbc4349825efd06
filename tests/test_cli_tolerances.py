"""Command-line tests of grades, tolerance and verify: the JSON contract, text output, exit statuses and
every error message (one line on stderr, exit 2)."""

from __future__ import annotations

import json
import subprocess
import sys

import pytest

from toolkit.cli import main

SIX = ["--reading", "44.8790@0", "--reading", "53.6268@60", "--reading", "58.6368@120", "--reading",
       "56.0268@180", "--reading", "47.7210@240", "--reading", "41.4108@300"]
ROTOR = ["--grade", "G6.3", "--mass", "412 kg", "--speed", "1480 rpm"]
GEOMETRY = ["--bearing-span", "900 mm", "--com-from-a", "400 mm"]


def run(capsys, argv):
    status = main(argv)
    out, err = capsys.readouterr()
    return status, out, err


def run_json(capsys, argv):
    status, out, err = run(capsys, argv + ["--json"])
    return status, json.loads(out), err


def test_done_when_example(capsys):
    # issue 2 "done when": U_per ~ 2005 g*mm (ISO 21940-11:2016, 6.3.3; references iso-u-per-100kg)
    status, data, _ = run_json(capsys, ["tolerance", "--grade", "G6.3", "--mass", "100 kg", "--speed", "3000 rpm"])
    assert status == 0
    assert data["u_per_g_mm"] == pytest.approx(2005.35, rel=1e-4)
    assert data["e_per_um"] == pytest.approx(20.054, rel=1e-4)
    for key in ("grade_mm_s", "speed_rpm", "mass_kg", "e_per_um", "u_per_g_mm", "u_per_oz_in", "planes",
                "criteria", "checks"):
        assert key in data


def test_tolerance_planes_json(capsys):
    status, data, _ = run_json(capsys, ["tolerance", *ROTOR, *GEOMETRY, "--plane", "I=-120 mm",
                                        "--plane", "II=1010 mm", "--criterion", "iso", "--criterion", "api"])
    assert status == 0
    assert [p["name"] for p in data["planes"]] == ["I", "II"]
    for p in data["planes"]:
        assert {"name", "u_per_g_mm", "method"} <= set(p) and p["method"]
    assert [c["name"] for c in data["criteria"]] == ["iso", "api"]
    strict = [q for c in data["criteria"] for q in c["planes"] if q["strictest"]]
    assert len(strict) == 2


def test_tolerance_text_units_and_methods(capsys):
    status, out, _ = run(capsys, ["tolerance", *ROTOR, *GEOMETRY])
    assert status == 0
    assert "16747 g·mm" in out and "ISO 21940-11:2016, 6.3.3" in out
    assert "lever rule" in out and "0.30-0.70" in out
    status, out, _ = run(capsys, ["tolerance", *ROTOR, *GEOMETRY, "--units", "imperial"])
    assert "oz·in" in out and "lb" in out and "g·mm (whole" not in out


def test_imperial_inputs_same_u_per(capsys):
    _, a, _ = run_json(capsys, ["tolerance", *ROTOR])
    _, b, _ = run_json(capsys, ["tolerance", "--grade", "6.3 mm/s", "--mass", "908.30 lb", "--speed",
                                "155.0 rad/s", "--units", "imperial"])
    assert b["u_per_oz_in"] == pytest.approx(a["u_per_oz_in"], rel=1e-3)


def test_residual_fail_exit_1(capsys):
    status, data, _ = run_json(capsys, ["tolerance", *ROTOR, *GEOMETRY, "--residual", "A=9500 g*mm@40",
                                        "--residual", "B=100 g*mm@200"])
    assert status == 1
    assert [c["passed"] for c in data["checks"]] == [False, True]
    assert data["passed"] is False
    status, out, _ = run(capsys, ["tolerance", *ROTOR, *GEOMETRY, "--residual", "A=9500 g*mm@40"])
    assert status == 1 and "FAIL" in out and "OUT OF TOLERANCE" in out


def test_error_allowance_rule_printed(capsys):
    status, out, _ = run(capsys, ["tolerance", *ROTOR, *GEOMETRY, "--residual", "A=9500 g*mm@40",
                                  "--error-allowance", "500 g*mm", "--check-stage", "later-check"])
    assert status == 0 and "later check" in out and "[M]" in out


def test_static_share(capsys):
    status, data, _ = run_json(capsys, ["tolerance", *ROTOR, *GEOMETRY, "--plane", "I=350 mm", "--plane",
                                        "II=450 mm", "--static-share", "0.5"])
    assert status == 0 and data["static_couple"]["static_share"] == 0.5
    assert data["static_couple"]["couple_per_plane_g_mm"] > 0


def test_custom_grade_said(capsys):
    status, out, _ = run(capsys, ["tolerance", "--grade", "G5", "--custom-grade", "--mass", "1 kg", "--speed",
                                  "1000 rpm"])
    assert status == 0 and "custom" in out


def test_grades(capsys):
    status, data, _ = run_json(capsys, ["grades"])
    assert status == 0 and len(data["grades"]) == 11
    assert all({"grade_mm_s", "machinery", "source"} <= set(g) for g in data["grades"])
    status, out, _ = run(capsys, ["grades"])
    assert "G 6.3" in out and "G 4000" in out


def test_verify(capsys):
    status, data, _ = run_json(capsys, ["verify", "--test", "200 g*mm", *SIX, "--allowed", "150 g*mm"])
    assert status == 0
    # references verify-six-point (D, synthesised readings): 35.00 g*mm at 130.0 deg
    assert data["residual_g_mm"] == pytest.approx(35.0, rel=2e-4)
    assert data["residual_angle_deg"] == pytest.approx(130.0, abs=0.05)
    assert data["consistency"] == pytest.approx(1.0, abs=1e-6) and data["passed"] is True
    status, data, _ = run_json(capsys, ["verify", "--test", "200 g*mm", *SIX, "--allowed", "30 g*mm"])
    assert status == 1 and data["passed"] is False
    status, out, _ = run(capsys, ["verify", "--test", "200 g*mm", *SIX])
    assert status == 0 and "35.00 g·mm at 130.0°" in out and "caution:" in out


@pytest.mark.parametrize("argv, needle", [
    (["tolerance", "--grade", "G6.3", "--mass", "412", "--speed", "1480 rpm"], "--mass: '412' has no unit"),
    (["tolerance", "--grade", "G6.3", "--mass", "-412 kg", "--speed", "1480 rpm"], "must be greater than zero"),
    (["tolerance", "--grade", "G6.3", "--mass", "412 kg", "--speed", "0 rpm"], "--speed: 0 rpm must be greater"),
    (["tolerance", "--grade", "G7", "--mass", "412 kg", "--speed", "1480 rpm"], "--grade: 'G7' is not in the ISO"),
    (["tolerance", "--grade", "Q", "--mass", "412 kg", "--speed", "1480 rpm"], "not a balance quality grade"),
    (["tolerance", *ROTOR, *GEOMETRY, "--residual", "A=450 g*mm"], "is not a vector; write AMOUNT@ANGLE"),
    (["tolerance", *ROTOR, *GEOMETRY, "--residual", "A=450 g*mm@north"], "is not an angle"),
    (["tolerance", *ROTOR, *GEOMETRY, "--residual", "Z=450 g*mm@0"], "plane 'Z' is not known"),
    (["tolerance", *ROTOR, *GEOMETRY, "--plane", "I:-120 mm"], "--plane: 'I:-120 mm' is malformed"),
    (["tolerance", *ROTOR, *GEOMETRY, "--plane", "I=-120"], "--plane I: '-120' has no unit"),
    (["tolerance", *ROTOR, *GEOMETRY, "--plane", "I=40 m"], "more than 3 bearing spans"),
    (["tolerance", *ROTOR, "--plane", "I=40 mm"], "need --bearing-span"),
    (["tolerance", *ROTOR, "--criterion", "din"], "--criterion: 'din' is not known"),
    (["tolerance", *ROTOR, "--criterion", "api"], "--criterion: api needs the journal loads (--journal-load, A and B) or an inboard geometry (--bearing-span, --com-from-a)"),
    (["tolerance", *ROTOR, "--journal-load", "A206 kg"], "--journal-load: 'A206 kg' is malformed"),
    (["tolerance", *ROTOR, *GEOMETRY, "--static-share", "half"], "--static-share: 'half' is not a number"),
    (["tolerance", *ROTOR, *GEOMETRY, "--static-share", "0.5"], "--static-share: needs two correction planes"),
    (["tolerance", *ROTOR, "--min-share", "0.8"], "--min-share: '0.8' is outside 0 to 0.5"),
    (["tolerance", *ROTOR, "--units", "cubits"], "--units: 'cubits' is not a unit system"),
    (["tolerance", *ROTOR, *GEOMETRY, "--residual", "A=1 g*mm@0", "--check-stage", "x"], "check stage"),
    (["verify", "--test", "200", *SIX], "--test: '200' has no unit"),
    (["verify", "--test", "200 g*mm", "--reading", "1@0", "--reading", "2@90"], "3 or more different angles"),
    (["verify", "--test", "200 g*mm", "--reading", "1", *SIX], "is not a vector"),
    (["verify", "--test", "200 g*mm", *SIX, "--allowed", "150 g"], "--allowed"),
    (["tolerance", "--mass", "412 kg", "--speed", "1480 rpm"], "--grade"),
])
def test_errors_one_line_exit_2(capsys, argv, needle):
    status, out, err = run(capsys, argv)
    assert status == 2
    assert out == ""
    assert err.count("\n") == 1 and needle in err, err
    assert "Traceback" not in err


def test_command_module_is_light():
    code = ("import sys, toolkit.cli, toolkit.commands.tolerances; "
            "heavy = [m for m in ('numpy', 'pint') if m in sys.modules]; print(heavy)")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert out.strip() == "[]"
