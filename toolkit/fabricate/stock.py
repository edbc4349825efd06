"""The shop's drills, plate stock and washers: built-in tables or a shop's own CSV with the same columns.

Each table is read through :func:`toolkit.catalog.load`, so every row carries its source and a malformed
file is refused with the file, line and column named. Sizes are converted once to millimetres here.

Columns (one header row; a ``source`` cell on every row):

- drills (``drills_metric``, ``drills_inch``): ``size, diameter, unit, source`` with unit ``mm`` or ``in``.
  The inch table holds the fractional, number (No. 1 to No. 80) and letter (A to Z) sizes of ASME B94.11M.
  Two short sets, ``metric-basic`` and ``inch-basic`` (:data:`BASIC_DRILLS`), are rows of those tables: the
  drills a small shop keeps, and the work orders' default.
- plate stock (``plate_stock``): ``thickness, unit, label, source``.
- washers (``washers``): ``size, series, d1, d2, h, unit, source`` (d1 bore, d2 outside, h thickness).
"""

from __future__ import annotations

import functools
from dataclasses import dataclass

from toolkit import catalog
from toolkit.errors import BadInput

__all__ = ["Drill", "PlateThickness", "Washer", "drills", "drill_list", "plate_stock", "washers",
           "DRILL_SCHEMA", "PLATE_SCHEMA", "WASHER_SCHEMA", "BASIC_DRILLS", "DRILL_SETS"]

_MM_PER = {"mm": 1.0, "in": 25.4}


def _unit(cell: str) -> str:
    value = cell.strip().lower()
    if value not in _MM_PER:
        raise ValueError(f"{cell.strip()!r} is not a length unit; use mm or in")
    return value


DRILL_SCHEMA = {"size": catalog.text, "diameter": catalog.number, "unit": _unit}
PLATE_SCHEMA = {"thickness": catalog.number, "unit": _unit, "label": catalog.text}
WASHER_SCHEMA = {"size": catalog.text, "series": catalog.text, "d1": catalog.number, "d2": catalog.number,
                 "h": catalog.number, "unit": _unit}


@dataclass(frozen=True)
class Drill:
    """One drill of the shop's set: its label, diameter [mm] and the row's source."""

    size: str
    diameter_mm: float
    source: str


@dataclass(frozen=True)
class PlateThickness:
    """One stocked plate or flat-bar thickness [mm] with its label and source."""

    label: str
    thickness_mm: float
    source: str


@dataclass(frozen=True)
class Washer:
    """One standard plain washer: bore d1, outside d2, thickness h [mm], series, and the row's source."""

    size: str
    series: str
    d1_mm: float
    d2_mm: float
    h_mm: float
    source: str


#: The short sets: the drills a small shop keeps, by size label of the full tables (common practice, no
#: source: whole millimetres and the common fractions up to 1 in, without the in-between jobber sizes).
BASIC_DRILLS = {
    "metric-basic": ("metric", ("3 mm", "4 mm", "5 mm", "6 mm", "8 mm", "10 mm", "12 mm", "14 mm", "16 mm",
                                "18 mm", "20 mm", "22 mm", "25 mm")),
    "inch-basic": ("inch", ("1/8 in", "5/32 in", "3/16 in", "1/4 in", "5/16 in", "3/8 in", "7/16 in", "1/2 in",
                            "9/16 in", "5/8 in", "3/4 in", "7/8 in", "1 in")),
}

#: The built-in sets by name, in words (for the work order's values-used list and errors).
DRILL_SETS = {
    "metric": "the full metric jobber ladder (3 to 25 mm)",
    "inch": "the full inch set (fractional 1/64 to 1 in, number and letter sizes)",
    "metric-basic": "the basic metric set (" + ", ".join(s.removesuffix(" mm") for s in
                                                          BASIC_DRILLS["metric-basic"][1]) + " mm)",
    "inch-basic": "the basic inch set (" + ", ".join(s.removesuffix(" in") for s in
                                                      BASIC_DRILLS["inch-basic"][1]) + " in)",
}


def drills(table="metric") -> tuple[Drill, ...]:
    """The drill set, smallest first: ``"metric"``, ``"inch"``, ``"metric-basic"``, ``"inch-basic"``, the
    path of a shop's CSV, or drills already chosen (a sequence of :class:`Drill`, see :func:`drill_list`).

    >>> d = drills("metric"); len(d), d[0].diameter_mm, d[-1].diameter_mm
    (155, 3.0, 25.0)
    >>> [(x.size, round(x.diameter_mm, 4)) for x in drills("inch") if x.size in ("17/64 in", "No. 7", "letter F")]
    [('No. 7', 5.1054), ('letter F', 6.5278), ('17/64 in', 6.7469)]
    >>> [x.diameter_mm for x in drills("metric-basic")][:4]
    [3.0, 4.0, 5.0, 6.0]
    """
    if isinstance(table, (tuple, list)):
        if not table or not all(isinstance(d, Drill) for d in table):
            raise BadInput.about("drills", "give a set name, a CSV path or a non-empty list of drills")
        return tuple(sorted(table, key=lambda d: d.diameter_mm))
    if str(table) in BASIC_DRILLS:
        return _basic_set(str(table))
    name = {"metric": "drills_metric", "inch": "drills_inch"}.get(str(table), table)
    return catalog.load_derived(name, DRILL_SCHEMA, _drill_set)


def _drill_set(rows: catalog.Table, _name) -> tuple[Drill, ...]:
    out = [Drill(r["size"], r["diameter"] * _MM_PER[r["unit"]], r["source"]) for r in rows]
    return tuple(sorted(out, key=lambda d: d.diameter_mm))


@functools.lru_cache(maxsize=None)
def _basic_set(table: str) -> tuple[Drill, ...]:
    """A short set, picked from its full table by size label once per process (both ship with the package)."""
    full, sizes = BASIC_DRILLS[table]
    wanted = {_label_key(x) for x in sizes}
    return tuple(d for d in drills(full) if _label_key(d.size) in wanted)


def _label_key(text: str) -> str:
    """A size label without case, spaces or the words that shops leave out (``#7`` = ``No. 7``,
    ``F`` = ``letter F``, ``6 mm`` = ``6.0 mm``)."""
    key = "".join(str(text).lower().split()).replace("no.", "#").replace("letter", "")
    if key.startswith("#"):
        key = key[1:]
    if key.endswith("mm"):
        try:
            key = f"{float(key[:-2]):g}mm"
        except ValueError:
            pass
    return key


def drill_list(sizes, name: str = "drills") -> tuple[Drill, ...]:
    """The drills a shop has, from a list of sizes: labels of the built-in tables (``"No. 7"`` or ``"#7"``,
    ``"letter F"`` or ``"F"``, ``"17/64 in"``, ``"10.2 mm"``) or diameters with a unit (``"0.25 in"``,
    ``"6 mm"``). A diameter that a table holds takes that row (with its source); any other is the shop's
    own drill. Smallest first; a size given twice is refused.

    >>> [(d.size, round(d.diameter_mm, 3)) for d in drill_list(["6 mm", "#7", "F", "0.25 in"])]
    [('No. 7', 5.105), ('6.0 mm', 6.0), ('1/4 in', 6.35), ('letter F', 6.528)]
    """
    from toolkit.units import magnitude

    if isinstance(sizes, (str, bytes)) or not hasattr(sizes, "__iter__"):
        raise BadInput.about(name, "give a list of drill sizes, e.g. [\"6 mm\", \"8 mm\", \"No. 7\", \"1/4 in\"]")
    known = drills("metric") + drills("inch")
    by_label = {_label_key(d.size): d for d in known}
    out: list[Drill] = []
    for i, item in enumerate(sizes):
        where = f"{name} {i + 1}"  # the parameter, then the item (the first is 1)
        if not isinstance(item, str) or not item.strip():
            raise BadInput.about(where, f"{item!r} is not a drill size; give a size such as \"6 mm\" or \"No. 7\"")
        drill = by_label.get(_label_key(item))
        if drill is None:
            try:
                mm = magnitude(item, "length", "mm", where, positive=True)
            except BadInput:
                raise BadInput.about(where, f"{item!r} is neither a size of the drill tables (\"No. 7\", \"letter F\", "
                                            f"\"17/64 in\") nor a diameter with a unit (\"6 mm\", \"0.25 in\")") from None
            drill = next((d for d in known if abs(d.diameter_mm - mm) < 1e-6),
                         Drill(item.strip(), float(mm), "the shop's own drill list"))
        if any(abs(d.diameter_mm - drill.diameter_mm) < 1e-6 for d in out):
            raise BadInput.about(where, f"{item!r} repeats a diameter already in the list")
        out.append(drill)
    if not out:
        raise BadInput.about(name, "the list is empty; give the shop's drills, e.g. [\"6 mm\", \"8 mm\", \"10 mm\"]")
    return tuple(sorted(out, key=lambda d: d.diameter_mm))


def plate_stock(table: str = "plate_stock", unit: str | None = None) -> tuple[PlateThickness, ...]:
    """Stocked plate thicknesses, thinnest first; ``unit`` ``"mm"`` or ``"in"`` keeps one system only.

    >>> [p.thickness_mm for p in plate_stock(unit="mm")][:4]
    [3.0, 4.0, 5.0, 6.0]
    """
    if unit not in (None, "mm", "in"):
        raise BadInput(f"plate stock unit: {unit!r} is not allowed; use 'mm' or 'in'")
    rows = catalog.load(table, PLATE_SCHEMA)
    out = [PlateThickness(r["label"], r["thickness"] * _MM_PER[r["unit"]], r["source"])
           for r in rows if unit is None or r["unit"] == unit]
    if not out:
        raise BadInput(f"plate stock {table!r}: no thickness in {unit}")
    return tuple(sorted(out, key=lambda p: p.thickness_mm))


def washers(table: str = "washers") -> tuple[Washer, ...]:
    """Standard washers from the built-in table or a shop's CSV.

    >>> w = [w for w in washers() if w.size == "M10" and w.series == "ISO 7089"][0]; (w.d1_mm, w.d2_mm, w.h_mm)
    (10.5, 20.0, 2.0)
    """
    rows = catalog.load(table, WASHER_SCHEMA)
    out = []
    for r in rows:
        k = _MM_PER[r["unit"]]
        if r["d2"] <= r["d1"]:
            raise BadInput(f"{table}: washer {r['size']} ({r['series']}) has outside diameter d2 = {r['d2']} "
                           f"not larger than the bore d1 = {r['d1']}")
        out.append(Washer(r["size"], r["series"], r["d1"] * k, r["d2"] * k, r["h"] * k, r["source"]))
    return tuple(out)
