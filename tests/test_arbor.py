"""The arbor index method: the separation checked against a real-valued least-squares solve written
separately here (numpy's lstsq), the hand-worked example of docs/tour-assembly.md and hypothesis properties.

Check values are derived here (D): they check our implementation, not a published number. The procedure
(read, turn the part on the arbor, read again) is common shop practice, no published source.
"""

from __future__ import annotations

import cmath
import json
import math

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

from toolkit.arbor import DEFAULT_MAX_SPREAD, index_separation
from toolkit.cli import main
from toolkit.errors import BadInput


def _vec(amount, angle):
    return cmath.rect(amount, math.radians(angle))


def _text(z: complex) -> str:
    # an amount below the reader's smallest unbalance (1e-9 g*mm) is rounding noise of a zero: write 0
    return f"{abs(z) if abs(z) >= 1e-9 else 0.0!r} g*mm@{math.degrees(cmath.phase(z)) % 360!r}"


def reference_separation(readings: list[complex], phi_deg: list[float]):
    """Arbor and part shares by a real-valued least-squares solve of
    [Re U_k, Im U_k] = [A_x + P_x cos(phi) - P_y sin(phi), A_y + P_x sin(phi) + P_y cos(phi)]
    (written here independently of the library's complex formulation)."""
    rows, rhs = [], []
    for u, p in zip(readings, phi_deg):
        c, s = math.cos(math.radians(p)), math.sin(math.radians(p))
        rows.append([1.0, 0.0, c, -s])
        rhs.append(u.real)
        rows.append([0.0, 1.0, s, c])
        rhs.append(u.imag)
    x, *_ = np.linalg.lstsq(np.array(rows), np.array(rhs), rcond=None)
    return complex(x[0], x[1]), complex(x[2], x[3])


def test_hand_worked_example_180():
    # docs/tour-assembly.md, derived here (D): U1 = 300 g*mm@40 (part at 0), U2 = 180 g*mm@200 (part at 180)
    # U1 = (229.81, 192.84), U2 = (-169.14, -61.56); A = (U1 + U2)/2 = (30.33, 65.64); P = (U1 - U2)/2
    # = (199.48, 127.20)
    r = index_separation(["300 g*mm@40", "180 g*mm@200"], [0, 180])
    assert r.arbor_g_mm == pytest.approx(72.31, abs=0.01)        # derived here (D)
    assert r.arbor_angle_deg == pytest.approx(65.2, abs=0.05)    # derived here (D)
    assert r.part_g_mm == pytest.approx(236.6, abs=0.05)         # derived here (D)
    assert r.part_angle_deg == pytest.approx(32.5, abs=0.05)     # derived here (D)
    assert r.consistent is None and any("cannot show" in w for w in r.warnings)


def test_part_share_is_in_the_parts_own_frame():
    # the part's heavy spot at 10 deg of its own mark; arbor share 50 g*mm@300; the part's mark at 90 and 270
    A, P = _vec(50, 300), _vec(200, 10)
    readings = [A + P * _vec(1, 90), A + P * _vec(1, 270)]
    r = index_separation([_text(u) for u in readings], [90, 270])
    assert r.part_g_mm == pytest.approx(200) and r.part_angle_deg == pytest.approx(10)
    assert r.arbor_g_mm == pytest.approx(50) and r.arbor_angle_deg == pytest.approx(300)


def test_against_independent_least_squares_with_noise():
    rng = np.random.default_rng(7)
    phi = [0, 60, 120, 180, 240, 300]
    A, P = _vec(80, 20), _vec(150, 250)
    u = [A + P * _vec(1, p) + complex(*rng.normal(0, 5, 2)) for p in phi]
    a_ref, p_ref = reference_separation(u, phi)
    r = index_separation([_text(z) for z in u], phi)
    assert abs(_vec(r.arbor_g_mm, r.arbor_angle_deg) - a_ref) < 1e-9
    assert abs(_vec(r.part_g_mm, r.part_angle_deg) - p_ref) < 1e-9
    # the spread is the RMS misfit of that fit
    misfit = [z - (a_ref + p_ref * _vec(1, p)) for z, p in zip(u, phi)]
    assert r.spread_g_mm == pytest.approx(math.sqrt(np.mean(np.abs(misfit) ** 2)), rel=1e-9)
    assert r.consistent is True


def test_inconsistent_readings_warn_and_the_limit_is_overridable():
    readings = ["300 g*mm@40", "150 g*mm@170", "260 g*mm@270"]
    r = index_separation(readings)
    assert r.max_spread == DEFAULT_MAX_SPREAD and r.consistent is False
    assert any("not consistent" in w for w in r.warnings)
    loose = index_separation(readings, max_spread=0.5)
    assert loose.consistent is True and loose.to_dict()["max_spread_source"] == "given"


def test_mass_readings_with_a_radius():
    r = index_separation(["3 g@40", "1.8 g@200"], [0, 180], radius="100 mm")
    assert r.part_g_mm == pytest.approx(236.6, abs=0.05)         # derived here (D): the example above at 100 mm


@pytest.mark.parametrize("args,kwargs,match", [
    ((["300@40", "180 g*mm@200"],), {}, r"^reading 1: "),
    ((["300 g*mm@40"],), {}, r"^readings: 1 given"),
    ((["300 g*mm@40", "180 g*mm@200"], [0, 360]), {}, r"^index_angles: every reading is at the same index"),
    ((["300 g*mm@40", "180 g*mm@200"], [0]), {}, r"^index_angles: 1 given"),
    ((["300 g*mm@40", "180 g*mm@200"],), {"max_spread": 0}, r"^max_spread:"),
    ((["300 g*mm@40", "180 g*mm@200"],), {"allowance": 150}, r"^allowance: 150 has no unit"),
])
def test_refusals_name_the_parameter(args, kwargs, match):
    with pytest.raises(BadInput, match=match) as info:
        index_separation(*args, **kwargs)
    assert "--" not in str(info.value)


amounts = st.floats(min_value=1.0, max_value=5000.0)
angles = st.floats(min_value=0.0, max_value=359.9)


@settings(max_examples=80, deadline=None)
@given(a=amounts, aa=angles, p=amounts, pa=angles, n=st.integers(min_value=2, max_value=8),
       offset=angles, equal=st.booleans(), data=st.data())
def test_separation_recovers_random_shares(a, aa, p, pa, n, offset, equal, data):
    if equal:
        phi = [(offset + k * 360.0 / n) % 360 for k in range(n)]
    else:
        phi = data.draw(st.lists(st.floats(min_value=0, max_value=359.9), min_size=n, max_size=n))
        # index positions far enough apart to separate the shares
        if np.linalg.cond(np.column_stack([np.ones(n), np.exp(1j * np.radians(phi))])) > 50:
            return
    A, P = _vec(a, aa), _vec(p, pa)
    readings = [A + P * _vec(1, x) for x in phi]
    r = index_separation([_text(z) for z in readings], phi)
    scale = a + p
    assert abs(_vec(r.arbor_g_mm, r.arbor_angle_deg) - A) < 1e-7 * scale
    assert abs(_vec(r.part_g_mm, r.part_angle_deg) - P) < 1e-7 * scale
    if n > 2:
        assert r.consistent is True


# -- command line -----------------------------------------------------------------------------------------

def test_cli_index(capsys):
    rc = main(["index", "--reading", "0=300 g*mm@40", "--reading", "180=180 g*mm@200", "--allowance", "150 g*mm",
               "--json"])
    data = json.loads(capsys.readouterr().out)
    assert rc == 1 and data["part_within"] is False
    assert data["part"]["amount_g_mm"] == pytest.approx(236.6, abs=0.05)  # derived here (D)
    assert data["part"]["frame"] == "part's own reference mark"


def test_cli_index_errors_name_options(capsys):
    assert main(["index", "--reading", "300@40", "--reading", "180 g*mm@200"]) == 2
    assert capsys.readouterr().err.startswith("counterpoise index: error: --reading 1: ")
    assert main(["index", "--reading", "0=300 g*mm@40", "--reading", "180 g*mm@200"]) == 2
    assert "--reading: give INDEX=AMOUNT@ANGLE for every reading" in capsys.readouterr().err


def test_warnings_carry_their_parameters_and_the_cli_words_them_as_options(capsys):
    # two readings 90 degrees apart: the library names its own parameters (index_angles, readings) as fields
    # the faces word, not as prose a face has to parse
    r = index_separation(["300 g*mm@40", "180 g*mm@200"], ["0", "90"])
    assert [w.mentions for w in r.warnings] == [("index_angles",), ("readings",)]
    assert str(r.warnings[0]).startswith("index_angles: two readings 90 degrees apart")
    assert main(["index", "--reading", "0=300 g*mm@40", "--reading", "90=180 g*mm@200", "--json"]) == 0
    said = json.loads(capsys.readouterr().out)["warnings"]
    assert said[0].startswith("--reading: two readings 90 degrees apart, not 180")
    assert said[1].startswith("--reading: two readings fix both shares exactly")
    assert "index_angles" not in " ".join(said)
