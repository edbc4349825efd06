"""The work-order model (toolkit/workorder/model.py): vectors, add/remove effects, validation of
operations, the acceptance rule of a plane and the JSON form of a finished order.

Check values: the ISO 21940-11:2016 6.3.3 shop formula U_per = 9549.3 · G · m / n for the hand-made example
order; the add/remove convention (removing mass at θ equals adding it at θ + 180°) is common practice,
derived here as vector algebra (D). Everything else is behaviour of our own model, not a published value.
"""

from __future__ import annotations

import json
import math
from dataclasses import replace

import pytest
from hypothesis import given, strategies as st

from toolkit.errors import BadInput
from toolkit.workorder.model import Operation, effect, example_order, polar, vector


@given(st.floats(1e-3, 1e6), st.floats(0, 359.99))
def test_polar_inverts_vector(amount, angle):
    back_amount, back_angle = polar(vector(amount, angle))
    assert back_amount == pytest.approx(amount, rel=1e-12)
    assert min(abs(back_angle - angle), 360 - abs(back_angle - angle)) < 1e-9


@given(st.floats(1e-3, 1e6), st.floats(0, 359.99))
def test_removing_at_an_angle_is_adding_opposite(amount, angle):
    # common practice, no source; derived here (D) as vector algebra
    assert abs(effect("remove", amount, angle) - effect("add", amount, (angle + 180) % 360)) < 1e-9 * amount


def test_unknown_action_kind_or_angle_is_refused():
    with pytest.raises(BadInput, match="action"):
        effect("drill", 1.0, 0.0)
    op = example_order().operations[0]
    with pytest.raises(BadInput, match="action"):
        replace(op, action="subtract")
    with pytest.raises(BadInput, match="kind"):
        replace(op, kind="glue")
    with pytest.raises(BadInput, match=r"\[0, 360\)"):
        replace(op, angle_deg=360.0)


def test_example_order_allowances_follow_the_shop_formula():
    order = example_order()
    # ISO 21940-11:2016, 6.3.3: U_per = 9549.3 * G * m / n = 9549.3 * 6.3 * 412 / 1480 = 16 747 g*mm (printed
    # to 5 digits in the docstring)
    assert order.u_per_total_g_mm == pytest.approx(16747, rel=5e-5)
    # lever rule shares 660/1200 and 540/1200 (ISO 21940-11:2016, 7.2; clause wording from memory)
    assert [p.tolerance.u_per_g_mm for p in order.planes] == pytest.approx(
        [order.u_per_total_g_mm * 660 / 1200, order.u_per_total_g_mm * 540 / 1200])


def test_predicted_residual_is_the_vector_sum_of_initial_and_operations():
    for plane in example_order().planes:
        residual = vector(plane.initial_g_mm, plane.initial_deg) + sum(op.effect for op in plane.operations)
        amount, angle = polar(residual)
        assert plane.predicted_g_mm == pytest.approx(amount, rel=1e-12)
        assert plane.predicted_deg == pytest.approx(angle, abs=1e-9)


def test_a_plane_passes_up_to_its_limit_and_the_limit_takes_the_error_allowance():
    plane = example_order().planes[0]
    at_limit = replace(plane, predicted_g_mm=plane.tolerance.u_per_g_mm)
    assert at_limit.passed
    assert not replace(plane, predicted_g_mm=plane.tolerance.u_per_g_mm * 1.001).passed
    reduced = replace(at_limit, limit_g_mm=plane.tolerance.u_per_g_mm - 100)
    assert reduced.limit == pytest.approx(plane.tolerance.u_per_g_mm - 100)
    assert not reduced.passed


@pytest.mark.parametrize("name", ["job-fan-readings.toml", "job-fan-runs.toml", "job-blower-imperial.toml"])
def test_to_dict_is_asdict_without_the_inputs(name):
    """to_dict walks the dataclasses itself (faster than dataclasses.asdict): the same dictionary."""
    from dataclasses import asdict
    from pathlib import Path

    from toolkit.workorder.build import order_from_file

    examples = Path(__file__).resolve().parents[1] / "examples"
    for order in (example_order(), order_from_file(examples / name)):
        expected = asdict(order)
        expected.pop("inputs")
        data = order.to_dict()
        data.pop("passed"), data.pop("corrections")
        for plane in data["planes"]:
            plane.pop("passed"), plane.pop("u_per_g_mm")
        assert data == expected
        assert type(data["planes"]) is type(expected["planes"]) and type(data["cautions"]) is tuple


def test_to_dict_is_json_with_the_contract_keys():
    order = example_order()
    data = json.loads(json.dumps(order.to_dict()))
    assert data["passed"] is True
    assert {"plane", "mass_g", "angle_deg", "action"} <= set(data["corrections"][0])
    assert [c["action"] for c in data["corrections"]] == ["remove", "add"]
    assert all("u_per_g_mm" in p and "passed" in p for p in data["planes"])
    assert "inputs" not in data
    assert math.isfinite(data["u_per_total_g_mm"])
