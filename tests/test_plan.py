"""Correction plans: operations in words with their action and angle, achieved vector, allowance check and
the search for finer options."""

import cmath
import math

import pytest

from toolkit.errors import BadInput
from toolkit.fabricate.plan import plan_correction


def test_add_request_drilled_opposite_and_achieved_in_the_request_sense():
    # removing mass at θ equals adding it at θ + 180° (docs/methods.md §2, derived; the shop convention of
    # drilling at the heavy spot is common practice, no source): "add at 131°" is drilled at 311°
    p = plan_correction("2400 g*mm", 131, "drill", radius="150 mm", material="steel", action="add")
    assert all(op.kind == "hole" and op.action == "remove" and op.angle_deg == 311 for op in p.operations)
    assert "at 311°" in p.operations[0].description and "deep to the shoulder" in p.operations[0].description
    assert p.achieved_angle_deg == pytest.approx(131)
    amount, angle = p.achieved
    # within 0.2 % of the request: depth rounded to the 0.1 mm step (common practice, no source)
    assert amount.m_as("g*mm") == pytest.approx(2400, rel=2e-3) and angle == pytest.approx(131)


def test_error_is_the_vector_difference():
    # derived (D): the residual left by the correction is |achieved - requested| as vectors
    p = plan_correction("5000 g*mm", 40, "drill", radius="120 mm", material="steel", orientation="radial",
                        fixed_positions=[0, 60, 120, 180, 240, 300])
    got = sum(cmath.rect(op.unbalance_g_mm, math.radians(op.angle_deg + 180)) for op in p.operations)
    want = cmath.rect(5000, math.radians(40))
    assert p.error.m_as("g*mm") == pytest.approx(abs(got - want), rel=1e-9)


def test_finer_option_tried_when_allowance_missed():
    coarse = plan_correction("38 g", 307, "plate", radius="620 mm", width="40 mm", material="steel", shape="rolled")
    assert coarse.within_allowance is None
    allowance = coarse.error_g_mm / 3
    p = plan_correction("38 g", 307, "plate", radius="620 mm", width="40 mm", material="steel", shape="rolled",
                        allowance=f"{allowance} g*mm")
    assert len(p.tried) > 1 and p.within_allowance is True and p.error_g_mm <= allowance
    assert p.operations[0].kind == "plate" and p.operations[0].action == "add" and p.operations[0].angle_deg == 307


def test_gives_up_with_a_reason():
    p = plan_correction("2400 g*mm", 0, "washers", radius="150 mm", size="M10", allowance="1 g*mm")
    assert p.within_allowance is False and "no option within the allowance" in p.reason
    assert p.reason in p.warnings


def test_to_dict_and_bad_method():
    d = plan_correction("2400 g*mm", 10, "washers", radius="150 mm", action="remove").to_dict()
    assert {"operations", "achieved_g_mm", "achieved_angle_deg", "error_g_mm", "within_allowance", "warnings",
            "cautions"} <= set(d)
    assert d["operations"][0]["angle_deg"] == 190 and d["operations"][0]["action"] == "add"
    with pytest.raises(BadInput, match="method: 'glue' is not allowed"):
        plan_correction("2400 g*mm", 10, "glue", radius="150 mm")
    with pytest.raises(BadInput, match="allowance: 5 has no unit"):
        plan_correction("2400 g*mm", 10, "washers", radius="150 mm", allowance=5)
