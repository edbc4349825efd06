"""Balance quality grades of ISO 21940-11:2016 (clause 6.3, table ``tables/grades.csv``): the series, a
shop's own table, and reading a grade from text or a quantity.
"""

from __future__ import annotations

import functools
import math
import re
from dataclasses import dataclass

from toolkit import catalog
from toolkit.errors import BadInput
from toolkit.units import KINDS, magnitude

@dataclass(frozen=True)
class Grade:
    """A balance quality grade G [mm/s] with the kinds of machinery it usually serves and its source."""

    mm_s: float
    machinery: str
    mark: str
    source: str
    custom: bool = False

    @property
    def label(self) -> str:
        """``"G 6.3"``; a custom grade reads ``"G 5 (custom)"``."""
        return f"G {self.mm_s:g}" + (" (custom)" if self.custom else "")

    def to_dict(self) -> dict:
        return {"grade_mm_s": self.mm_s, "label": self.label, "machinery": self.machinery,
                "mark": self.mark, "source": self.source, "custom": self.custom}


def _mark(cell: str) -> str:
    cell = cell.strip().upper()
    if cell not in ("S", "H", "M", "D", "CP"):
        raise ValueError(f"{cell!r} is not a mark; use S, H, M, D or CP")
    return cell


GRADE_SCHEMA = {"grade_mm_s": catalog.number, "machinery": catalog.text, "mark": _mark}


def grades(table: str = "grades") -> tuple[Grade, ...]:
    """The balance quality grades of ISO 21940-11:2016 (table ``tables/grades.csv``), finest first.

    Each row carries its source: every grade of the series, G 0.4 to G 4000, is confirmed in secondary
    reproductions of the standard's table [H] (G 0.4 to G 6.3 in tooling makers' catalogues that quote
    ISO 1940-1 / ISO 21940-11). ``table`` may name a shop's own CSV file with the same columns.

    >>> [g.label for g in grades()][:4]
    ['G 0.4', 'G 1', 'G 2.5', 'G 6.3']
    """
    if table == "grades":
        return _builtin_grades()
    return _grades_from(table)


@functools.lru_cache(maxsize=1)
def _builtin_grades() -> tuple[Grade, ...]:
    return _grades_from("grades")


def _grades_from(table) -> tuple[Grade, ...]:
    rows = catalog.load(table, GRADE_SCHEMA)
    return tuple(sorted((Grade(r["grade_mm_s"], r["machinery"], r["mark"], r["source"]) for r in rows),
                        key=lambda g: g.mm_s))


_GRADE_TEXT = re.compile(r"^G?\s*((?:[0-9]+\.?[0-9]*|\.[0-9]+))\s*(?:mm\s*/\s*s)?$", re.IGNORECASE)
_GRADE_HELP = "write e.g. 'G6.3', 'G 6.3', '6.3' or '6.3 mm/s'"


def parse_grade(value, *, custom: bool = False, table: str = "grades", name: str = "grade") -> Grade:
    """A balance quality grade from ``"G6.3"``, ``"G 6.3"``, ``"6.3"``, ``"6.3 mm/s"``, a quantity in
    [length]/[time], or the grade number.

    A value off the ISO 21940-11 series is refused unless ``custom=True``; a custom grade is marked as such
    (``Grade.custom``) and its source says the user gave it.

    >>> parse_grade("G6.3").mm_s, parse_grade("g 2.5").mm_s, parse_grade("0.25 in/s", custom=True).label
    (6.3, 2.5, 'G 6.35 (custom)')
    """
    if isinstance(value, Grade):
        return value
    if isinstance(value, bool):
        raise BadInput(f"{name}: {value!r} is not a balance quality grade; {_GRADE_HELP}")
    if isinstance(value, (int, float)):
        g = float(value)
        shown = value
    elif isinstance(value, str):
        shown = value.strip()
        match = _GRADE_TEXT.match(shown)
        if match:
            g = float(match.group(1))
        else:
            try:
                g = magnitude(shown, "grade", "mm/s", name)
            except BadInput:
                raise BadInput(f"{name}: {value!r} is not a balance quality grade; {_GRADE_HELP}") from None
            g = float(g)
    else:
        g = float(magnitude(value, "grade", "mm/s", name))
        shown = f"{g:g} mm/s"
    if not math.isfinite(g) or g <= 0:
        raise BadInput(f"{name}: {shown!r} must be a finite grade greater than zero; {_GRADE_HELP}")
    low, high = KINDS["grade"].lower, KINDS["grade"].upper
    if not low <= g <= high:
        raise BadInput(f"{name}: {shown!r} is outside the grades read, G {low:g} to G {high:g} (bounds of our "
                       f"own [CP]); {_GRADE_HELP}")
    series = grades(table)
    for row in series:
        if abs(row.mm_s - g) <= 1e-6 * g:
            return row
    if custom:
        g = round(g, 6)
        return Grade(g, "custom grade given by the user", "custom",
                     "custom grade given by the user; not a grade of the ISO 21940-11 series", custom=True)
    allowed = ", ".join(f"{r.mm_s:g}" for r in series)
    raise BadInput.about(name, f"{shown!r} is not in the ISO 21940-11 series (G {allowed}); to use a value off "
                               "the series ask for a custom grade ({custom_grade})", mentions=("custom_grade",))
