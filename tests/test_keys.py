"""Keyed rotors: the unbalance a key mismatch leaves, checked against solid geometry written separately here,
a sampled 3-D volume, the hand-worked example of docs/tour-assembly.md and hypothesis properties.

Check values are derived here (D) from the geometry of rectangular bars: they check our implementation, not a
published number. The conventions themselves follow ISO 21940-32:2012 (half-key convention for separately
balanced components).
"""

from __future__ import annotations

import cmath
import json
import math

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

from toolkit.cli import main
from toolkit.errors import BadInput
from toolkit.keys import MARKINGS, bar_unbalance, default_fill, key_unbalance
from toolkit.units import Q_

STEEL = 7.85e-3  # g/mm^3, carbon steel 7850 kg/m^3 (EN 1993-1-1:2005, 3.2.6, as in tables/materials.csv)

# the hand-worked example of docs/tour-assembly.md (an invented scenario)
EXAMPLE = dict(width="14 mm", height="9 mm", shaft_depth="5.5 mm", hub_depth="3.8 mm", shaft_diameter="50 mm",
               keyway_length="70 mm", hub_length="56 mm", hub_start="14 mm", keyway_angle=90, material="steel")


def solid_bar(rho, w, h, L, r_floor):
    """Mass [g] and unbalance [g*mm] of a w x h x L bar whose inner face is r_floor from the axis: mass times the
    centroid radius r_floor + h/2 (solid geometry, written separately from the library)."""
    mass = rho * w * h * L
    return mass, mass * (r_floor + h / 2.0)


def test_hand_worked_example():
    # derived here (D), worked by hand in docs/tour-assembly.md: R = 25, r0 = 19.5 mm; hub half-key 24.3..28.8 mm
    r = key_unbalance(**EXAMPLE)
    _m, top_out = solid_bar(STEEL, 14, 4.5, 14, 24.0)            # upper half of the key outside the hub
    assert top_out == pytest.approx(181.75, abs=0.01)            # derived here (D): 7.85e-3*14*4.5*14*26.25
    _m, top_in = solid_bar(STEEL, 14, 4.5, 56, 24.0)
    _m, hub_half = solid_bar(STEEL, 14, 4.5, 56, 24.3)
    assert top_in - hub_half == pytest.approx(-8.31, abs=0.01)   # derived here (D): 0.3 mm top clearance
    assert r.amount_g_mm == pytest.approx(173.44, abs=0.01)      # derived here (D): 181.75 - 8.31
    assert r.angle_deg == 90.0 and r.signed_g_mm > 0
    causes = {p.cause: p.signed_g_mm for p in r.parts}
    assert causes["key protrudes beyond the hub"] == pytest.approx(181.75, abs=0.01)
    assert causes["half-keys do not make up the key"] == pytest.approx(-8.31, abs=0.01)
    # the trim: cut the protruding part to half height over 173.44 / (7.85e-3*14*4.5*26.25) mm
    assert r.correction.trim_length_mm == pytest.approx(173.44 / 12.982, rel=1e-3)  # derived here (D)
    assert r.correction.protruding_mm == pytest.approx(14.0)


def test_bar_unbalance_matches_solid_geometry():
    m, u = solid_bar(STEEL, 8, 7, 40, 21.0)
    assert bar_unbalance("8 mm", "21 mm", "28 mm", "40 mm", "7850 kg/m^3").m_as("g*mm") == pytest.approx(u, rel=1e-12)


def _sampled_moment(bodies, theta_deg, rng, n=400_000):
    """Sum of sign * rho * (x + iy) dV over the bodies, by sampling random points in a box that holds them
    (a 3-D volume sampled in the rotor's own x, y, z axes, the keyway turned to theta)."""
    c, s = math.cos(math.radians(theta_deg)), math.sin(math.radians(theta_deg))
    total = 0j
    for sign, w, a, b, z0, z1 in bodies:
        # bounding box in the rotor's axes of the bar turned by theta
        corners = [(x * c - y * s, x * s + y * c) for x in (a, b) for y in (-w / 2, w / 2)]
        xs, ys = zip(*corners)
        lo = np.array([min(xs), min(ys), z0])
        hi = np.array([max(xs), max(ys), z1])
        p = lo + (hi - lo) * rng.random((n, 3))
        # back into the keyway's axes: u along the keyway's radius, v across it
        u = p[:, 0] * c + p[:, 1] * s
        v = -p[:, 0] * s + p[:, 1] * c
        inside = (u >= a) & (u <= b) & (np.abs(v) <= w / 2)
        vol = float(np.prod(hi - lo))
        moment = STEEL * vol * np.mean(np.where(inside, p[:, 0] + 1j * p[:, 1], 0))
        total += sign * moment
    return total


def test_sampled_volume_agrees():
    # an independent 3-D computation of the same bodies: key in service, shaft's and hub's half-keys
    rng = np.random.default_rng(12)
    theta = 30.0
    r = key_unbalance(**dict(EXAMPLE, keyway_angle=theta))
    bodies = [(+1, 14, 19.5, 28.5, 0, 70), (-1, 14, 19.5, 24.0, 0, 70), (-1, 14, 24.3, 28.8, 14, 70)]
    z = _sampled_moment(bodies, theta, rng)
    want = cmath.rect(r.amount_g_mm, math.radians(r.angle_deg))
    # derived here (D): sampling error of ~1e-3 of each body's ~1700 g*mm moment
    assert abs(z - want) < 10.0
    # and each body alone against its own sample
    for (sign, w, a, b, z0, z1), body in zip(bodies, r.bodies):
        alone = _sampled_moment([(1, w, a, b, z0, z1)], theta, rng)
        assert abs(alone) == pytest.approx(body.unbalance_g_mm, rel=5e-3)
        assert math.degrees(cmath.phase(alone)) % 360 == pytest.approx(theta, abs=0.3)


def test_empty_keyway_gets_a_compensating_half_key_of_its_length():
    # key 50 mm in a 70 mm keyway, the hub over the key, t2 = h - t1: only the empty 20 mm is left, light
    r = key_unbalance(width="8 mm", height="7 mm", shaft_depth="4 mm", shaft_diameter="40 mm", keyway_length="70 mm",
                      key_length="50 mm", hub_length="50 mm", hub_depth="3 mm", keyway_angle=0, material="steel")
    _m, half = solid_bar(STEEL, 8, 3.5, 20, 16.0)
    assert r.signed_g_mm == pytest.approx(-half, rel=1e-9)       # derived here (D)
    assert r.angle_deg == 180.0
    assert [p.cause for p in r.parts] == ["empty keyway (a key or half-key sat in it while balancing)"]
    assert r.correction.half_key_length_mm == pytest.approx(20.0, rel=1e-9)
    assert r.correction.half_key_room_mm == pytest.approx(20.0)
    assert "remove" in r.correction.words and "add" in r.correction.words


def test_rotor_run_solo_without_a_key():
    r = key_unbalance(width="8 mm", height="7 mm", shaft_depth="4 mm", shaft_diameter="40 mm",
                      keyway_length="60 mm", keyway_angle=45, material="steel", in_service="nothing")
    _m, half = solid_bar(STEEL, 8, 3.5, 60, 16.0)
    assert r.amount_g_mm == pytest.approx(half, rel=1e-9)        # derived here (D)
    assert r.angle_deg == 225.0                                   # light at the keyway: heavy opposite
    assert r.correction.half_key_length_mm == pytest.approx(60.0)


def test_components_balanced_to_different_conventions():
    # shaft to the full-key convention (a key in it), hub to the half-key convention
    r = key_unbalance(width="8 mm", height="7 mm", shaft_depth="4 mm", hub_depth="3 mm", shaft_diameter="40 mm",
                      keyway_length="50 mm", hub_length="50 mm", shaft_convention="full-key",
                      hub_convention="half-key", material="steel")
    _m, hub_half = solid_bar(STEEL, 8, 3.5, 50, 19.5)
    assert r.signed_g_mm == pytest.approx(-hub_half, rel=1e-9)   # derived here (D): the hub's half-key counted twice
    assert r.conventions["shaft"]["marking"] == MARKINGS["full-key"] == "F"
    assert any("conventions" in w for w in r.warnings)


def test_half_key_that_is_not_half():
    r = key_unbalance(width="8 mm", height="7 mm", shaft_depth="4 mm", hub_depth="3 mm", shaft_diameter="40 mm",
                      keyway_length="50 mm", hub_length="50 mm", half_key_height="4.2 mm", material="steel")
    # the shaft was balanced with 0.7 mm more key than half: that strip is missing in service
    _m, strip = solid_bar(STEEL, 8, 0.7, 50, 19.5)
    assert r.signed_g_mm == pytest.approx(-strip, rel=1e-9)      # derived here (D)
    assert any("half_key_height" in w for w in r.warnings)


def test_fill_defaults_follow_the_convention():
    assert default_fill("half-key", "shaft") == "half-key"
    assert default_fill("no-key", "hub") == "nothing"
    with pytest.raises(BadInput, match="^shaft_convention: 'quarter-key' is not allowed"):
        key_unbalance(**dict(EXAMPLE, shaft_convention="quarter-key"))


def test_plane_shares_have_the_resultant_and_moment():
    r = key_unbalance(**dict(EXAMPLE, planes={"I": "-40 mm", "II": "200 mm"}, allowance="120 g*mm"))
    shares = [cmath.rect(s.amount_g_mm, math.radians(s.angle_deg)) for s in r.planes]
    want = cmath.rect(r.amount_g_mm, math.radians(r.angle_deg))
    assert abs(sum(shares) - want) < 1e-9
    assert abs(shares[0] * -40 + shares[1] * 200 - want * r.axial_centre_mm) < 1e-6
    assert [c.passed for c in r.checks] == [False, True]
    assert r.passed is False


def test_fabricated_correction_removes_at_the_heavy_spot():
    r = key_unbalance(**dict(EXAMPLE, fix_method="drill", fix_radius="60 mm", allowance="20 g*mm"))
    plan = r.correction.plan
    assert plan is not None and plan.operations[0].action == "remove"
    assert plan.operations[0].angle_deg == pytest.approx(90.0)


@pytest.mark.parametrize("field,value,match", [
    ("width", 14, r"^width: 14 has no unit"),
    ("keyway_length", "70", r"^keyway_length: '70' has no unit"),
    ("key_length", "80 mm", r"^key_length/key_start: the key"),
    ("height", "12 mm", r"^height: the key"),
    ("half_key_height", "10 mm", r"^half_key_height:"),
])
def test_refusals_name_the_parameter(field, value, match):
    with pytest.raises(BadInput, match=match) as info:
        key_unbalance(**dict(EXAMPLE, **{field: value}))
    assert "--" not in str(info.value)


def test_same_result_in_other_units():
    a = key_unbalance(**EXAMPLE)
    b = key_unbalance(**dict(EXAMPLE, width=Q_(14 / 25.4, "in"), shaft_diameter="5 cm", keyway_length="0.07 m",
                             material=None, density="7.85 g/cm^3"))
    assert b.amount_g_mm == pytest.approx(a.amount_g_mm, rel=1e-9)


# -- properties -------------------------------------------------------------------------------------------

dims = st.floats(min_value=2.0, max_value=30.0)


@settings(max_examples=60, deadline=None)
@given(w=dims, h=dims, L=st.floats(min_value=5, max_value=300), k=st.floats(min_value=0.1, max_value=10),
       rho=st.floats(min_value=2000, max_value=9000), angle=st.floats(min_value=0, max_value=359))
def test_no_key_balancing_scales_with_length_and_density(w, h, L, k, rho, angle):
    # a shaft balanced with an empty keyway, then fitted with its key: U = rho w h L (r0 + h/2), linear in L and rho
    R = 60.0
    t1 = h * 0.6
    common = dict(width=f"{w} mm", height=f"{h} mm", shaft_depth=f"{t1} mm", shaft_diameter=f"{2 * R + 2 * w} mm",
                  shaft_convention="no-key", keyway_angle=angle)
    R = R + w
    one = key_unbalance(keyway_length=f"{L} mm", density=f"{rho} kg/m^3", **common)
    _m, u = solid_bar(rho * 1e-6, w, h, L, R - t1)
    assert one.amount_g_mm == pytest.approx(u, rel=1e-9)
    assert one.angle_deg == pytest.approx(angle % 360, abs=1e-9)
    longer = key_unbalance(keyway_length=f"{L * k} mm", density=f"{rho} kg/m^3", **common)
    assert longer.amount_g_mm == pytest.approx(k * one.amount_g_mm, rel=1e-9)
    denser = key_unbalance(keyway_length=f"{L} mm", density=f"{min(rho * 2, 25000)} kg/m^3", **common)
    assert denser.amount_g_mm == pytest.approx(one.amount_g_mm * min(rho * 2, 25000) / rho, rel=1e-9)


@settings(max_examples=60, deadline=None)
@given(w=dims, h=dims, L=st.floats(min_value=5, max_value=300), frac=st.floats(min_value=0.3, max_value=0.7))
def test_a_key_that_spans_both_half_keys_leaves_nothing(w, h, L, frac):
    # the standard's promise, in our model: key = keyway = hub length and h = t1 + t2 -> balanced assembly
    t1 = h * frac
    r = key_unbalance(width=f"{w} mm", height=f"{h} mm", shaft_depth=f"{t1} mm", hub_depth=f"{h - t1} mm",
                      shaft_diameter=f"{4 * w + 2 * h} mm", keyway_length=f"{L} mm", hub_length=f"{L} mm",
                      material="steel")
    scale = max(b.unbalance_g_mm for b in r.bodies)
    assert r.amount_g_mm <= 1e-9 * scale
    assert r.correction.action == "none"


# -- command line -----------------------------------------------------------------------------------------

ARGV = ["key", "--width", "14 mm", "--height", "9 mm", "--shaft-depth", "5.5 mm", "--hub-depth", "3.8 mm",
        "--shaft-diameter", "50 mm", "--keyway-length", "70 mm", "--hub-length", "56 mm", "--hub-start", "14 mm",
        "--keyway-angle", "90"]


def test_cli_key_json(capsys):
    assert main(ARGV + ["--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["amount_g_mm"] == pytest.approx(173.44, abs=0.01)  # derived here (D), as above
    assert data["conventions"]["shaft"]["marking"] == "H"
    assert data["density_kg_m3"] == 7850.0


def test_cli_key_allowance_exit_1_and_text(capsys):
    assert main(ARGV + ["--plane", "I=-40 mm", "--plane", "II=200 mm", "--allowance", "120 g*mm"]) == 1
    out = capsys.readouterr().out
    assert "key protrudes beyond the hub" in out and "FAIL" in out and "remove 173.4 g·mm at 90°" in out


def test_cli_key_errors_name_options(capsys):
    assert main(ARGV[:2] + ["14"] + ARGV[3:]) == 2
    err = capsys.readouterr().err
    assert err.startswith("counterpoise key: error: --width: '14' has no unit")
    assert main(ARGV + ["--key-length", "90 mm"]) == 2
    assert "--key-length/--key-start:" in capsys.readouterr().err
    assert main(ARGV + ["--shaft", "quarter-key"]) == 2
    assert "--shaft: 'quarter-key' is not allowed" in capsys.readouterr().err


# -- the tour's pasted outputs are real -------------------------------------------------------------------

def test_tour_outputs_are_true(capsys, tmp_path, monkeypatch):
    import re
    import shlex
    from pathlib import Path

    root = Path(__file__).resolve().parents[1]
    text = (root / "docs" / "tour-assembly.md").read_text(encoding="utf-8")
    # the tour's commands write into ./orders: run them in a folder of this test's own
    (tmp_path / "examples").symlink_to(root / "examples")
    monkeypatch.chdir(tmp_path)
    blocks = re.findall(r"```\n\$ (counterpoise [^\n]+)\n(.*?)```", text, flags=re.S)
    assert len(blocks) >= 6
    for command, shown in blocks:
        main(shlex.split(command)[1:])
        out = capsys.readouterr().out
        assert out.rstrip("\n") == shown.rstrip("\n"), command


def test_marking_is_overridable_and_says_so():
    # the letters are marked from memory as the standard's wording (M), so the user can override them
    r = key_unbalance(**dict(EXAMPLE, shaft_marking="HK", hub_convention="no-key"))
    assert r.conventions["shaft"] == {"convention": "half-key", "fill": "half-key", "marking": "HK",
                                      "marking_given": True}
    assert r.conventions["hub"]["marking"] == "none" and r.conventions["hub"]["marking_given"] is False


def test_cli_warnings_name_options_not_parameters(capsys):
    assert main(["key", "--width", "8 mm", "--height", "7 mm", "--shaft-depth", "4 mm", "--shaft-diameter", "40 mm",
                 "--keyway-length", "60 mm", "--hub", "full-key", "--half-key-height", "3 mm"]) == 0
    out = capsys.readouterr().out
    assert "warning: --hub: no --hub-length, so no hub" in out
    assert "warning: --half-key-height: the shaft's half-key was 3 mm high" in out
    assert "hub_length" not in out and "half_key_height" not in out


def test_warnings_name_their_parameters_for_every_face():
    # the library's warning names the parameters it is about as fields (toolkit.errors.Worded): the command
    # line words them as options (above), a job as its [key] table's keys
    from toolkit.workorder.jobkey import _reword

    no_hub = {k: v for k, v in EXAMPLE.items() if not k.startswith("hub_")}
    r = key_unbalance(**no_hub, hub_convention="full-key")
    ignored = next(w for w in r.warnings if "no hub" in w)
    assert ignored.startswith("hub_convention: no hub_length, so no hub") and ignored.mentions[0] == "hub_length"
    assert _reword(ignored, "shaft").startswith("[key] mate.convention: no [key] hub_length, so no hub")
