"""Command-line tests for ``counterpoise solve`` and ``counterpoise split``.

Reference numbers are synthetic cases (mark D: they check our
implementation of the published influence-coefficient method, they are not published numbers).
"""

import json
import math
import subprocess
import sys
from pathlib import Path

import pytest

from toolkit.cli import main

ROOT = Path(__file__).resolve().parents[1]
EXAMPLES = ROOT / "examples"


def run(capsys, *argv):
    code = main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


def angle_close(a, b, tol):
    d = abs(a - b) % 360
    return min(d, 360 - d) <= tol


def test_one_plane_json(capsys):
    # correction.csv "one-plane": add 12.000 g@255.00 (rel 1e-3), derived here (D)
    code, out, err = run(capsys, "solve", "--original", "4.20 mm/s@285", "--trial", "10 g@0",
                         "--with-trial", "6.1237 mm/s@251.49", "--radius", "150 mm", "--json")
    assert code == 0 and err == ""
    data = json.loads(out)
    for key in ("corrections", "influence", "condition_number", "predicted_residual", "warnings"):
        assert key in data
    (c,) = data["corrections"]
    assert set(c) >= {"plane", "mass_g", "angle_deg", "action"}
    assert c["action"] == "add"
    assert c["mass_g"] == pytest.approx(12.0, rel=1e-3) and angle_close(c["angle_deg"], 255.0, 0.05)
    assert c["unbalance_g_mm"] == pytest.approx(12.0 * 150, rel=1e-3)
    assert data["sense_defaults"] == ["weight angles against rotation (default)", "phase lag (default)"]
    assert data["cautions"]


def test_one_plane_keep_trial_and_sense_flag(capsys):
    # correction.csv "one-plane", keep trial on: add 17.496 g@221.49, derived here (D)
    code, out, _ = run(capsys, "solve", "--original", "4.20 mm/s@285", "--trial", "10 g@0", "--with-trial",
                       "6.1237 mm/s@251.49", "--keep-trial", "--json")
    c = json.loads(out)["corrections"][0]
    assert c["mass_g"] == pytest.approx(17.496, rel=1e-3) and angle_close(c["angle_deg"], 221.49, 0.05)
    # correction.csv "one-plane-sense": declaring phase lead on conjugated readings avoids the mirror image
    code, out, _ = run(capsys, "solve", "--original", "4.20 mm/s@75", "--trial", "10 g@0", "--with-trial",
                       "6.1237 mm/s@108.51", "--phase", "lead", "--json")
    data = json.loads(out)
    assert data["readings_conjugated"] is True
    assert angle_close(data["corrections"][0]["angle_deg"], 255.0, 0.05)


def test_one_plane_text_shows_senses_and_cautions(capsys):
    code, out, _ = run(capsys, "solve", "--original", "4.20 mm/s@285", "--trial", "10 g@0", "--with-trial",
                       "6.12 mm/s@251.5")
    assert code == 0
    assert "add 12.0" in out and "against rotation" in out and "phase lag" in out
    assert "Secure trial and correction masses" in out and "rotor maker" in out


@pytest.mark.parametrize("name", ["runs-two-plane.toml", "runs-one-plane-two-sensors.toml"])
def test_examples_solve(capsys, name):
    code, out, err = run(capsys, "solve", str(EXAMPLES / name), "--json")
    assert code == 0, err
    data = json.loads(out)
    assert data["corrections"] and all(c["action"] in ("add", "remove") for c in data["corrections"])
    assert len(data["predicted_residual"]) == len(data["inputs"]["sensors"])
    assert "Invented example" in (EXAMPLES / name).read_text()
    # the corrections bring every point well below its original reading (invented data, 1 % noise)
    for r in data["predicted_residual"]:
        assert r["amount"] < 0.2 * r["original_amount"]


def test_split_json_parts_sum_to_input(capsys):
    # correction.csv "split": 20.279 g@90 + 6.139 g@135 (rel 1e-4), derived here (D)
    code, out, _ = run(capsys, "split", "25 g@100", "--at", "90,135", "--json")
    parts = json.loads(out)["parts"]
    assert [p["angle_deg"] for p in parts] == [90, 135]
    assert parts[0]["mass_g"] == pytest.approx(20.279, rel=1e-4)
    code, out, _ = run(capsys, "split", "25 g@100", "--positions", "8", "--offset", "10", "--json")
    parts = json.loads(out)["parts"]
    x = sum(p["mass_g"] * math.cos(math.radians(p["angle_deg"])) for p in parts)
    y = sum(p["mass_g"] * math.sin(math.radians(p["angle_deg"])) for p in parts)
    assert math.hypot(x, y) == pytest.approx(25, rel=1e-12)
    assert angle_close(math.degrees(math.atan2(y, x)), 100, 1e-9)


def test_coefficients_save_reuse_and_trim(capsys, tmp_path):
    path = tmp_path / "fan.json"
    code, out, err = run(capsys, "solve", str(EXAMPLES / "runs-two-plane.toml"), "--save-coefficients",
                         str(path), "--json")
    assert code == 0, err
    assert json.loads(path.read_text())["format"] == "counterpoise-influence"
    code, out, err = run(capsys, "solve", str(EXAMPLES / "runs-two-plane.toml"), "--save-coefficients", str(path))
    assert code == 2 and "already exists" in err
    readings = ["10 um@200", "8 um@40", "20 um@250", "15 um@80"]
    argv = ["solve", "--coefficients", str(path)]
    for r in readings:
        argv += ["--original", r]
    code, out, err = run(capsys, *argv, "--json")
    assert code == 0, err
    assert len(json.loads(out)["corrections"]) == 2
    code, out, err = run(capsys, *argv, "--installed", "near=10 g@20", "--installed", "far=5 g@200",
                         *sum((["--after", r] for r in ["9 um@190", "8 um@45", "18 um@240", "15 um@85"]), []),
                         "--save-coefficients", str(tmp_path / "fan2.json"))
    assert code == 0, err
    assert "updated by the trim run" in out and "Trim corrections" in out
    assert (tmp_path / "fan2.json").is_file()
    # the trim correction without saving: printed, nothing written, the JSON says so
    trim_argv = [*argv, "--installed", "near=10 g@20", "--installed", "far=5 g@200",
                 *sum((["--after", r] for r in ["9 um@190", "8 um@45", "18 um@240", "15 um@85"]), [])]
    code, out, err = run(capsys, *trim_argv, "--json")
    assert code == 0, err
    data = json.loads(out)
    assert data["coefficients_file"] is None and len(data["trim"]["corrections"]) == 2
    # the residual starts from the readings after the installed correction, as measured
    assert [r["original_amount"] for r in data["trim"]["predicted_residual"]] == pytest.approx([9, 8, 18, 15])
    assert sorted(p.name for p in tmp_path.iterdir()) == ["fan.json", "fan2.json"]
    code, out, err = run(capsys, *trim_argv)
    assert code == 0 and "not saved (give --save-coefficients FILE to keep them)" in out


@pytest.mark.parametrize("content, message", [
    ('sensors = ["a"]\nplanes = ["p"\nphase = "lag"\n', "not valid TOML: .*line 3, column"),
    ('sensors = ["a", "b"]\nplanes = ["p"]\nweight_angles = "with rotation"\nphase = "lag"\n'
     '[[run]]\nname = "original"\nreadings = ["4 mm/s@10", "3 mm/s@20"]\n'
     '[[run]]\nname = "trial"\ntrial = { p = "10 g@0" }\nreadings = ["4 mm/s@10"]\n',
     r"run 'trial': readings: 1 given for 2 sensors"),
    ('sensors = ["a"]\nplanes = ["p"]\nweight_angles = "with rotation"\nphase = "lag"\n'
     '[[run]]\nname = "original"\nreadings = ["4 mm/s@10"]\n', r"run: 1 runs for 1 plane"),
    ('sensors = ["a"]\nplanes = ["p"]\nweight_angles = "clockwise"\nphase = "lag"\n', "weight_angles: 'clockwise'"),
    ('sensors = ["a"]\nplanes = ["p"]\nweight_angles = "with rotation"\nphase = "lag"\n'
     '[[run]]\nname = "original"\nreadings = ["4 mm/s@10"]\n'
     '[[run]]\nname = "trial"\ntrial = { p = "10 g@0" }\nreadings = ["4 mm/s@10"]\n', "the trial changed nothing"),
    ('sensors = ["a"]\nplanes = ["p"]\nweight_angles = "with rotation"\nphase = "lag"\n'
     '[[run]]\nname = "original"\nreadings = ["4 mm/s@ten"]\n', r"run 'original': readings\[1\] angle"),
])
def test_bad_runs_file_one_line_exit_2(capsys, tmp_path, content, message):
    path = tmp_path / "runs.toml"
    path.write_text(content)
    code, out, err = run(capsys, "solve", str(path))
    assert code == 2 and out == ""
    assert err.count("\n") == 1 and "Traceback" not in err
    assert __import__("re").search(message, err), err


@pytest.mark.parametrize("argv, message", [
    (["solve", "--original", "4.2@285", "--trial", "10 g@0", "--with-trial", "6 mm/s@250"], "--original: '4.2' has no unit"),
    (["solve", "--original", "4.2 mm/s@285", "--trial", "10@0", "--with-trial", "6 mm/s@250"], "--trial: '10' has no unit"),
    (["solve", "--original", "4.2 mm/s@285", "--with-trial", "6 mm/s@250"], "--trial: missing"),
    (["solve", "--original", "4.2 mm/s@285", "--trial", "10 g@0", "--with-trial", "6 mm/s@250", "--phase", "up"],
     "solve: error: --phase: 'up' is not a phase sense; use 'lag' or 'lead'"),  # common practice, no source
    (["solve", "--original", "4.2 mm/s@285", "--trial", "10 g@0", "--with-trial", "6 mm/s@250", "--weight-angles",
      "up"], "solve: error: --weight-angles: 'up' is not an angle sense"),
    (["solve", "--original", "4.2 mm/s@285", "--trial", "10 g@0", "--with-trial", "6 mm/s@250", "--radius", "5 kg"],
     "solve: error: --radius: '5 kg' is not a length"),
    (["solve", "--original", "4.2 mm/s@285", "--trial", "1000 g*mm@0", "--with-trial", "6 mm/s@250"],
     "solve: error: --trial: '1000 g*mm@0' is an unbalance; give --radius to turn it into a mass"),
    # the library's errors are about its parameters positions and at; the command words them as options
    (["split", "25 g@100", "--at", "90,300"], "split: error: --at: 25 g@100 does not lie between two positions"),
    (["split", "25 g@100", "--at", ","], "split: error: --at: no angles given"),
    (["split", "25 g@100", "--positions", "2"], "split: error: --positions: 2 is not allowed"),
    (["solve", str(EXAMPLES / "runs-two-plane.toml"), "--method", "min-max", "--limit", "rim=3 g"],
     "solve: error: --limit: unknown plane 'rim'; planes are near, far"),
    (["solve", str(EXAMPLES / "runs-two-plane.toml"), "--method", "min-max", "--limit", "near=3 kg*m"],
     "solve: error: --limit near: '3 kg*m' is not a mass"),
    (["solve", str(EXAMPLES / "runs-two-plane.toml"), "--radius", "100 mm"], "the runs file declares them"),
    (["split", "25@100", "--positions", "8"], "has no unit"),
    (["solve", "--bearing-mass", "200 kg", "--speed", "1480 rpm"], "needs all three"),
])
def test_bad_options_one_line_exit_2(capsys, argv, message):
    code, out, err = run(capsys, *argv)
    assert code == 2 and out == ""
    assert err.count("\n") == 1 and message in err, err


def test_amplitude_only(capsys):
    # correction.csv "four-run": add 60.00 g@45.00, consistency 1.000 (rel 1e-3), derived here (D)
    code, out, err = run(capsys, "solve", "--original", "6.0 mm/s", "--trial", "40 g", "--amplitude",
                         "0=4.2496 mm/s", "--amplitude", "120=6.2910 mm/s", "--amplitude", "240=9.9179 mm/s", "--json")
    assert code == 0, err
    data = json.loads(out)
    c = data["corrections"][0]
    assert c["action"] == "add" and c["mass_g"] == pytest.approx(60.0, rel=1e-3)
    assert angle_close(c["angle_deg"], 45.0, 0.05) and data["consistency"] == pytest.approx(1.0, abs=1e-3)
    code, out, err = run(capsys, "solve", "--original", "6.0 mm/s", "--trial", "40 g", "--amplitude", "0")
    assert code == 2 and "ANGLE=AMPLITUDE" in err


def test_trial_suggestion(capsys):
    code, out, _ = run(capsys, "solve", "--bearing-mass", "200 kg", "--radius", "150 mm", "--speed", "1480 rpm",
                       "--json")
    data = json.loads(out)
    # docs/methods.md §2, common practice [CP, M]: 8.95e7 * M / (r n^2) grams
    assert data["trial_mass_g"] == pytest.approx(8.95e7 * 200 / (150 * 1480**2), rel=2e-3)
    assert data["fraction_source"].startswith("common practice")


def test_commands_module_imports_stay_light():
    code = ("import sys, toolkit.commands.corrections, toolkit.cli; "
            "print(any(m in sys.modules for m in ('numpy', 'pint')))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert out.strip() == "False"
