"""Washer stacks: masses against published dimensions and supplier weights, stack centroid, choice."""

import pytest
from hypothesis import given, settings, strategies as st

from toolkit.errors import BadInput, Infeasible
from toolkit.fabricate import stock
from toolkit.fabricate.washers import washer_mass, washer_stack
from toolkit.units import Q_


@pytest.mark.parametrize("d1, d2, h, expected, rel", [
    ("10.5 mm", "20 mm", "2 mm", 3.573, 2e-3),   # references/fabrication.csv washer-m10 (H+D); supplier 3.57 g
    ("17 mm", "30 mm", "3 mm", 11.301, 2e-3),    # references/fabrication.csv washer-m16 (H+D); supplier 11.3 g
])
def test_reference_washer_masses(d1, d2, h, expected, rel):
    assert washer_mass(d1, d2, h).m_as("g") == pytest.approx(expected, rel=rel)


# ISO 7089 masses as listed by a fastener supplier (H, docs/methods.md §3); tolerance half a unit of the
# printed last digit
SUPPLIER = {"M6": 1.02, "M8": 1.83, "M10": 3.57, "M12": 6.27, "M16": 11.3, "M20": 17.2, "M24": 32.3}


@pytest.mark.parametrize("size", sorted(SUPPLIER))
def test_iso7089_table_against_supplier_weights(size):
    w = next(w for w in stock.washers() if w.size == size and w.series == "ISO 7089")
    printed = SUPPLIER[size]
    half_digit = 0.005 if printed < 10 else 0.05
    assert washer_mass(f"{w.d1_mm} mm", f"{w.d2_mm} mm", f"{w.h_mm} mm").m_as("g") == pytest.approx(printed,
                                                                                                   abs=half_digit)


def test_radial_stack_centroid_against_washer_by_washer_sum():
    # derived (D): washer k of n sits at R + (k - 1/2) h; sum them one by one
    s = washer_stack("900 g*mm", radius="80 mm", orientation="radial", size="M12", series="ISO 7089")
    one = s.unit_mass_g
    by_hand = sum(one * (80 + (k - 0.5) * s.h_mm) for k in range(1, s.count + 1))
    assert s.achieved_g_mm == pytest.approx(by_hand, rel=1e-12)
    assert s.centroid_radius_mm == pytest.approx(80 + s.count * s.h_mm / 2)
    inner = washer_stack("900 g*mm", radius="80 mm", orientation="radial", surface="inner", size="M12")
    assert inner.centroid_radius_mm == pytest.approx(80 - inner.count * inner.h_mm / 2)


@settings(max_examples=40, deadline=None)
@given(u=st.floats(75, 2000))  # one M10 at 40 mm is 142.9 g*mm; below half of it is refused
def test_nearest_count_within_half_a_washer(u):
    s = washer_stack(f"{u} g*mm", radius="40 mm", size="M10", series="ISO 7089", max_count=50)
    assert abs(s.achieved_g_mm - u) <= 0.5 * s.unit_mass_g * 40 + 1e-9


def test_same_result_whatever_units():
    a = washer_stack("2400 g*mm", radius="150 mm", size="M10")
    b = washer_stack(Q_(2400, "g*mm").to("oz*in"), radius=Q_(150, "mm").to("in"), size="M10")
    assert (a.count, a.achieved_g_mm) == (b.count, pytest.approx(b.achieved_g_mm, rel=1e-12))


def test_remove_request_goes_opposite_and_refusals():
    s = washer_stack("2400 g*mm", radius="150 mm", size="M10", angle_deg=131, action="remove")
    assert s.add_angle_deg == 311 and "311° (= 131° + 180°)" in s.placement()
    with pytest.raises(Infeasible, match=r"more than 6 M24 washers.*nearest"):
        washer_stack("1e6 g*mm", radius="150 mm")
    with pytest.raises(Infeasible, match="less than half of one M6 washer"):
        washer_stack("10 g*mm", radius="150 mm")
    with pytest.raises(BadInput, match="no washer M99"):
        washer_stack("2400 g*mm", radius="150 mm", size="M99")
    with pytest.raises(BadInput, match="has no unit"):
        washer_stack("2400 g*mm", radius=150)


def test_inch_washers():
    s = washer_stack("3 oz*in", radius="5 in", series="inch SAE")
    assert s.series == "inch SAE" and s.count >= 1


def test_washer_table_fingerprint():
    rows = stock.washers()
    assert len(rows) == 20 and len({(w.size, w.series) for w in rows}) == 20
    # sum of ISO 7089 thicknesses as typed (H): 1.6+1.6+2+2.5+3+3+4
    assert sum(w.h_mm for w in rows if w.series == "ISO 7089") == pytest.approx(17.7)
