"""The shop's drills, plate stock and washers: built-in tables or a shop's own CSV with the same columns.

Each table is read through :func:`toolkit.catalog.load`, so every row carries its source and a malformed
file is refused with the file, line and column named. Sizes are converted once to millimetres here.

Columns (one header row; a ``source`` cell on every row):

- drills (``drills_metric``, ``drills_inch``): ``size, diameter, unit, source`` with unit ``mm`` or ``in``.
- plate stock (``plate_stock``): ``thickness, unit, label, source``.
- washers (``washers``): ``size, series, d1, d2, h, unit, source`` (d1 bore, d2 outside, h thickness).
"""

from __future__ import annotations

from dataclasses import dataclass

from toolkit import catalog
from toolkit.errors import BadInput

__all__ = ["Drill", "PlateThickness", "Washer", "drills", "plate_stock", "washers",
           "DRILL_SCHEMA", "PLATE_SCHEMA", "WASHER_SCHEMA"]

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


def drills(table: str = "metric") -> tuple[Drill, ...]:
    """The drill set, smallest first: ``"metric"``, ``"inch"`` or the path of a shop's CSV.

    >>> d = drills("metric"); len(d), d[0].diameter_mm, d[-1].diameter_mm
    (155, 3.0, 25.0)
    >>> drills("inch")[16].size, round(drills("inch")[16].diameter_mm, 4)
    ('17/64 in', 6.7469)
    """
    name = {"metric": "drills_metric", "inch": "drills_inch"}.get(str(table), table)
    rows = catalog.load(name, DRILL_SCHEMA)
    out = [Drill(r["size"], r["diameter"] * _MM_PER[r["unit"]], r["source"]) for r in rows]
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
