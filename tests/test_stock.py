"""Shop stock tables (toolkit/fabricate/stock.py): drill sets, plate thicknesses and washers.

Check values: the metric jobber ladder 3.0-13.9 mm by 0.1 mm and 14-25 mm by 0.25 mm (BS 328, as
reproduced [H]); inch jobber drills 1/64 in to 1 in by 1/64 in (ANSI B94.11M [H]); the inch is 25.4 mm
exactly (international yard and pound agreement, 1959); ISO 7089 M10 washer 10.5 x 20 x 2 mm (ISO 7089 as
reproduced by a fastener supplier [H]); stocked steel plate 3-25 mm (mill stock lists [H]).
"""

from __future__ import annotations

from fractions import Fraction

import pytest

from toolkit.errors import BadInput
from toolkit.fabricate import stock


def test_metric_ladder():
    sizes = [d.diameter_mm for d in stock.drills("metric")]
    # BS 328 ladder as reproduced [H]: 3.0..13.9 by 0.1 (110 sizes), 14..25 by 0.25 (45 sizes)
    expected = [round(3.0 + 0.1 * i, 1) for i in range(110)] + [14.0 + 0.25 * i for i in range(45)]
    assert sizes == pytest.approx(expected)


def test_fractional_inch_drills_are_exact():
    fractional = [d for d in stock.drills("inch") if "/" in d.size or d.size == "1 in"]
    for d in fractional:
        text = d.size.removesuffix(" in")
        inches = sum(Fraction(part) for part in text.split("-")) if "-" in text else Fraction(text)
        assert d.diameter_mm == pytest.approx(float(inches) * 25.4, abs=1e-9)  # 1 in = 25.4 mm exactly
    steps = sorted(Fraction(round(d.diameter_mm / 25.4 * 64), 64) for d in fractional)
    assert steps[0] == Fraction(1, 64) and steps[-1] == 1  # ANSI B94.11M jobber range [H]


def test_every_row_names_its_source():
    for table in (stock.drills("metric"), stock.drills("inch"), stock.plate_stock(), stock.washers()):
        assert all(row.source.strip() for row in table)


def test_plate_stock_by_unit_system():
    metric = [p.thickness_mm for p in stock.plate_stock(unit="mm")]
    assert metric == [3, 4, 5, 6, 8, 10, 12, 15, 16, 20, 25]  # stocked steel plate, mm [H]
    inch = [p.thickness_mm for p in stock.plate_stock(unit="in")]
    assert inch[0] == pytest.approx(25.4 / 8) and inch[-1] == pytest.approx(25.4)  # 1/8 to 1 in [M]
    with pytest.raises(BadInput, match="'mm' or 'in'"):
        stock.plate_stock(unit="ft")


def test_iso_7089_m10():
    w = next(w for w in stock.washers() if w.size == "M10" and w.series == "ISO 7089")
    assert (w.d1_mm, w.d2_mm, w.h_mm) == (10.5, 20.0, 2.0)  # ISO 7089 as reproduced [H]


def test_a_shop_table_replaces_the_built_in_one(tmp_path):
    own = tmp_path / "our-drills.csv"
    own.write_text("size,diameter,unit,source\n8 mm,8,mm,our rack (invented example)\n"
                   "1/2 in,0.5,in,our rack (invented example)\n", encoding="utf-8")
    assert [d.diameter_mm for d in stock.drills(str(own))] == [8.0, 12.7]


def test_a_washer_with_no_ring_is_refused(tmp_path):
    bad = tmp_path / "washers.csv"
    bad.write_text("size,series,d1,d2,h,unit,source\nM10,ours,20,10,2,mm,invented\n", encoding="utf-8")
    with pytest.raises(BadInput, match="not larger than the bore"):
        stock.washers(str(bad))
