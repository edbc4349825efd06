"""Fit and runout errors, point unbalances shared onto planes, and the error budget of an assembly.

U = m*e with e = c/2 or T/2 and the plane shares are derived here (D) by statics; the budget's summation rule
is as recalled (M), not a clause of ISO 21940-11 or ISO 21940-14. Check values are derived here (D).
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
from toolkit.fits import SUMMATION_MARK, budget_item, error_budget, fit_unbalance, split_to_planes


def test_fit_clearance_and_runout():
    r = fit_unbalance("38 kg", clearance="0.02 mm")
    assert r.eccentricity_um == pytest.approx(10.0)              # derived here (D): e = c/2
    assert r.unbalance_g_mm == pytest.approx(380.0)              # derived here (D): 38 kg x 10 um
    assert r.angle_deg is None
    t = fit_unbalance("12 kg", runout="0.03 mm", angle="120")
    assert t.unbalance_g_mm == pytest.approx(180.0) and t.angle_deg == 120.0  # derived here (D): 12 kg x 15 um
    inch = fit_unbalance("26.5 lb", runout="0.0012 in")
    assert inch.unbalance_g_mm == pytest.approx(26.5 * 0.45359237 * 0.0006 * 25.4 * 1000, rel=1e-9)


@pytest.mark.parametrize("kwargs,match", [
    ({"mass": 38, "clearance": "0.02 mm"}, r"^mass: 38 has no unit"),
    ({"mass": "38 kg", "clearance": "0.02"}, r"^clearance: '0.02' has no unit"),
    ({"mass": "38 kg"}, r"^clearance/runout/eccentricity: give exactly one"),
    ({"mass": "38 kg", "clearance": "0.02 mm", "runout": "0.01 mm"}, r"^clearance/runout/eccentricity:"),
])
def test_fit_refusals_name_the_parameter(kwargs, match):
    mass = kwargs.pop("mass")
    with pytest.raises(BadInput, match=match) as info:
        fit_unbalance(mass, **kwargs)
    assert "--" not in str(info.value)


def test_split_to_planes_statics():
    s = split_to_planes("100 g*mm@90", "50 mm", [("I", "0 mm"), ("II", "200 mm")])
    assert [round(x.amount_g_mm, 9) for x in s] == [75.0, 25.0]  # derived here (D): lever rule
    one = split_to_planes("100 g*mm@90", "50 mm", {"I": "0 mm"})
    assert one[0].amount_g_mm == pytest.approx(100.0)


@settings(max_examples=60, deadline=None)
@given(u=st.floats(min_value=1, max_value=1e5), a=st.floats(min_value=0, max_value=359),
       z=st.floats(min_value=-500, max_value=1500).map(lambda x: round(x, 3)),
       z1=st.floats(min_value=-200, max_value=400).map(lambda x: round(x, 3)),  # positions to 1 um, as a shop writes them
       gap=st.floats(min_value=10, max_value=1000))
def test_shares_keep_resultant_and_moment(u, a, z, z1, gap):
    z2 = z1 + gap
    s = split_to_planes(f"{u} g*mm@{a}", f"{z} mm", {"I": f"{z1} mm", "II": f"{z2} mm"})
    v = [cmath.rect(x.amount_g_mm, math.radians(x.angle_deg)) for x in s]
    want = cmath.rect(u, math.radians(a))
    assert abs(sum(v) - want) <= 1e-9 * u * (1 + abs(z - z1) / gap)
    assert abs(v[0] * z1 + v[1] * z2 - want * z) <= 1e-7 * u * (abs(z) + abs(z1) + gap)


def test_budget_hand_example():
    # derived here (D): known 300 g*mm@0 and unknown 400 g*mm -> worst 700, RSS 500
    b = error_budget([budget_item("a", "300 g*mm@0"), budget_item("b", "400 g*mm")], "600 g*mm")
    assert (b.worst_case_g_mm, b.rss_g_mm) == (700.0, 500.0)
    assert b.verdict == "within by estimate" and b.passed is True
    assert [i.name for i in b.items] == ["b", "a"]                 # largest first
    assert b.rule_mark == SUMMATION_MARK == "M"
    assert error_budget(b.items, "450 g*mm").verdict == "exceeds"
    assert error_budget(b.items, "700 g*mm").verdict == "within"


def test_budget_all_known_is_the_vector_sum():
    items = [budget_item("x", "120 g*mm@40"), budget_item("y", "173 g*mm@90"),
             fit_unbalance("12 kg", runout="0.03 mm", angle=200).as_item("hub fit")]
    b = error_budget(items, "400 g*mm")
    ref = abs(120 * np.exp(1j * np.radians(40)) + 173 * np.exp(1j * np.radians(90))
              + 180 * np.exp(1j * np.radians(200)))
    assert b.all_angles_known and b.vector_sum_g_mm == pytest.approx(ref, rel=1e-12)
    assert b.worst_case_g_mm == pytest.approx(ref) and b.rss_g_mm == pytest.approx(ref)
    assert b.magnitudes_g_mm == pytest.approx(473.0)


@settings(max_examples=80, deadline=None)
@given(st.lists(st.tuples(st.floats(min_value=0, max_value=1e4).map(lambda x: round(x, 6)),
                          st.one_of(st.none(), st.floats(min_value=0, max_value=359))), min_size=1, max_size=8))
def test_budget_bounds(raw):
    items = [budget_item(f"c{i}", (f"{amt} g*mm", ang)) for i, (amt, ang) in enumerate(raw)]
    b = error_budget(items)
    eps = 1e-9 * (1 + b.magnitudes_g_mm)
    assert b.rss_g_mm <= b.worst_case_g_mm + eps <= b.magnitudes_g_mm + 2 * eps
    assert [i.amount_g_mm for i in b.items] == sorted((i.amount_g_mm for i in items), reverse=True)


def test_budget_refusals():
    with pytest.raises(BadInput, match="^items: the budget has no contributions"):
        error_budget([])
    with pytest.raises(BadInput, match="^items: the name 'a' is used twice"):
        error_budget([budget_item("a", "1 g*mm"), budget_item("a", "2 g*mm")])
    with pytest.raises(BadInput, match="^a unbalance: '5' has no unit"):
        budget_item("a", "5")


# -- command line -----------------------------------------------------------------------------------------

def test_cli_budget(capsys):
    rc = main(["budget", "--tolerance", "600 g*mm", "--part", "impeller=120 g*mm@40", "--part", "shaft=95 g*mm",
               "--fit", "hub=38 kg,clearance 0.02 mm", "--key", "key=173 g*mm@90", "--json"])
    data = json.loads(capsys.readouterr().out)
    assert rc == 0 and data["verdict"] == "within by estimate"
    assert data["items"][0]["name"] == "hub" and data["items"][0]["amount_g_mm"] == pytest.approx(380.0)
    assert data["rule_mark"] == "M"


def test_cli_budget_by_grade_and_exit_1(capsys):
    # U_per = 9549.3 * 2.5 * 80 / 2950 = 647.4 g*mm (ISO 21940-11:2016, 6.3.3 formula)
    rc = main(["budget", "--grade", "G2.5", "--mass", "80 kg", "--speed", "2950 rpm",
               "--part", "a=700 g*mm@0", "--json"])
    data = json.loads(capsys.readouterr().out)
    assert rc == 1 and data["tolerance_g_mm"] == pytest.approx(647.4, abs=0.05)
    assert "ISO 21940-11" in data["tolerance_basis"]


def test_cli_budget_errors_name_options(capsys):
    assert main(["budget", "--part", "a=5"]) == 2
    assert capsys.readouterr().err.startswith("counterpoise budget: error: --part a: '5' has no unit")
    assert main(["budget", "--fit", "hub=12 kg,runout 0.03"]) == 2
    assert capsys.readouterr().err.startswith("counterpoise budget: error: --fit hub: '0.03' has no unit")
    assert main(["budget", "--fit", "hub=12 kg"]) == 2
    assert "--fit: 'hub=12 kg' is malformed" in capsys.readouterr().err
