"""The one formatter (toolkit/formatting.py): unit systems, widths, and that every face formats through it.

Check values: the exact conversion factors of the international yard and pound (1959): 1 in = 25.4 mm,
1 lb = 0.45359237 kg, hence 1 oz = 28.349523125 g and 1 oz·in = 720.0778 g·mm.
"""

from __future__ import annotations

import re

import pytest
from hypothesis import given, strategies as st

from toolkit.errors import BadInput
from toolkit.formatting import Formatter, unit_labels
from toolkit.units import Q_, unit_system

OZ_IN_G_MM = 28.349523125 * 25.4  # international yard and pound (1959): 1 oz·in in g·mm


def test_each_system_prints_its_own_units():
    metric, imperial, inch_gram = Formatter("metric"), Formatter("imperial"), Formatter("inch-gram")
    assert metric.unbalance(2005.35) == "2005 g·mm"
    assert imperial.unbalance(OZ_IN_G_MM) == "1.000 oz·in"  # 1959 yard and pound: 1 oz·in exactly
    assert inch_gram.unbalance(25.4) == "1.000 g·in"  # 1 in = 25.4 mm exactly
    assert imperial.mass(28.349523125) == "1.00 oz"  # 1 oz = 28.349523125 g exactly
    assert inch_gram.mass(12.345) == "12.3 g"
    assert imperial.rotor_mass(0.45359237) == "1.000 lb"  # 1 lb = 0.45359237 kg exactly
    assert inch_gram.length(254.0) == "10.00 in"


def test_quantities_and_stored_floats_agree():
    f = Formatter("imperial")
    assert f.unbalance(Q_(3.3, "oz*in")) == f.unbalance(3.3 * OZ_IN_G_MM) == "3.300 oz·in"
    assert f.dimension(Q_(9, "in")) == f.dimension(228.6) == "9.000 in"
    assert f.mass(Q_(22.35, "g"), sig=4) == "0.7884 oz"  # 22.35 / 28.349523125 = 0.78837...


def test_widths():
    m, i = Formatter("metric"), Formatter("imperial")
    assert m.dimension(150.0) == "150 mm" and m.dimension(46.934) == "46.93 mm"
    assert m.depth(21.24) == "21.2 mm" and i.depth(21.2) == "0.835 in"  # 21.2 / 25.4 = 0.8346...
    assert m.unbalance(123456.0) == "123456 g·mm"  # whole numbers from 10^4 up, never an exponent
    assert m.unbalance(0.0) == "0 g·mm"


def test_a_system_that_does_not_exist_is_refused_by_name():
    with pytest.raises(BadInput, match="units: 'cubits' is not a unit system"):
        Formatter("cubits")


@given(st.floats(min_value=1e-3, max_value=1e6), st.sampled_from(["metric", "imperial", "inch-gram"]))
def test_printed_unbalance_reads_back_to_the_value(g_mm, units):
    """The printed text is a quantity the reader accepts, within the rounding of four figures."""
    text = Formatter(units).unbalance(g_mm)
    back = Q_(float(text.split()[0]), text.split()[1].replace("·", "*")).m_as("g*mm")
    assert back == pytest.approx(g_mm, rel=1e-3)


def test_labels_follow_the_system():
    assert unit_labels("inch-gram")["length"] == ("in", 1 / 25.4)
    assert unit_system("inch-gram").inch and unit_system("imperial").inch and not unit_system("metric").inch


def test_the_other_faces_format_through_it():
    """The work order, the planner and the calculators all print what the one formatter prints."""
    from toolkit.commands.tolerances import _Fmt
    from toolkit.fabricate.plan import plan_correction
    from toolkit.workorder import model

    assert model.Formatter is Formatter
    assert _Fmt("imperial").unb(Q_(1, "oz*in")) == Formatter("imperial").unbalance(OZ_IN_G_MM)
    plan = plan_correction("3.3 oz*in", 40, "drill", radius="6 in", material="steel", units="imperial",
                           drills="inch")
    text = plan.operations[0].description
    f = Formatter("imperial")
    assert f"removes {f.mass(plan.operations[0].mass_g, sig=4)}" in text
    assert not re.search(r"\d (mm|g)\b", text), text
