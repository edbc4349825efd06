"""Drilled holes: published point geometry, the reference cases of references/fabrication.csv, an
independent 3-D integration of the radial hole, depth solving, drill choice, limits and hole patterns."""

import math

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

from toolkit.errors import BadInput, Infeasible
from toolkit.fabricate import stock
from toolkit.fabricate.drilling import (Limits, _split_fixed, axial_hole, drill_correction, point_height,
                                        radial_hole)
from toolkit.units import Q_


# -- published and reference values ----------------------------------------------------------------------

@pytest.mark.parametrize("angle, ratio", [
    (118, 0.300430),  # references/fabrication.csv point-118: drill makers' technical data (S) + D, rel 1e-6
    (90, 0.500000),   # references/fabrication.csv point-90: derived (D), checks our implementation
    (135, 0.207107),  # references/fabrication.csv point-135: derived (D), checks our implementation
])
def test_point_height(angle, ratio):
    # printed to 6 decimals: half a unit of the last digit (the file's rel 1e-6 is tighter than its digits)
    assert point_height("10 mm", angle).m_as("mm") / 10 == pytest.approx(ratio, abs=5e-7)


def test_flat_bottom_has_no_point():
    assert point_height("8 mm", 180).m_as("mm") == 0.0


def test_cone_centroid_quarter_height():
    # references/fabrication.csv cone-centroid: standard solid geometry (S), h/4 from the base. Checked by
    # integrating discs of the cone numerically (Gauss-Legendre), independently of the hole formulas.
    h, r = 3.0, 5.0
    x, w = np.polynomial.legendre.leggauss(40)
    s = (x + 1) * h / 2  # distance from the base
    area = math.pi * (r * (1 - s / h)) ** 2
    centroid = np.sum(w * area * s) / np.sum(w * area)
    assert centroid == pytest.approx(h / 4, rel=1e-9)


def test_axial_hole_reference():
    # references/fabrication.csv axial-hole: 678.28 g*mm, rel 1e-4; derived (D), checks our implementation
    g = axial_hole("10 mm", "10 mm", "100 mm", "7850 kg/m^3")
    assert g.unbalance_g_mm == pytest.approx(678.28, rel=1e-4)
    assert g.tip_depth_mm == pytest.approx(10 + 3.00430, rel=1e-6)


def test_radial_hole_reference():
    # references/fabrication.csv radial-hole: 638.89 g*mm, rel 1e-4; derived (D), checked there by Monte Carlo
    g = radial_hole("10 mm", "10 mm", "100 mm", "7850 kg/m^3")
    assert g.unbalance_g_mm == pytest.approx(638.89, rel=1e-4)
    # same file: mass x outer radius would say about 6 % more
    assert g.mass_g * 100 / g.unbalance_g_mm - 1 == pytest.approx(0.06, abs=0.01)


def _sampled_radial(R, d, L, angle=118.0, n=120, seed=1):
    """Volume and first moment of a radial hole by jittered 3-D sampling of the point set itself (an
    independent check: it uses only the solid's definition, none of the closed forms)."""
    r = d / 2
    h = 0.0 if angle >= 180 else r / math.tan(math.radians(angle) / 2)
    ys = R - L
    rng = np.random.default_rng(seed)
    y0 = ys - h
    cell = np.array([2 * r / n, (R - y0) / n, 2 * r / n])
    grid = np.arange(n, dtype=float)
    J, K = np.meshgrid(grid, grid, indexing="ij")
    V = S = 0.0
    for i in range(n):
        X = -r + (i + rng.random((n, n))) * cell[0]
        Y = y0 + (J + rng.random((n, n))) * cell[1]
        Z = -r + (K + rng.random((n, n))) * cell[2]
        rad = np.hypot(X, Z)
        cone = rad <= r * (Y - y0) / h if h > 0 else np.zeros_like(rad, dtype=bool)
        inside = (X * X + Y * Y <= R * R) & np.where(Y >= ys, rad <= r, cone)
        V += inside.sum() * cell.prod()
        S += (Y * inside).sum() * cell.prod()
    return V, S


@pytest.mark.parametrize("R, d, L, angle", [(100, 10, 10, 118), (100, 10, 3, 118), (40, 12, 8, 135),
                                            (100, 10, 10, 180), (25, 6, 14, 118)])
def test_radial_hole_against_independent_integration(R, d, L, angle):
    # derived here (D): independent 3-D integration; the issue asks for agreement to 0.1 %
    V, S = _sampled_radial(R, d, L, angle)
    g = radial_hole(f"{d} mm", f"{L} mm", f"{R} mm", "1000 kg/m^3", angle)
    assert g.volume_mm3 == pytest.approx(V, rel=1e-3)
    assert g.unbalance_g_mm == pytest.approx(S * 1e-6 * 1000, rel=1e-3)


def test_radial_hole_validity_range():
    with pytest.raises(BadInput, match="shallower than"):
        radial_hole("10 mm", "0.05 mm", "100 mm", "7850 kg/m^3")
    with pytest.raises(BadInput, match="passes the rotor axis"):
        radial_hole("10 mm", "99 mm", "100 mm", "7850 kg/m^3")


def test_bare_numbers_and_wrong_units_refused():
    with pytest.raises(BadInput, match="diameter: 10 has no unit"):
        axial_hole(10, "10 mm", "100 mm", "7850 kg/m^3")
    with pytest.raises(BadInput, match="correction: 2400 has no unit"):
        drill_correction(2400, radius="150 mm", material="steel")
    with pytest.raises(BadInput, match="point_angle_deg"):
        point_height("10 mm", 30)


# -- design ----------------------------------------------------------------------------------------------

def test_depth_solved_exactly_with_a_fine_step():
    # derived here (D): with a negligible depth step the holes remove exactly the request
    fine = Limits(depth_step_mm=1e-7, max_holes=1)
    for orientation in ("axial", "radial"):
        r = drill_correction("2400 g*mm", radius="150 mm", orientation=orientation, diameter="10 mm",
                             material="steel", limits=fine)
        assert r.achieved_g_mm == pytest.approx(2400, rel=1e-6)
        geo = (axial_hole if orientation == "axial" else radial_hole)("10 mm", f"{r.depth_mm} mm", "150 mm",
                                                                     "7850 kg/m^3")
        assert geo.unbalance_g_mm == pytest.approx(2400, rel=1e-6)


def _slope(orientation, d, L, R, rho="7850 kg/m^3", eps=1e-4):
    f = axial_hole if orientation == "axial" else radial_hole
    a = f(f"{d} mm", f"{L - eps} mm", f"{R} mm", rho).unbalance_g_mm
    b = f(f"{d} mm", f"{L + eps} mm", f"{R} mm", rho).unbalance_g_mm
    return (b - a) / (2 * eps)


@settings(max_examples=40, deadline=None)
@given(u=st.floats(300, 8000), orientation=st.sampled_from(["axial", "radial"]))
def test_achieved_within_half_a_depth_step(u, orientation):
    # up to 8000 g*mm one 12 mm hole stays clear of the 12 d limit (radial reaches about 9950 g*mm there)
    one = Limits(max_holes=1, max_depth_ratio=12, warn_depth_ratio=12)
    r = drill_correction(f"{u} g*mm", radius="150 mm", orientation=orientation, diameter="12 mm",
                         material="steel", limits=one)
    assert len(r.holes) == 1
    step = 0.1 * _slope(orientation, 12, r.depth_mm, 150)
    assert abs(r.achieved_g_mm - u) <= 0.5 * step * 1.01 + 1e-9


@settings(max_examples=30, deadline=None)
@given(u1=st.floats(200, 2000), factor=st.floats(1.05, 3.0), orientation=st.sampled_from(["axial", "radial"]))
def test_depth_rises_with_unbalance(u1, factor, orientation):
    fine = Limits(depth_step_mm=1e-6, max_depth_ratio=12, warn_depth_ratio=12, max_holes=1)
    a = drill_correction(f"{u1} g*mm", radius="150 mm", orientation=orientation, diameter="10 mm",
                         material="steel", limits=fine)
    b = drill_correction(f"{u1 * factor} g*mm", radius="150 mm", orientation=orientation, diameter="10 mm",
                         material="steel", limits=fine)
    assert b.depth_mm > a.depth_mm


@settings(max_examples=20, deadline=None)
@given(u=st.floats(500, 8000))
def test_same_result_whatever_units(u):
    metric = drill_correction(f"{u} g*mm", radius="150 mm", orientation="radial", diameter="10 mm",
                              density="7850 kg/m^3")
    inch = drill_correction(Q_(u, "g*mm").to("oz*in"), radius=Q_(150, "mm").to("in"), orientation="radial",
                            diameter=Q_(10, "mm").to("in"), density=Q_(7850, "kg/m^3").to("lb/in^3"))
    assert inch.depth_mm == pytest.approx(metric.depth_mm, abs=1e-9)
    assert inch.achieved_g_mm == pytest.approx(metric.achieved_g_mm, rel=1e-9)


def test_add_is_drilled_opposite_and_says_so():
    r = drill_correction("2400 g*mm", radius="150 mm", angle_deg=131, action="add", material="steel")
    assert r.remove_angle_deg == 311 and r.holes[0].angle_deg == 311
    assert "311° (= 131° + 180°)" in r.placement()
    r = drill_correction("2400 g*mm", radius="150 mm", angle_deg=131, action="remove", material="steel")
    assert r.holes[0].angle_deg == 131 and "heavy spot, 131°" in r.placement()


def test_several_holes_vector_sum():
    # docs/methods.md §3 (D): n holes at pitch p give U_i sin(n p/2)/sin(p/2)
    r = drill_correction("15000 g*mm", radius="150 mm", orientation="axial", diameter="10 mm", material="steel",
                         angle_deg=20)
    n, p = len(r.holes), r.pitch_deg
    assert n > 1
    offs = [h.offset_deg for h in r.holes]
    assert offs == pytest.approx([(k - (n - 1) / 2) * p for k in range(n)])
    ui = r.holes[0].unbalance_g_mm
    assert r.achieved_g_mm == pytest.approx(ui * math.sin(math.radians(n * p / 2)) / math.sin(math.radians(p / 2)),
                                            rel=1e-9)
    assert r.achieved_angle_deg == pytest.approx(20, abs=1e-9)
    # centres at least 2 d apart on the pitch circle (common practice)
    assert 2 * 150 * math.sin(math.radians(p / 2)) >= 20


def test_split_reference_case():
    # references/correction.csv split: 25 g@100 onto 90 and 135 -> 20.279 g@90 + 6.139 g@135 (law of sines, D)
    parts = dict(_split_fixed(25.0, 100.0, (90.0, 135.0, 300.0)))
    assert parts[90.0] == pytest.approx(20.279, rel=1e-4)
    assert parts[135.0] == pytest.approx(6.139, rel=1e-4)


def test_fixed_positions_split_and_refusal():
    r = drill_correction("2400 g*mm", radius="150 mm", orientation="radial", diameter="8 mm", material="steel",
                         fixed_positions=[0, 30, 60, 90], angle_deg=20, limits=Limits(depth_step_mm=1e-7))
    assert sorted(h.angle_deg for h in r.holes) == [0, 30]
    assert r.achieved_g_mm == pytest.approx(2400, rel=1e-6)
    assert r.achieved_angle_deg == pytest.approx(20, abs=1e-6)
    with pytest.raises(Infeasible, match="180°"):
        drill_correction("2400 g*mm", radius="150 mm", diameter="8 mm", material="steel",
                         fixed_positions=[0, 200], angle_deg=100)


def test_limits_warn_refuse_and_override():
    # common practice (CP): prefer holes within 3 d; warn beyond 3 d, refuse beyond 5 d; all overridable
    r = drill_correction("3000 g*mm", radius="100 mm", diameter="8 mm", material="steel")
    assert r.tip_depth_mm <= 3 * 8 and not any("beyond 3·d" in w for w in r.warnings)
    one = Limits(max_holes=1)
    r = drill_correction("1300 g*mm", radius="100 mm", diameter="8 mm", material="steel", limits=one)
    assert 3 * 8 < r.tip_depth_mm <= 5 * 8 and any("beyond 3·d" in w for w in r.warnings)
    with pytest.raises(Infeasible, match=r"more than 1 × 8 mm holes can remove .*nearest: remove 15\d\d g·mm"):
        drill_correction("3000 g*mm", radius="100 mm", diameter="8 mm", material="steel", limits=one)
    deep = Limits(max_holes=1, max_depth_ratio=10, warn_depth_ratio=10)
    r = drill_correction("3000 g*mm", radius="100 mm", diameter="8 mm", material="steel", limits=deep)
    assert 5 * 8 < r.tip_depth_mm <= 10 * 8 and r.limits.max_depth_ratio == 10
    assert r.to_dict()["limits_used"]["max_depth_ratio"] == 10


def test_rounding_never_passes_the_refusal_limit():
    # near the limit the depth is rounded down rather than past 5 d (common practice limit)
    lim = Limits(max_holes=1)
    top = drill_correction("1515 g*mm", radius="100 mm", diameter="8 mm", material="steel", limits=lim)
    assert top.tip_depth_mm <= 5 * 8 + 1e-9


def test_absolute_depth_cap_and_wall():
    r = drill_correction("1300 g*mm", radius="100 mm", diameter="8 mm", material="steel",
                         limits=Limits(max_depth_mm=15.0))
    assert all(h.tip_depth_mm <= 15.0 for h in r.holes) and len(r.holes) > 1
    r = drill_correction("1000 g*mm", radius="100 mm", diameter="8 mm", material="steel", wall="20 mm")
    # wall under the tip at least max(2 mm, 0.5 d) = 4 mm (common practice)
    assert all(20 - h.tip_depth_mm >= 4 - 1e-9 for h in r.holes)
    # a wall that is thick enough is reported as a fact, not as a warning
    assert r.wall_left_mm == pytest.approx(20 - r.tip_depth_mm)
    assert "wall left under the tip" in r.wall_note() and not r.warnings
    with pytest.raises(Infeasible, match="no room"):
        drill_correction("1000 g*mm", radius="100 mm", diameter="8 mm", material="steel", wall="5 mm")


def test_drill_chosen_from_the_set_and_infeasible_alternatives():
    r = drill_correction("2400 g*mm", radius="150 mm", orientation="axial", material="steel")
    assert len(r.holes) == 1 and r.tip_depth_mm <= 2 * r.diameter_mm  # preferred ratio 2 (our choice, CP)
    smaller = [d for d in stock.drills() if d.diameter_mm < r.diameter_mm][-1]
    with pytest.raises(Infeasible):  # the next smaller drill cannot do it within 2 d in one hole
        drill_correction("2400 g*mm", radius="150 mm", diameter=f"{smaller.diameter_mm} mm", material="steel",
                         limits=Limits(max_holes=1, max_depth_ratio=2, warn_depth_ratio=2))
    with pytest.raises(Infeasible, match="less than the smallest 3 mm drill removes with its point alone"):
        drill_correction("1 g*mm", radius="150 mm", material="steel")
    with pytest.raises(Infeasible, match="nearest"):
        drill_correction("1e7 g*mm", radius="150 mm", material="steel")


def test_drill_tables_fingerprint():
    metric, inch = stock.drills("metric"), stock.drills("inch")
    # BS 328 ladder (H): 3.0-13.9 by 0.1 (110 drills) and 14-25 by 0.25 (45 drills)
    assert len(metric) == 155 and len({d.diameter_mm for d in metric}) == 155
    assert sum(d.diameter_mm for d in metric) == pytest.approx(sum(i / 10 for i in range(30, 140))
                                                               + sum(14 + 0.25 * k for k in range(45)))
    # ANSI B94.11M fractional series (H): 1/64 to 1 in by 1/64
    fractional = [d for d in inch if d.size.endswith(" in")]
    assert len(fractional) == 64 and sum(d.diameter_mm for d in fractional) == pytest.approx(32.5 * 25.4)
    # ASME B94.11M number sizes No. 1-80 and letter sizes A-Z (values checked in test_stock.py)
    assert len(inch) == 64 + 80 + 26
    assert all(d.source for d in metric + inch)


def test_shop_drill_set(tmp_path):
    shop = tmp_path / "drills.csv"
    shop.write_text("size,diameter,unit,source\nA,6,mm,shop rack (invented example)\nB,0.5,in,shop rack\n")
    r = drill_correction("2400 g*mm", radius="150 mm", material="steel", drills=str(shop))
    assert r.drill in ("A", "B")
    bad = tmp_path / "bad.csv"
    bad.write_text("size,diameter,unit,source\nA,6,mm,x\nB,six,mm,x\n")
    with pytest.raises(BadInput, match=r"bad.csv, line 3, column 'diameter': 'six' is not a number"):
        drill_correction("2400 g*mm", radius="150 mm", material="steel", drills=str(bad))
    worse = tmp_path / "worse.csv"
    worse.write_text("size,diameter,unit,source\nA,6,cm,x\n")
    with pytest.raises(BadInput, match=r"line 2, column 'unit'"):
        stock.drills(str(worse))


def test_fixed_position_with_a_negligible_share_is_left_undrilled():
    # 1000 g*mm at 1 deg onto positions 0 and 30: the 30 deg share (1000 sin 1 / sin 30 = 34.9 g*mm, law of
    # sines, D) is below half of what a 10 mm point alone removes at 150 mm (92.6 g*mm, D), so one hole
    r = drill_correction("1000 g*mm", radius="150 mm", diameter="10 mm", material="steel", angle_deg=1,
                         fixed_positions=[0, 30])
    assert [h.angle_deg for h in r.holes] == [0.0]
    assert any("drilled at 0° only" in w for w in r.warnings)
    assert r.error_g_mm > 0


def test_rounding_respects_the_wall():
    for u in ("700 g*mm", "750 g*mm"):
        r = drill_correction(u, radius="100 mm", diameter="8 mm", material="steel", wall="25 mm",
                             limits=Limits(max_holes=1))
        assert 25 - r.tip_depth_mm >= 4 - 1e-9  # max(2 mm, 0.5 d), common practice
    # derived (D): 764.35 g*mm needs an 18.57 mm shoulder; 18.6 mm would put the tip 0.003 mm past the
    # 21 mm the wall allows, so it is rounded down to 18.5 mm instead
    r = drill_correction("764.35 g*mm", radius="100 mm", diameter="8 mm", material="steel", wall="25 mm",
                         limits=Limits(max_holes=1))
    assert r.depth_mm == pytest.approx(18.5) and 25 - r.tip_depth_mm >= 4


@pytest.mark.parametrize("R, d, L", [(100, 10, 10), (150, 12, 20), (60, 8, 5)])
def test_radial_volume_close_to_the_approximate_form(R, d, L):
    # docs/methods.md §3 (D): V ~ pi r^2 (L + h/3) - pi r^4/(8R); the neglected terms are of order r^6/R^3,
    # so the exact (quadrature) volume agrees to better than 1e-5 for these proportions
    g = radial_hole(f"{d} mm", f"{L} mm", f"{R} mm", "1000 kg/m^3")
    r, h = d / 2, d / 2 / math.tan(math.radians(59))
    approx = math.pi * r * r * (L + h / 3) - math.pi * r ** 4 / (8 * R)
    assert g.volume_mm3 == pytest.approx(approx, rel=1e-5)
