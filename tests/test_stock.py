"""Shop stock tables (toolkit/fabricate/stock.py): drill sets, plate thicknesses and washers.

Check values: the metric jobber ladder 3.0-13.9 mm by 0.1 mm and 14-25 mm by 0.25 mm (BS 328, as
reproduced [H]); inch jobber drills 1/64 in to 1 in by 1/64 in (ASME B94.11M, formerly ANSI [H]); number and letter sizes
(GNU units 3.15 definitions.units, below); the inch is 25.4 mm
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


# Number and letter drill sizes, in inches: GNU units 3.15 (2022), definitions.units, the tables
# "drillgauge" and "drillA" to "drillZ" (a published reproduction of the ASME B94.11M sizes).
GNU_UNITS_DRILLS = {"No. 1": 0.2280, "No. 7": 0.2010, "No. 29": 0.1360, "No. 36": 0.1065, "No. 52": 0.0635,
                    "No. 80": 0.0135, "letter A": 0.234, "letter F": 0.257, "letter Q": 0.332,
                    "letter Z": 0.413}


def test_number_and_letter_sizes_against_a_published_chart():
    by_size = {d.size: d for d in stock.drills("inch")}
    for size, inches in GNU_UNITS_DRILLS.items():  # GNU units 3.15 definitions.units (drillgauge, drillA-Z)
        assert by_size[size].diameter_mm == pytest.approx(inches * 25.4, abs=1e-9), size
    numbers = [by_size[f"No. {n}"].diameter_mm for n in range(1, 81)]
    letters = [by_size[f"letter {c}"].diameter_mm for c in "ABCDEFGHIJKLMNOPQRSTUVWXYZ"]
    # ASME B94.11M: number sizes shrink from No. 1 to No. 80, letter sizes grow from A to Z (from memory)
    assert numbers == sorted(numbers, reverse=True) and letters == sorted(letters)
    # a row that the checked chart does not hold says it is from memory
    assert "[M]" in by_size["No. 21"].source and "[H]" in by_size["No. 22"].source


def test_the_basic_sets_are_rows_of_the_full_tables():
    for name, (full, sizes) in stock.BASIC_DRILLS.items():
        chosen = stock.drills(name)
        assert len(chosen) == len(sizes)  # every listed size was found
        assert set(chosen) <= set(stock.drills(full))
    # common practice, no source: a short set has no in-between jobber sizes such as 10.2 mm or 17.75 mm
    assert not {10.2, 17.75, 22.5} & {d.diameter_mm for d in stock.drills("metric-basic")}


def test_a_shop_names_its_drills():
    got = stock.drill_list(["#7", "F", "6 mm", "0.25 in", "1.1 in"])
    assert [d.size for d in got] == ["No. 7", "6.0 mm", "1/4 in", "letter F", "1.1 in"]
    assert got[-1].source == "the shop's own drill list"  # no table row of 1.1 in
    assert stock.drills(list(got)) == got
    with pytest.raises(BadInput, match=r"drills 2: '0.25 in' repeats a diameter") as caught:
        stock.drill_list(["1/4 in", "0.25 in"])
    assert caught.value.parameter == "drills 2"  # the parameter, then the item: each face words it
    with pytest.raises(BadInput, match=r"drills 1: 'No. 99' is neither a size"):
        stock.drill_list(["No. 99"])
    with pytest.raises(BadInput, match="the list is empty"):
        stock.drill_list([])
    with pytest.raises(BadInput, match="give a list of drill sizes"):
        stock.drill_list("6 mm")
