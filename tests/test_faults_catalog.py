"""Bad shop tables (toolkit/catalog.py and the tables it reads): spoiled CSV files and absurd drills.

Behaviour checks only (the contract of exit statuses and one-line refusals, see tests/fault_support.py):
the generated values are not published figures, so no value here needs a source.
"""

from __future__ import annotations

import tempfile
from pathlib import Path

import pytest
from hypothesis import given, strategies as st

from fault_support import (NUMBERS, RAW, ROOT, SETTINGS, SPECIAL, check)


TABLE_CELL = st.one_of(SPECIAL, NUMBERS, st.text(max_size=12))


@st.composite
def spoiled_table(draw, header: str, row: str) -> bytes:
    rows = [header] + [row] * draw(st.integers(min_value=0, max_value=3))
    if len(rows) > 1 and draw(st.booleans()):
        i = draw(st.integers(min_value=1, max_value=len(rows) - 1))
        cells = rows[i].split(",")
        j = draw(st.integers(min_value=0, max_value=len(cells) - 1))
        cells[j] = draw(TABLE_CELL).replace("\n", " ")
        rows[i] = ",".join(cells)
    if draw(st.booleans()):
        rows.insert(draw(st.integers(min_value=0, max_value=len(rows))), draw(RAW).replace("\n", " "))
    data = ("\n".join(rows) + "\n").encode("utf-8", "surrogateescape")
    if draw(st.integers(0, 4)) == 0:
        data = data + b"\xff\xfe\x00"
    return data


def _header_and_first_row(table: str) -> tuple[str, str]:
    text = (ROOT / "tables" / f"{table}.csv").read_text(encoding="utf-8")
    lines = [line for line in text.splitlines() if line.strip() and not line.startswith("#")]
    return lines[0], lines[1]


@pytest.mark.parametrize("table, argv", [
    ("materials", ["materials", "--materials", "{path}", "--json"]),
    ("materials", ["drill", "--unbalance", "2400 g*mm", "--radius", "150 mm", "--axial", "--material", "steel",
                   "--materials", "{path}", "--json"]),
    ("drills_metric", ["drill", "--unbalance", "2400 g*mm", "--radius", "150 mm", "--axial", "--material",
                       "steel", "--drills", "{path}", "--json"]),
    ("plate_stock", ["plate", "--unbalance", "2000 g*mm", "--radius", "300 mm", "--width", "30 mm",
                     "--material", "steel", "--stock", "{path}", "--json"]),
])
@SETTINGS
@given(data=st.data())
def test_spoiled_shop_tables(table, argv, data):
    header, row = _header_and_first_row(table)
    content = data.draw(spoiled_table(header, row))
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / f"{table}.csv"
        path.write_bytes(content)
        check([a.replace("{path}", str(path)) for a in argv])


@pytest.mark.parametrize("diameter", ["1e-300", "5e-324"])
def test_absurdly_small_drill_in_shop_table(tmp_path, diameter):
    # found by test_spoiled_shop_tables: once a ZeroDivisionError (exit 3)
    table = tmp_path / "drills.csv"
    table.write_text(f"size,diameter,unit,source\ntiny,{diameter},mm,invented example\n", encoding="utf-8")
    rc, out, err = check(["drill", "--unbalance", "2400 g*mm", "--radius", "150 mm", "--axial", "--material",
                          "steel", "--drills", str(table)])
    assert rc == 2
