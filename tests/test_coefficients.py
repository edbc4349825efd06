"""Stored influence coefficients (toolkit/coefficients.py): the file, a later rotor solved from its
original run alone, and the trim-run update.

Check values and their sources: the one-plane case of the trial-mass method (Thearle, Trans. ASME 1934; see docs/methods.md
§2.1) synthesised here with α = 0.35 (mm/s)/g at 210° (derived here (D): it checks our implementation, not
a published number); the least-change rank-one (Broyden) update, whose defining properties (it reproduces
the trim run, it leaves directions orthogonal to the installed correction unchanged) are checked on random
coefficients (D). numpy.linalg.lstsq is the independent reference for the least-squares solve.
"""

from __future__ import annotations

import cmath
import json
import math

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

from toolkit.coefficients import (Coefficients, coefficients_from, load_coefficients, save_coefficients,
                                  solve_with_coefficients, trim_update)
from toolkit.errors import BadInput
from toolkit.influence import solve_one_plane
from toolkit.vectors import polar


def _vec(amount: float, angle: float) -> complex:
    return amount * cmath.exp(1j * math.radians(angle))


def _text(z: complex, unit: str) -> str:
    amount, angle = polar(z)
    # an amount below the reader's smallest one (1e-9 of the unit) is rounding noise of a zero: write 0
    return f"{amount if amount >= 1e-9 else 0.0!r} {unit}@{angle!r}"


def _one_plane() -> Coefficients:
    # derived here (D): O = 4.20 mm/s@285, trial 10 g@0, alpha = 0.35 (mm/s)/g @ 210 gives OT = 6.1237@251.49
    return coefficients_from(solve_one_plane("4.20 mm/s@285", "10 g@0", "6.1237 mm/s@251.49"), note="invented")


def _two_planes(matrix: np.ndarray, weight_angles="against rotation", phase="lag") -> Coefficients:
    return Coefficients(sensors=("s1", "s2", "s3"), planes=("p1", "p2"),
                        matrix=tuple(tuple(map(complex, row)) for row in matrix), weight_angles=weight_angles,
                        phase=phase, reading_unit="um", reading_kind="displacement", speed_rpm=1480.0,
                        radius_mm=(("p1", 300.0), ("p2", 300.0)), saved="2026-12-01T00:00:00Z")


def test_file_round_trip_keeps_every_field(tmp_path):
    c = _one_plane()
    stored = load_coefficients(save_coefficients(c, tmp_path / "fan.json"))
    assert stored.sensors == c.sensors and stored.planes == c.planes
    assert stored.weight_angles == c.weight_angles and stored.phase == c.phase
    assert stored.reading_unit == "mm/s" and stored.reading_kind == "vibration velocity"
    assert stored.note == "invented" and stored.saved == c.saved
    assert np.allclose(stored.array(), c.array(), rtol=1e-12)
    data = json.loads((tmp_path / "fan.json").read_text(encoding="utf-8"))
    assert data["format"] == "counterpoise-influence" and data["version"] == 1


def test_one_plane_coefficient_and_later_rotor():
    c = _one_plane()
    amount, angle = polar(c.matrix[0][0])
    assert amount == pytest.approx(0.35, rel=1e-3)  # derived here (D), the synthesised alpha
    assert angle == pytest.approx(210.0, abs=0.05)
    # half the original reading needs half the correction: add 6.00 g at 255 deg (D: W = -O/alpha)
    k = solve_with_coefficients(c, ["2.1 mm/s@285"]).corrections[0]
    assert k.action == "add"
    assert k.mass.m_as("g") == pytest.approx(6.0, rel=1e-3)
    assert k.angle_deg == pytest.approx(255.0, abs=0.05)


def test_later_rotor_matches_numpy_least_squares():
    rng = np.random.default_rng(7)
    a = rng.normal(size=(3, 2)) + 1j * rng.normal(size=(3, 2))
    o = rng.normal(size=3) + 1j * rng.normal(size=3)
    solution = solve_with_coefficients(_two_planes(a), [_text(z, "um") for z in o])
    reference = np.linalg.lstsq(a, -o, rcond=None)[0]  # numpy's own least squares, the independent check
    assert np.allclose(solution.total_correction_g, reference, rtol=1e-9, atol=1e-12)


def test_readings_are_conjugated_when_the_senses_differ():
    a = np.array([[_vec(0.8, 200), _vec(0.3, 120)], [_vec(0.25, 300), _vec(0.9, 170)], [_vec(0.1, 10),
                                                                                         _vec(0.2, 20)]])
    u = np.array([_vec(12, 100), _vec(30, 330)])
    same = solve_with_coefficients(_two_planes(a), [_text(z, "um") for z in a @ u])
    # with rotation + phase lag: the instrument reads the mirror image; the solver conjugates it back (D)
    mixed = solve_with_coefficients(_two_planes(a, "with rotation"), [_text(z, "um") for z in np.conj(a @ u)])
    assert np.allclose(same.total_correction_g, -u, rtol=1e-9)
    assert np.allclose(mixed.total_correction_g, -u, rtol=1e-9)


def test_every_solution_warns_that_stored_sets_need_a_trim_run():
    solution = solve_with_coefficients(_one_plane(), ["2.1 mm/s@285"])
    assert any("confirm with a trim run" in w for w in solution.warnings)


# parts rounded to 1e-6: values below the reader's smallest amounts (1e-9 g, 1e-9 um) are not readings
_part = st.floats(-2, 2).map(lambda x: round(x, 6))
_complex = st.builds(complex, _part, _part)


@settings(max_examples=60, deadline=None)
@given(st.lists(_complex, min_size=6, max_size=6), st.lists(_complex, min_size=2, max_size=2),
       st.lists(_complex, min_size=3, max_size=3), st.lists(_complex, min_size=2, max_size=2))
def test_trim_update_reproduces_the_trim_run_and_keeps_orthogonal_directions(a, du, v0, other):
    du = np.array(du) * 10
    if np.linalg.norm(du) < 1e-3:
        return
    a = np.array(a).reshape(3, 2)
    dv = a @ du * 0.9 + np.array([0.3, -0.2, 0.1j])  # the rotor answers somewhat differently now
    if np.abs(dv).max() < 1e-9:
        return
    v0 = np.array(v0)
    new = trim_update(_two_planes(a), [_text(z, "um") for z in v0],
                      {"p1": _text(du[0], "g"), "p2": _text(du[1], "g")}, [_text(z, "um") for z in v0 + dv])
    # D: A' du = dv (the trim run is reproduced), within the printing precision of the readings
    assert np.allclose(new.array() @ du, dv, rtol=1e-7, atol=1e-9 * (1 + np.abs(dv).max()))
    # D: a correction orthogonal to du gets the old response
    w = np.array(other)
    w = w - np.vdot(du, w) / np.vdot(du, du) * du
    assert np.allclose(new.array() @ w, a @ w, rtol=1e-7, atol=1e-7 * (1 + np.abs(a @ w).max()))
    assert "trim run" in new.note


def test_trim_update_refuses_what_cannot_update():
    c = _one_plane()
    with pytest.raises(BadInput, match="changed nothing"):
        trim_update(c, ["2.1 mm/s@285"], {"plane": "6 g@255"}, ["2.1 mm/s@285"])
    with pytest.raises(BadInput, match="unknown plane"):
        trim_update(c, ["2.1 mm/s@285"], {"rim": "6 g@255"}, ["0.4 mm/s@285"])
    with pytest.raises(BadInput, match="all masses are zero"):
        trim_update(c, ["2.1 mm/s@285"], {"plane": "0 g@255"}, ["0.4 mm/s@285"])
    with pytest.raises(BadInput, match="vibration velocity"):
        trim_update(c, ["2.1 um@285"], {"plane": "6 g@255"}, ["0.4 mm/s@285"])


def test_refusals_carry_their_parameter_and_the_cli_words_it_as_an_option(tmp_path, capsys):
    # the library names its own parameters (original, installed, after); the command line words them as
    # the options that set them (--original, --installed, --after), items after the option (--original 1)
    from toolkit.cli import main

    c = _one_plane()
    with pytest.raises(BadInput) as caught:
        trim_update(c, ["2.1 mm/s@285"], {"plane": "6 g@255"}, ["2.1 mm/s@285"])
    assert caught.value.parameter == "after" and str(caught.value).startswith("after: identical to before;")
    path = save_coefficients(c, tmp_path / "c.json")
    solve = ["solve", "--coefficients", str(path)]
    cases = [
        (["--original", "2 mm/s@1", "--original", "3 mm/s@2"],
         "--original: give 1 reading(s), one per sensor (sensor)"),
        (["--original", "2.1 um@285"], "--original 1: '2.1 um@285' is a displacement; the coefficients are for"),
        (["--original", "2.1 mm/s@285", "--installed", "rim=6 g@255", "--after", "0.4 mm/s@285"],
         "--installed: unknown plane 'rim'; planes are plane"),
        (["--original", "2.1 mm/s@285", "--installed", "plane=6 g@255", "--after", "2.1 mm/s@285"],
         "--after: identical to --original; the installed correction changed nothing"),
    ]
    for argv, expected in cases:
        assert main(solve + argv) == 2
        err = capsys.readouterr().err
        assert err.startswith(f"counterpoise solve: error: {expected}"), err
        assert err.count("\n") == 1 and " original:" not in err and " installed:" not in err


@pytest.mark.parametrize("change, message", [
    (lambda d: d.update(sensors=[]), "sensors"),
    (lambda d: d.update(planes=["a", "a"]), "differ"),
    (lambda d: d.update(speed_rpm=-5), "speed_rpm"),
    (lambda d: d.update(format="something else"), "format"),
])
def test_damaged_files_name_the_field(tmp_path, change, message):
    path = save_coefficients(_one_plane(), tmp_path / "c.json")
    data = json.loads(path.read_text(encoding="utf-8"))
    change(data)
    path.write_text(json.dumps(data), encoding="utf-8")
    with pytest.raises(BadInput, match=message):
        load_coefficients(path)


def test_trim_correction_in_one_step():
    """The trim correction is solved from the readings after the installed correction, with the updated
    coefficients; its residual starts from those readings as measured (derived here, D: with one plane the
    updated α' = ΔV/ΔU and the trim mass is -V1/α')."""
    from toolkit.coefficients import trim_correction

    c = _one_plane()
    before, installed, after = _vec(2.1, 285), _vec(6, 255), _vec(0.4, 285)
    trim = trim_correction(c, ["2.1 mm/s@285"], {"plane": "6 g@255"}, ["0.4 mm/s@285"])
    alpha = (after - before) / installed  # D: one-plane update α' = ΔV/ΔU
    assert trim.updated.matrix[0][0] == pytest.approx(alpha, abs=1e-9)
    k, = trim.solution.corrections
    want = -after / alpha  # D: the mass that cancels the reading after
    assert k.action == "add" and k.mass.m_as("g") == pytest.approx(abs(want), rel=1e-6)
    assert k.angle_deg == pytest.approx(math.degrees(cmath.phase(want)) % 360, abs=1e-6)
    assert trim.solution.predicted_residual[0]["original_amount"] == pytest.approx(0.4)  # measured, not fitted
    assert set(trim.to_dict()) == {"updated_coefficients", "trim"}
