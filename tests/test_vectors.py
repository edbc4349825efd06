"""Tests for toolkit.vectors: parsing, adding, radius change, splitting, combining, static/couple.

Check values are synthetic cases derived here (D): they check our
implementation of plain vector algebra, they are not published numbers.
"""

import cmath
import math

import pytest
from hypothesis import given, settings, strategies as st

from toolkit.errors import BadInput, Infeasible
from toolkit.units import Q_
from toolkit.vectors import (add_vectors, change_radius, combine, parse_angle, parse_reading, parse_vector,
                             polar, scale_vector, split_vector, static_couple, to_complex)


def _vec(mass_g, angle):
    return mass_g * cmath.exp(1j * math.radians(angle))


def _angle_close(a, b, tol):
    d = abs(a - b) % 360
    return min(d, 360 - d) <= tol


# --- reference cases (source: synthetic cases derived here, mark D) ---------------------------------------------------------

def test_split_reference_case():
    # correction.csv "split": 25 g@100 onto 90 and 135 -> 20.279 g@90 + 6.139 g@135, rel 1e-4
    # derived here (D), law of sines, checks our implementation, not a published number
    parts = split_vector("25 g@100", at=[90, 135]).parts
    assert [a for a, _ in parts] == [90.0, 135.0]
    assert parts[0][1] == pytest.approx(20.279, rel=1e-4)
    assert parts[1][1] == pytest.approx(6.139, rel=1e-4)


def test_combine_reference_case():
    # correction.csv "combine": 10 g@0 + 15 g@90 + 5 g@200 -> 14.308 g@68.25, rel 1e-4
    # derived here (D), vector sum, checks our implementation, not a published number
    amount, angle = add_vectors("10 g@0", "15 g@90", "5 g@200")
    assert amount.m_as("g") == pytest.approx(14.308, rel=1e-4)
    assert angle == pytest.approx(68.25, abs=0.01)


def test_radius_reference_case():
    # correction.csv "radius": 30 g at 120 mm -> 18 g at 200 mm, rel 1e-9; derived here (D), m2 = m1 r1 / r2
    assert change_radius("30 g", "120 mm", "200 mm").m_as("g") == pytest.approx(18.0, rel=1e-9)


# --- behaviour -------------------------------------------------------------------------------------------

def test_parse_vector_keeps_its_contract():
    # used by other modules: plain numbers without kind, quantities with kind
    assert parse_vector("61.35@0") == (61.35, 0.0)
    amount, angle = parse_vector("38 g@210", "mass")
    assert amount.m_as("g") == 38 and angle == 210.0
    assert parse_angle("-30") == 330.0


def test_parse_reading_kinds_and_refusals():
    z, kind, unit = parse_reading("12 um@300")
    assert (kind, unit) == ("displacement", "um") and abs(z) == pytest.approx(12)
    z2, kind2, _ = parse_reading("0.012 mm@300")  # same displacement in mm
    assert kind2 == "displacement" and z2 == pytest.approx(z)
    assert parse_reading("3 m/s^2@10")[1] == "acceleration"
    with pytest.raises(BadInput, match="has no unit"):
        parse_reading("4.2@10", "--original")
    with pytest.raises(BadInput, match="not a vibration velocity"):
        parse_reading("4.2 g@10", "--original")
    with pytest.raises(BadInput, match="not a reading"):
        parse_reading("4.2 mm/s", "--original")


def test_scale_and_remove_equals_add_opposite():
    amount, angle = scale_vector("12 g@30", -1)
    assert amount.m_as("g") == pytest.approx(12) and angle == pytest.approx(210)


def test_split_on_a_position_and_infeasible():
    assert split_vector("10 g@45", positions=8).parts == ((45.0, 10.0),)
    with pytest.raises(Infeasible, match="180 degrees"):
        split_vector("25 g@100", at=[90, 300])
    with pytest.raises(BadInput, match="from 3 to 360"):
        split_vector("25 g@100", positions=2)
    with pytest.raises(BadInput, match="either"):
        split_vector("25 g@100")


def test_combine_needs_radius_for_masses():
    with pytest.raises(BadInput, match="radius"):
        combine("10 g@0")
    u, angle = combine(("10 g@0", "100 mm"), "500 g*mm@90")
    assert u.m_as("g*mm") == pytest.approx(math.hypot(1000, 500))


def test_static_couple_reconstructs_planes():
    sc = static_couple("2400 g*mm@30", "1500 g*mm@250", "0 mm", "400 mm")
    s = _vec(sc.static_g_mm, sc.static_angle_deg)
    c = _vec(sc.couple_g_mm, sc.couple_angle_deg)
    assert s / 2 + c == pytest.approx(_vec(2400, 30))  # derived here (D): U1 = S/2 + C
    assert s / 2 - c == pytest.approx(_vec(1500, 250))  # derived here (D): U2 = S/2 - C
    m = _vec(sc.moment_g_mm2, sc.moment_angle_deg)
    assert m == pytest.approx(_vec(1500, 250) * 400)  # moment about z = 0, derived here (D)


# --- properties ----------------------------------------------------------------------------------------

@settings(max_examples=200, deadline=None)
@given(mass=st.floats(0.01, 5000), angle=st.floats(0, 359.999), n=st.integers(3, 36),
       offset=st.floats(0, 359.999))
def test_split_parts_sum_to_input(mass, angle, n, offset):
    # derived here (D): the parts' vector sum equals the input, every part non-negative
    split = split_vector(f"{mass!r} g@{angle!r}", positions=n, offset=offset)
    total = sum(_vec(m, a) for a, m in split.parts)
    assert abs(total - _vec(mass, angle)) <= 1e-9 * mass
    assert all(m >= -1e-12 for _, m in split.parts)
    assert len(split.parts) <= 2


@settings(max_examples=100, deadline=None)
@given(mass=st.floats(0.1, 1000), r1=st.floats(10, 2000), r2=st.floats(10, 2000))
def test_radius_change_round_trip_and_unit_invariance(mass, r1, r2):
    there = change_radius(Q_(mass, "g"), Q_(r1, "mm"), Q_(r2, "mm"))
    back = change_radius(there, Q_(r2, "mm"), Q_(r1, "mm"))
    assert back.m_as("g") == pytest.approx(mass, rel=1e-12)
    # the same inputs in ounces and inches give the same mass (unit invariance)
    imperial = change_radius(Q_(mass, "g").to("oz"), Q_(r1, "mm").to("inch"), Q_(r2, "mm").to("inch"))
    assert imperial.m_as("g") == pytest.approx(there.m_as("g"), rel=1e-12)


@settings(max_examples=100, deadline=None)
# masses of 0 or from 1 mg: below 1 µg the reader refuses a mass (toolkit.units.KINDS bounds)
@given(st.lists(st.tuples(st.one_of(st.just(0.0), st.floats(1e-3, 500)), st.floats(0, 359.99)), min_size=1,
                max_size=6))
def test_add_vectors_matches_complex_sum(items):
    # independent reference: Python's complex arithmetic
    amount, angle = add_vectors(*[f"{m!r} g@{a!r}" for m, a in items])
    expected = sum(_vec(m, a) for m, a in items)
    assert abs(_vec(amount.m_as("g"), angle) - expected) <= 1e-9 * max(1.0, sum(m for m, _ in items))


def test_to_complex_and_polar_round_trip():
    z = to_complex("10 g@90", "mass")
    assert polar(z * 1000) == pytest.approx((10.0, 90.0))


@pytest.mark.parametrize("text", ["1_000@0", "1 000@0", "1,5@0", "٣@0", "0x1A@0", "1e400@0", "1e-400@0",
                                  "4.9e-324@0", "2e12@0", "nan@0", "-3@0"])
def test_plain_amounts_are_digits_and_bounded(text):
    with pytest.raises(BadInput, match=r"^--reading: amount"):
        parse_vector(text, None, "--reading")


@pytest.mark.parametrize("text", ["412 kg@3@4", "412 kg 2@30", "1 285 g@30", "9**9**9 g@20", "38 g%@30"])
def test_vector_amounts_go_through_the_strict_reader(text):
    with pytest.raises(BadInput):
        parse_vector(text, "mass", "--unbalance")


def test_mil_readings_are_displacement():
    # 1 mil = 0.001 in = 25.4 um exactly (NIST SP 811, B.8: 1 in = 2.54 cm)
    z, kind, unit = parse_reading("1.5 mils@0")
    assert (kind, unit) == ("displacement", "um") and z.real == pytest.approx(38.1, rel=1e-15)
