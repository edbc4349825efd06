"""The table loader: schemas, sources on every row, and errors that name file, line and column."""

import pytest

from toolkit import BadInput
from toolkit import catalog

SCHEMA = {"name": catalog.text, "density_kg_m3": catalog.number, "weldable": catalog.boolean,
          "aliases": catalog.aliases}


def write(tmp_path, text, name="shop.csv"):
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


def test_reads_a_shop_table(tmp_path):
    path = write(tmp_path, "name,density_kg_m3,weldable,aliases,source\n"
                           "steel,7850,yes,S235;S355,EN 1993-1-1 3.2.6\n"
                           "# a comment row\n\n"
                           "grey iron,7200,no,,from memory\n")
    table = catalog.load(path, SCHEMA)
    assert [r["name"] for r in table] == ["steel", "grey iron"]
    assert table.rows[0]["aliases"] == ("S235", "S355")
    assert table.rows[1]["weldable"] is False
    with pytest.raises(TypeError):
        table.rows[0]["name"] = "changed"  # rows are read-only


@pytest.mark.parametrize("content, message", [
    ("", r"shop\.csv: the table is empty"),
    ("name,density_kg_m3,weldable,aliases\nsteel,7850,yes,,\n", r"line 1: missing column\(s\) source"),
    ("name,density_kg_m3,weldable,aliases,source\n", r"has a header but no rows"),
    ("name,density_kg_m3,weldable,aliases,source\nsteel,7850,yes,,x\niron,heavy,no,,y\n",
     r"shop\.csv, line 3, column 'density_kg_m3': 'heavy' is not a number"),
    ("name,density_kg_m3,weldable,aliases,source\nsteel,-1,yes,,x\n",
     r"line 2, column 'density_kg_m3': '-1' must be greater than zero"),
    ("name,density_kg_m3,weldable,aliases,source\nsteel,7850,maybe,,x\n",
     r"line 2, column 'weldable': 'maybe' is not yes or no"),
    ("name,density_kg_m3,weldable,aliases,source\nsteel,7850,yes,,\n",
     r"line 2, column 'source': is empty: every row needs its source"),
    ("name,density_kg_m3,weldable,aliases,source\nsteel,7850,yes\n", r"line 2: 3 cells, the header has 5"),
    ("name,density_kg_m3,weldable,aliases,source\nsteel,nan,yes,,x\n", r"'nan' is not a finite number"),
])
def test_malformed_tables_name_file_line_and_column(tmp_path, content, message):
    with pytest.raises(BadInput, match=message):
        catalog.load(write(tmp_path, content), SCHEMA)


def test_non_utf8_and_missing_and_huge_files(tmp_path):
    path = tmp_path / "bad.csv"
    path.write_bytes(b"name,source\nst\xe9el,x\n")
    with pytest.raises(BadInput, match=r"bad\.csv, line 2: not UTF-8 text"):
        catalog.load(path, {"name": catalog.text})
    with pytest.raises(BadInput, match=r"no such table file"):
        catalog.load(tmp_path / "missing.csv", {"name": catalog.text})
    big = tmp_path / "big.csv"
    with open(big, "wb") as handle:
        handle.truncate(catalog.MAX_TABLE_BYTES + 1)
    with pytest.raises(BadInput, match="too large for a table file"):
        catalog.load(big, {"name": catalog.text})


def test_every_builtin_table_has_a_source_on_every_row():
    names = catalog.builtin_names()
    for name in names:
        table = catalog.load(name, {})
        assert all(row["source"] for row in table), name


def test_table_numbers_are_read_like_quantity_numbers(tmp_path):
    # behaviour check (no published value): a separator inside a number is refused, never read as 10
    from toolkit.catalog import load, number

    assert number("10") == 10.0 and number(" 2.5e1 ") == 25.0
    path = tmp_path / "t.csv"
    path.write_text("size,diameter,unit,source\n10 mm,1_0,mm,invented\n", encoding="utf-8")
    with pytest.raises(BadInput, match="'1_0' is not a number"):
        load(path, {"size": lambda c: c, "diameter": number, "unit": lambda c: c})
