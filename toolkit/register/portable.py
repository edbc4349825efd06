"""Export of the whole register to a portable file, and import back (into SQLite or PostgreSQL alike).

The file is JSON lines of our own design (UTF-8, one JSON object per line):

* line 1, the header: ``{"format": "counterpoise-register", "version": 1, "schema_version": 2,
  "exported": "2026-12-02T04:00:00.000000Z", "tables": ["settings", ...]}``;
* then one line per row, parents before children: ``{"table": "jobs", "row": {"id": 1, ...}}`` with the
  columns of docs/register.md (row ids are kept, so references stay valid);
* the last line: ``{"end": true, "rows": {"settings": 2, ...}}``, so a truncated file is recognised.

An import goes into an empty register (no rotor types, jobs or coefficients yet) in one transaction: a
file that fails half-way leaves the register as it was.
"""

from __future__ import annotations

import json
from pathlib import Path

from toolkit.errors import BadInput
from toolkit.register.store import Register, now

__all__ = ["FORMAT", "export_lines", "import_lines"]

FORMAT = "counterpoise-register"
_BATCH = 1000


def export_lines(reg: Register, handle, counts: dict | None = None) -> dict:
    """Write the register to the binary file ``handle`` as JSON lines; returns the row count per table."""
    from sqlalchemy import select

    from toolkit.register.schema import LATEST, TABLES

    counts = {} if counts is None else counts

    def write(obj) -> None:
        handle.write((json.dumps(obj, ensure_ascii=False, separators=(",", ":")) + "\n").encode("utf-8"))

    with reg.read() as conn:
        write({"format": FORMAT, "version": 1, "schema_version": reg.version() or LATEST, "exported": now(),
               "tables": [t.name for t in TABLES]})
        for table in TABLES:
            order = list(table.primary_key.columns)
            counts[table.name] = 0
            for row in conn.execute(select(table).order_by(*order)).mappings():
                write({"table": table.name, "row": dict(row)})
                counts[table.name] += 1
        write({"end": True, "rows": counts})
    return counts


def _empty(conn) -> bool:
    from sqlalchemy import select

    from toolkit.register.schema import coefficient_sets, jobs, rotor_types

    return all(conn.execute(select(t.c.id).limit(1)).first() is None for t in (rotor_types, jobs, coefficient_sets))


def import_lines(reg: Register, path) -> dict:
    """Read a file written by :func:`export_lines` into an empty register; returns the row count per table."""
    from sqlalchemy import delete, func, select

    from toolkit.register.schema import LATEST, TABLES, counters, settings

    tables = {t.name: t for t in TABLES}
    p = Path(path)
    try:
        handle = p.open("r", encoding="utf-8")
    except OSError as exc:
        raise BadInput(f"{p}: cannot be read ({exc.strerror})") from None
    counts = {name: 0 for name in tables}
    ended = False
    with handle, reg.write() as conn:
        if not _empty(conn):
            raise BadInput(f"{p}: the register {reg.where} already holds records; import into an empty register")
        # the file brings its own settings and counters
        conn.execute(delete(settings))
        conn.execute(delete(counters))
        pending: dict[str, list] = {}

        def flush(name=None):
            for n in ([name] if name else list(pending)):
                if pending.get(n):
                    conn.execute(tables[n].insert(), pending[n])
                    pending[n] = []

        order = [t.name for t in TABLES]
        last_index = -1
        for number, line in enumerate(handle, start=1):
            where = f"{p}: line {number}"
            try:
                obj = json.loads(line)
            except (json.JSONDecodeError, UnicodeDecodeError) as exc:
                raise BadInput(f"{where}: not valid JSON ({getattr(exc, 'msg', exc)})") from None
            if number == 1:
                if not isinstance(obj, dict) or obj.get("format") != FORMAT:
                    raise BadInput(f"{where}: not a Counterpoise register export")
                if obj.get("version") != 1:
                    raise BadInput(f"{where}: export version {obj.get('version')!r} is not supported (this program "
                                   "reads version 1)")
                if not isinstance(obj.get("schema_version"), int) or obj["schema_version"] > LATEST:
                    raise BadInput(f"{where}: schema version {obj.get('schema_version')!r} is newer than this "
                                   f"program knows ({LATEST})")
                continue
            if ended:
                raise BadInput(f"{where}: text after the end line")
            if isinstance(obj, dict) and obj.get("end") is True:
                ended = True
                continue
            if not isinstance(obj, dict) or obj.get("table") not in tables or not isinstance(obj.get("row"), dict):
                raise BadInput(f"{where}: need {{\"table\": NAME, \"row\": {{...}}}} with a table of the register")
            name, row = obj["table"], obj["row"]
            index = order.index(name)
            if index < last_index:
                raise BadInput(f"{where}: table {name} after {order[last_index]}; parents come first")
            if index > last_index:
                flush()
                last_index = index
            columns = set(tables[name].columns.keys())
            unknown = set(row) - columns
            if unknown:
                raise BadInput(f"{where}: table {name} has no column {sorted(unknown)[0]!r}")
            pending.setdefault(name, []).append(row)
            counts[name] += 1
            if len(pending[name]) >= _BATCH:
                flush(name)
        if not ended:
            raise BadInput(f"{p}: the file ends without its end line (truncated?); nothing was imported")
        flush()
        if reg.dialect == "postgresql":  # explicit ids were inserted: move each id sequence past them
            for table in TABLES:
                if "id" in table.columns:
                    top = func.coalesce(select(func.max(table.c.id)).scalar_subquery(), 0) + 1
                    conn.execute(select(func.setval(func.pg_get_serial_sequence(table.name, "id"), top, False)))
    return counts

