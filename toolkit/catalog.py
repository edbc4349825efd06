"""Data tables: the CSV files under ``tables/`` (shipped inside the package as ``toolkit.tables``), or a
shop's own file with the same columns.

This module is the only code that knows where the built-in tables live. Every table has one header row and
a ``source`` column on every row (a citation, ``common practice`` or ``from memory``). A malformed table is
refused with the file, line and column named.

A table is described by a schema: a mapping of column name to a converter (a function from the cell text
to a value that raises ``ValueError`` with a short reason). Converters for the usual cell kinds are below.
"""

from __future__ import annotations

import csv
import functools
import io
import math
from dataclasses import dataclass
from pathlib import Path
from types import MappingProxyType
from typing import Callable, Mapping

from toolkit.errors import BadInput

__all__ = [
    "Table",
    "load",
    "builtin_names",
    "text",
    "number",
    "optional_number",
    "boolean",
    "aliases",
    "MAX_TABLE_BYTES",
]

#: A table larger than this is refused before it is read (a shop table has at most a few thousand rows).
MAX_TABLE_BYTES = 5_000_000

Converter = Callable[[str], object]


# -- converters --------------------------------------------------------------------------------------

def text(cell: str) -> str:
    """Non-empty text."""
    cell = cell.strip()
    if not cell:
        raise ValueError("is empty")
    return cell


def number(cell: str, *, positive: bool = True) -> float:
    """A finite number (greater than zero unless ``positive=False``)."""
    from toolkit.units import plain_number

    try:
        x = plain_number(cell)
    except ValueError:
        raise ValueError(f"{cell.strip()!r} is not a number") from None
    if not math.isfinite(x):
        raise ValueError(f"{cell.strip()!r} is not a finite number")
    if positive and x <= 0:
        raise ValueError(f"{cell.strip()!r} must be greater than zero")
    return x


def optional_number(cell: str) -> float | None:
    """A number, or ``None`` for an empty cell."""
    return None if not cell.strip() else number(cell)


def boolean(cell: str) -> bool:
    """``yes`` or ``no``."""
    value = cell.strip().lower()
    if value in ("yes", "y", "true"):
        return True
    if value in ("no", "n", "false"):
        return False
    raise ValueError(f"{cell.strip()!r} is not yes or no")


def aliases(cell: str) -> tuple[str, ...]:
    """A ``;``-separated list of names (may be empty)."""
    return tuple(part.strip() for part in cell.split(";") if part.strip())


def source(cell: str) -> str:
    """Where a row comes from: required on every row."""
    cell = cell.strip()
    if not cell:
        raise ValueError("is empty: every row needs its source (a citation, 'common practice' or "
                         "'from memory')")
    return cell


# -- tables -----------------------------------------------------------------------------------------

@dataclass(frozen=True)
class Table:
    """A loaded table: where it came from and its rows (read-only mappings of column name to value)."""

    name: str
    origin: str
    columns: tuple[str, ...]
    rows: tuple[Mapping[str, object], ...]

    def __len__(self) -> int:
        return len(self.rows)

    def __iter__(self):
        return iter(self.rows)


def builtin_names() -> list[str]:
    """Names of the tables that ship with the package."""
    return sorted(p.name[:-4] for p in _builtin_folder().iterdir() if p.name.endswith(".csv"))


def _builtin_folder():
    from importlib import resources

    try:
        return resources.files("toolkit.tables")
    except ModuleNotFoundError:  # running from a source tree that was never installed
        return Path(__file__).resolve().parent.parent / "tables"


def _read_builtin(name: str) -> str:
    path = _builtin_folder() / f"{name}.csv"
    try:
        return path.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise BadInput(f"no built-in table named {name!r}; built-in tables: "
                       f"{', '.join(builtin_names())}") from None


def _read_file(path: Path) -> str:
    from toolkit.fileio import read_text

    return read_text(path, "table file", MAX_TABLE_BYTES)


def parse(content: str, schema: Mapping[str, Converter], origin: str, name: str = "") -> Table:
    """Parse CSV text against a schema; raise :class:`BadInput` naming ``origin``, line and column."""
    schema = dict(schema)
    schema.setdefault("source", source)
    reader = csv.reader(io.StringIO(content))
    try:
        header = [h.strip() for h in next(reader)]
    except StopIteration:
        raise BadInput(f"{origin}: the table is empty; it needs a header row with columns "
                       f"{', '.join(schema)}") from None
    except csv.Error as exc:
        raise BadInput(f"{origin}, line 1: {exc}") from None
    missing = [c for c in schema if c not in header]
    if missing:
        raise BadInput(f"{origin}, line 1: missing column(s) {', '.join(missing)}; the table needs "
                       f"{', '.join(schema)}")
    index = {c: header.index(c) for c in schema}
    rows = []
    try:
        for record in reader:
            line = reader.line_num
            if not record or all(not cell.strip() for cell in record):
                continue
            if record[0].lstrip().startswith("#"):
                continue
            if len(record) != len(header):
                raise BadInput(f"{origin}, line {line}: {len(record)} cells, the header has {len(header)}")
            row = {}
            for column, convert in schema.items():
                cell = record[index[column]]
                try:
                    row[column] = convert(cell)
                except ValueError as exc:
                    raise BadInput(f"{origin}, line {line}, column {column!r}: {exc}") from None
            rows.append(MappingProxyType(row))
    except csv.Error as exc:
        raise BadInput(f"{origin}, line {reader.line_num}: {exc}") from None
    if not rows:
        raise BadInput(f"{origin}: the table has a header but no rows")
    return Table(name or origin, origin, tuple(schema), tuple(rows))


@functools.lru_cache(maxsize=None)
def _load_builtin(name: str, schema_items: tuple) -> Table:
    return parse(_read_builtin(name), dict(schema_items), f"tables/{name}.csv", name)


def load(name_or_path: str | Path, schema: Mapping[str, Converter]) -> Table:
    """Load a built-in table by name (``"grades"``) or a shop's own CSV file by path.

    A path is anything with a ``.csv`` suffix or a path separator, or a :class:`~pathlib.Path`. Built-in
    tables are read once and cached.

    >>> load("no-such-table", {"name": text})
    Traceback (most recent call last):
    ...
    toolkit.errors.BadInput: no built-in table named 'no-such-table'; ...
    """
    if is_path(name_or_path):
        path = Path(name_or_path)
        return parse(_read_file(path), schema, str(path), path.stem)
    return _load_builtin(str(name_or_path), tuple(schema.items()))


def is_path(name_or_path: str | Path) -> bool:
    """Whether :func:`load` reads ``name_or_path`` as a shop's file (else as a built-in table's name)."""
    return isinstance(name_or_path, Path) or str(name_or_path).endswith(".csv") or "/" in str(name_or_path)


def load_derived(name_or_path: str | Path, schema: Mapping[str, Converter], build: Callable):
    """``build(load(name_or_path, schema), name_or_path)``: what a module makes of a table's rows (its
    objects, an index), made once per built-in table and kept, like the table; a shop's file is read and
    built on every call, as :func:`load` reads it. ``build`` is a module-level function whose result is
    immutable (tuples, read-only mappings), since every caller gets the same value."""
    if is_path(name_or_path):
        return build(load(name_or_path, schema), name_or_path)
    return _derived_builtin(str(name_or_path), tuple(schema.items()), build)


@functools.lru_cache(maxsize=None)
def _derived_builtin(name: str, schema_items: tuple, build: Callable):
    return build(_load_builtin(name, schema_items), name)
