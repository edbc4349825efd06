"""What the register holds: rotor types with versions, jobs with their work orders, status, check runs,
operation marks, sign-offs and files, and influence coefficients per rotor type with their trim history.

Append-only: nothing recorded is changed or removed. A rotor type's edit is a new version (a job keeps
the version it used); a status change, a check-run reading, a sign-off or a coefficient update is a new
row; the latest row counts and the older ones stay as history. The one cached value is ``jobs.status``
(the latest status row), written in the same transaction as that row.
"""

from __future__ import annotations

import hashlib
import json
import tomllib
from pathlib import Path

from toolkit.errors import BadInput, OutputError
from toolkit.register.store import DEFAULT_STALE_DAYS, Register, now

__all__ = ["STATUSES", "TRANSITIONS", "ROLES", "save_type", "change_template", "save_type_changes",
           "list_types", "type_info", "template",
           "compose_job", "record_job", "store_order", "reserve_number", "recorded_in_folder", "add_files", "list_jobs",
           "job_detail", "set_status", "record_check",
           "record_signoff", "record_marks", "store_coefficients", "coefficient_history", "latest_coefficients",
           "coefficient_set",
           "trim_coefficients", "record_trim", "stale_warnings", "sha256_text", "toml_text"]

STATUSES = ("planned", "balanced", "checked", "released", "rework")
#: Allowed status changes. "rework" sends a rotor back to be corrected again.
TRANSITIONS = {
    "planned": ("balanced",),
    "balanced": ("checked", "rework"),
    "checked": ("released", "rework"),
    "rework": ("balanced",),
    "released": (),
}
#: Sign-off roles (the rows of the work order's sign-off section).
ROLES = ("operator", "machinist", "inspector")
#: The placeholder order number of a job that the register numbers.
PLACEHOLDER = "(allocated by the register)"
MAX_TEXT = 1_000_000


def _json(value) -> str:
    """The JSON text of a stored value (compact, UTF-8 characters as they are; TOML dates as ISO text)."""
    import orjson

    try:
        return orjson.dumps(value).decode()
    except TypeError as exc:
        raise BadInput(f"order data: cannot be stored ({exc})") from None


def sha256_text(text: str) -> str:
    """SHA-256 (hex) of a text in UTF-8.

    >>> sha256_text("abc")  # FIPS 180-2, appendix B.1 (SHA-256 of "abc")
    'ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad'
    """
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


def _by(name, what: str = "by") -> str:
    text = " ".join(str(name or "").split())
    if len(text) > 200:
        raise BadInput.about(what, f"{text[:40]!r}... is longer than 200 characters")
    return text


def _text(value, what: str, limit: int = 2000) -> str:
    text = "" if value is None else str(value)
    if len(text) > limit:
        if " " in what:  # a stored text ("job text"), not a parameter
            raise BadInput(f"{what}: longer than {limit} characters")
        raise BadInput.about(what, f"longer than {limit} characters")
    return text


# -- TOML text of a job (tables as the job loader reads them) ---------------------------------------------

def _toml_string(text: str) -> str:
    """A TOML basic string: quotes, backslashes and control characters (TOML forbids them raw) escaped."""
    out = []
    for ch in text:
        if ch in '"\\':
            out.append("\\" + ch)
        elif ord(ch) < 0x20 or ord(ch) == 0x7F:
            out.append(f"\\u{ord(ch):04x}")
        else:
            out.append(ch)
    return '"' + "".join(out) + '"'


def _toml_key(key: str) -> str:
    import re

    return key if re.fullmatch(r"[A-Za-z0-9_-]+", key) else _toml_string(key)


def _toml_value(value) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, (int, float)):
        return repr(value)
    if isinstance(value, str):
        return _toml_string(value)
    if isinstance(value, (list, tuple)):
        return "[" + ", ".join(_toml_value(v) for v in value) + "]"
    if isinstance(value, dict):
        return "{" + ", ".join(f"{_toml_key(k)} = {_toml_value(v)}" for k, v in value.items()) + "}"
    raise BadInput.about("job", f"a value of type {type(value).__name__} cannot be written as TOML")


def toml_text(data: dict, header: str = "") -> str:
    """Nested tables as TOML text that :mod:`tomllib` reads back to the same tables.

    >>> text = toml_text({"order": {"number": "A-1"}, "plane": [{"name": "A"}, {"name": "B"}]})
    >>> tomllib.loads(text) == {"order": {"number": "A-1"}, "plane": [{"name": "A"}, {"name": "B"}]}
    True
    """
    lines = [f"# {line}" for line in header.splitlines()] if header else []

    def table(path: list[str], body: dict, array: bool = False) -> None:
        scalars = {k: v for k, v in body.items()
                   if not isinstance(v, dict) and not (isinstance(v, list) and v and all(isinstance(x, dict) for x in v))}
        name = ".".join(_toml_key(p) for p in path)
        if path:
            lines.append(f"[[{name}]]" if array else f"[{name}]")
        lines.extend(f"{_toml_key(k)} = {_toml_value(v)}" for k, v in scalars.items())
        for k, v in body.items():
            if isinstance(v, dict):
                table(path + [k], v)
            elif isinstance(v, list) and v and all(isinstance(x, dict) for x in v):
                for item in v:
                    table(path + [k], item, array=True)

    table([], data)
    return "\n".join(lines) + "\n"


def _merge(base: dict, over: dict) -> dict:
    """``base`` with ``over`` laid on top (tables merged key by key; arrays of tables replaced whole)."""
    out = dict(base)
    for key, value in over.items():
        if isinstance(value, dict) and isinstance(out.get(key), dict) and key != "measurement":
            out[key] = _merge(out[key], value)
        else:
            out[key] = value
    return out


def _loads(text: str, origin: str) -> dict:
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise BadInput(f"{origin}: not valid TOML ({exc})") from None


# -- rotor types ------------------------------------------------------------------------------------------

def _type_name(name) -> str:
    text = " ".join(str(name or "").split())
    if not text or len(text) > 120:
        raise BadInput(f"rotor type: {name!r} is not a name; give 1 to 120 characters")  # a positional TYPE, no option
    return text


def _check_template(text: str, origin: str, numbered: bool = True) -> None:
    """The checks of a job file on a template. Its order number may be left out (the register numbers each
    job), and so may its ``[measurement]`` (each rotor brings its own readings): the template is checked
    with the placeholder number and, where it has no measurement, zero readings on its planes."""
    from toolkit.workorder.job import job_from_data, key_lines

    data = _loads(text, origin)
    order = dict(data.get("order") or {}) if isinstance(data.get("order"), dict) else {}
    order.setdefault("number", PLACEHOLDER)
    order.setdefault("rotor", "rotor type template")
    checked = {**data, "order": order}
    if "measurement" not in data:
        names = [str(p.get("name", "")) for p in data.get("plane") or [] if isinstance(p, dict)]
        checked["measurement"] = {"kind": "machine", "readings": {n: "0 g*mm@0" for n in names}}
    job_from_data(checked, origin, lines=key_lines(text) if numbered else None, what="the rotor-type template")


#: The tables a template change may set a key in (the planes are changed plane by plane).
CHANGE_TABLES = ("order", "rotor", "geometry", "angles", "measurement", "shop", "format")


def change_template(data: dict, changes=(), planes=(), drop_planes=()) -> dict:
    """A template's tables with changes laid over them (the tables given are not changed).

    ``changes``: ``(path, value)`` pairs, the path a tuple of keys such as ``("rotor", "mass")`` or
    ``("shop", "drilling", "min_wall_mm")``; a value ``None`` removes the key. ``planes``: ``(name, keys)``
    pairs; a plane of that name gets the keys (``None`` removes one), another name adds a plane at the end.
    ``drop_planes``: the names of planes to remove. What results is checked when the template is saved.

    >>> data = {"rotor": {"mass": "412 kg"}, "plane": [{"name": "A", "radius": "300 mm"}]}
    >>> new = change_template(data, [(("rotor", "grade"), "G 2.5")], [("A", {"radius": "310 mm"}), ("B", {})])
    >>> new["rotor"], [p["name"] for p in new["plane"]], new["plane"][0]["radius"], data["plane"][0]["radius"]
    ({'mass': '412 kg', 'grade': 'G 2.5'}, ['A', 'B'], '310 mm', '300 mm')
    """
    import copy

    out = copy.deepcopy(dict(data))
    for path, value in changes:
        path = tuple(str(k) for k in path)
        if len(path) < 2 or path[0] not in CHANGE_TABLES or not all(path):
            raise BadInput.about("changes", f"{'.'.join(path)!r} is not a key of a table; give TABLE.KEY with "
                                            f"TABLE one of {', '.join(CHANGE_TABLES)} (planes are changed by name)")
        table = out
        for depth, key in enumerate(path[:-1]):
            inner = table.setdefault(key, {})
            if not isinstance(inner, dict):
                raise BadInput.about("changes", f"{'.'.join(path[:depth + 1])!r} is a value, not a table")
            table = inner
        if value is None:
            table.pop(path[-1], None)
        else:
            table[path[-1]] = value
    plane_list = [dict(p) for p in out.get("plane") or [] if isinstance(p, dict)]
    names = [str(p.get("name", "")) for p in plane_list]
    for name in drop_planes:
        if name not in names:
            raise BadInput.about("drop_planes", f"plane {name!r} to remove is not in the template; planes: "
                                                f"{', '.join(names) or 'none'}")
        del plane_list[names.index(name)]
        names.remove(name)
    for name, keys in planes:
        name = " ".join(str(name).split())
        if not name:
            raise BadInput.about("planes", "a plane needs a name")
        if name in names:
            plane = plane_list[names.index(name)]
        else:
            plane = {"name": name}
            plane_list.append(plane)
            names.append(name)
        for key, value in dict(keys).items():
            if key == "name":
                raise BadInput.about(f"planes {name}", "a plane is renamed by removing it and adding the new one")
            if value is None:
                plane.pop(key, None)
            else:
                plane[key] = value
    if plane_list or "plane" in out:
        out["plane"] = plane_list
    readings = out.get("measurement", {}).get("readings") if isinstance(out.get("measurement"), dict) else None
    if isinstance(readings, dict):  # readings of removed planes go with them
        for key in [k for k in readings if k not in names]:
            readings.pop(key)
    return out


def save_type_changes(reg: Register, name: str, *, base_text: str | None = None, changes=(), planes=(),
                      drop_planes=(), note: str = "", by: str = "", origin: str = "template") -> dict:
    """Store a new version of a rotor type made by :func:`change_template`: over ``base_text`` (a job
    text) if given, else over the type's newest version, else (a new type) over nothing. The result has the
    checks of a job file (:func:`save_type`); ``based_on`` says which version the changes were laid over."""
    based_on = None
    if base_text is not None:
        data = _loads(_text(base_text, "template", MAX_TEXT), origin)
    else:
        from sqlalchemy import select

        from toolkit.register.schema import rotor_types

        with reg.read() as conn:
            known = conn.execute(select(rotor_types.c.id).where(rotor_types.c.name == _type_name(name))).first()
        current = template(reg, name) if known else None
        data = _loads(current["template"], origin) if current else {}
        based_on = current["version"] if current else None
    text = toml_text(change_template(data, changes, planes, drop_planes),
                     f"rotor type {_type_name(name)!r}" + (f", changed from version {based_on}" if based_on else ""))
    saved = save_type(reg, name, text, note=note, by=by, origin=origin, numbered=False)
    return {**saved, "based_on": based_on, "template": text}


def save_type(reg: Register, name: str, template_text: str, *, note: str = "", by: str = "",
              origin: str = "template", numbered: bool = True) -> dict:
    """Store a rotor type's job template (TOML job text); a second save of the same name is a new
    version. The template must be a valid job (the order number and the measurement may be left out).
    ``numbered`` false: the problems found name no line (for a text made here rather than written)."""
    from sqlalchemy import func, select

    from toolkit.register.schema import rotor_types, type_versions

    name = _type_name(name)
    template_text = _text(template_text, "template", MAX_TEXT)
    _check_template(template_text, origin, numbered)
    when = now()
    with reg.write() as conn:
        type_id = conn.execute(select(rotor_types.c.id).where(rotor_types.c.name == name)).scalar()
        if type_id is None:
            type_id = conn.execute(rotor_types.insert().values(name=name, created=when, created_by=_by(by))
                                   .returning(rotor_types.c.id)).scalar_one()
        version = int(conn.execute(select(func.max(type_versions.c.version))
                                   .where(type_versions.c.type_id == type_id)).scalar() or 0) + 1
        conn.execute(type_versions.insert().values(type_id=type_id, version=version, template=template_text,
                                                   template_sha256=sha256_text(template_text),
                                                   note=_text(note, "note"), created=when, created_by=_by(by)))
    return {"type": name, "version": version, "template_sha256": sha256_text(template_text), "created": when}


def list_types(reg: Register) -> list[dict]:
    from sqlalchemy import func, select

    from toolkit.register.schema import jobs, rotor_types, type_versions

    with reg.read() as conn:
        latest = (select(type_versions.c.type_id, func.max(type_versions.c.version).label("version"))
                  .group_by(type_versions.c.type_id).subquery())
        counts = (select(type_versions.c.type_id, func.count(jobs.c.id).label("jobs"))
                  .join(jobs, jobs.c.type_version_id == type_versions.c.id)
                  .group_by(type_versions.c.type_id).subquery())
        rows = conn.execute(select(rotor_types.c.name, rotor_types.c.created, latest.c.version,
                                   func.coalesce(counts.c.jobs, 0))
                            .join(latest, latest.c.type_id == rotor_types.c.id)
                            .outerjoin(counts, counts.c.type_id == rotor_types.c.id)
                            .order_by(rotor_types.c.name)).all()
    return [{"type": n, "created": c, "versions": int(v), "jobs": int(j)} for n, c, v, j in rows]


def _type_id(conn, name: str) -> int:
    from sqlalchemy import select

    from toolkit.register.schema import rotor_types

    type_id = conn.execute(select(rotor_types.c.id).where(rotor_types.c.name == _type_name(name))).scalar()
    if type_id is None:
        known = [r[0] for r in conn.execute(select(rotor_types.c.name).order_by(rotor_types.c.name).limit(8))]
        raise BadInput(f"rotor type {name!r} is not in the register"
                       + (f"; known: {', '.join(known)}" if known else "; none is stored yet"))
    return int(type_id)


def template(reg: Register, name: str, version: int | None = None, conn=None) -> dict:
    """A rotor type's template: ``{"type", "version", "version_id", "template", "template_sha256", ...}``
    (the latest version unless ``version`` is given)."""
    from sqlalchemy import select

    from toolkit.register.schema import type_versions

    def get(c):
        type_id = _type_id(c, name)
        query = select(type_versions).where(type_versions.c.type_id == type_id)
        if version is not None:
            query = query.where(type_versions.c.version == int(version))
        row = c.execute(query.order_by(type_versions.c.version.desc()).limit(1)).mappings().first()
        if row is None:
            raise BadInput(f"rotor type {name!r} has no version {version}")
        return {"type": _type_name(name), "version": row["version"], "version_id": row["id"],
                "template": row["template"], "template_sha256": row["template_sha256"], "note": row["note"],
                "created": row["created"], "created_by": row["created_by"]}

    if conn is not None:
        return get(conn)
    with reg.read() as c:
        return get(c)


def type_info(reg: Register, name: str) -> dict:
    """A rotor type with its version history, its jobs count and its coefficient sets."""
    from sqlalchemy import func, select

    from toolkit.register.schema import jobs, type_versions

    with reg.read() as conn:
        type_id = _type_id(conn, name)
        versions = conn.execute(
            select(type_versions.c.version, type_versions.c.created, type_versions.c.created_by,
                   type_versions.c.note, type_versions.c.template_sha256, func.count(jobs.c.id))
            .outerjoin(jobs, jobs.c.type_version_id == type_versions.c.id)
            .where(type_versions.c.type_id == type_id)
            .group_by(type_versions.c.id).order_by(type_versions.c.version)).all()
        latest = template(reg, name, conn=conn)
    return {"type": _type_name(name),
            "versions": [{"version": v, "created": c, "by": b, "note": n, "template_sha256": h, "jobs": int(j)}
                         for v, c, b, n, h, j in versions],
            "template": latest["template"], "coefficients": coefficient_history(reg, name)}


# -- jobs -------------------------------------------------------------------------------------------------

def compose_job(reg: Register, type_name: str, over_text: str = "", *, serial: str = "",
                version: int | None = None) -> tuple[dict, str]:
    """A job from a stored rotor type: the template with ``over_text`` (TOML tables of this rotor, such as
    ``[order]`` and ``[measurement]``) laid over it, and the serial number. Returns (type record, job
    text)."""
    t = template(reg, type_name, version)
    data = _loads(t["template"], f"rotor type {t['type']} version {t['version']}")
    if over_text:
        data = _merge(data, _loads(over_text, "job"))
    order = dict(data.get("order") or {})
    if serial:
        order["serial"] = serial
    order.setdefault("number", PLACEHOLDER)
    data["order"] = order
    text = toml_text(data, f"job composed from rotor type {t['type']!r} version {t['version']} "
                           f"(template SHA-256 {t['template_sha256'][:16]}...)")
    return t, text


def record_job(reg: Register, job_text: str, *, origin: str = "job", base=None, type_version_id: int | None = None,
               allocate: bool = True, by: str = "", extra_warnings: tuple[str, ...] = (), job=None):
    """Build the work order of a job text and record it with status ``planned``: one transaction that
    allocates the order number (unless ``allocate`` is false: then the job's own number is kept), stores
    the job text and its SHA-256, the work order (``WorkOrder.to_dict()``) and its planes. Returns
    ``(order, record)``; the order carries the number and the input hash. ``job`` is the job already
    validated from that text (where the text names inputs held elsewhere, such as stored coefficients)."""
    from toolkit.workorder.build import build_order
    from toolkit.workorder.job import parse_job

    job_text = _text(job_text, "job text", MAX_TEXT)
    job = job or parse_job(job_text, origin, Path(base) if base else None)
    return store_order(reg, build_order(job), job_text, dict(job.order), type_version_id=type_version_id,
                       allocate=allocate, by=by, extra_warnings=extra_warnings)


def store_order(reg: Register, built, job_text: str, order_data: dict, *, type_version_id: int | None = None,
                allocate: bool = True, by: str = "", extra_warnings: tuple[str, ...] = (), files=None):
    """The recording transaction of :func:`record_job` for a work order already built from ``job_text``.

    Everything that needs no database is made before the transaction (the JSON of the order data, the
    plane rows); inside it, one statement each on the driver's cursor (:meth:`Register.execute`): the shop's
    pattern, the counter, the job row with the work order's JSON (:meth:`WorkOrder.to_json`, once its number
    is known; the insert also refuses a number already used: then the next number is drawn), its planes and
    its first status. ``files(order)``, if given, is called last inside the transaction with the recorded
    order and returns the paths of the files it wrote for it, recorded in the same transaction: when it
    raises, nothing of the job is recorded."""
    digest = sha256_text(job_text)
    when = now()
    by = _by(by)
    warnings = built.warnings + tuple(extra_warnings)
    planes = [{"idx": n, "plane": p.name, "u_per_g_mm": p.tolerance.u_per_g_mm, "limit_g_mm": p.limit,
               "initial_g_mm": p.initial_g_mm, "initial_deg": p.initial_deg, "predicted_g_mm": p.predicted_g_mm,
               "operations": len(p.operations), "mass_g": sum(op.mass_g for op in p.operations), "created": when}
              for n, p in enumerate(built.planes, start=1)]
    row = {"type_version_id": type_version_id, "serial": built.ident.serial, "customer": built.ident.customer,
           "order_data": _json(order_data), "job_text": job_text, "job_sha256": digest,
           "predicted_pass": int(built.passed), "status": "planned", "created": when, "created_by": by}
    with reg.write_direct() as conn:
        for _ in range(1000):
            number = reg.allocate_number(conn, skip_used=False) if allocate else built.ident.number
            # the recorded order: its number, input hash and warnings set here; stored as its JSON text
            order = _replaced(built, ident=_replaced(built.ident, number=number, input_sha256=digest), warnings=warnings)
            inserted = reg.execute(conn, "job", {**row, "order_number": number, "workorder": order.to_json()})
            if inserted:
                job_id = inserted[0][0]
                break
            if not allocate:
                raise BadInput(f"order {number!r} is already in the register; a correction is a new job (or let "
                               "the register number it)")
        else:
            raise OutputError(f"register {reg.where}: the order pattern yields only numbers already used")
        reg.execute(conn, "planes", [{**p, "job_id": job_id} for p in planes])
        reg.execute(conn, "status", {"job_id": job_id, "status": "planned", "at": when, "by": by,
                                     "source": "recorded", "note": ""})
        if files is not None:
            rows = [{**f, "job_id": job_id, "at": when} for f in _file_rows(files(order))]
            if rows:
                reg.execute(conn, "files", rows)
    return order, {"order_number": number, "job_sha256": digest, "status": "planned", "created": when}


def reserve_number(reg: Register) -> str:
    """Allocate the next order number in a transaction of its own (a job recorded later with
    ``allocate=False`` takes it; one that is never recorded leaves a gap in the numbers, as a skipped
    number does)."""
    with reg.write() as conn:
        return reg.allocate_number(conn)


def recorded_in_folder(reg: Register, job_sha256: str, folder) -> list[str]:
    """The order numbers of the jobs recorded from a job text of this SHA-256 whose files were written into
    ``folder`` (oldest first): a batch continued in its folder finds there the rows an earlier run of it
    recorded."""
    from sqlalchemy import select

    from toolkit.register.schema import job_files, jobs

    here = Path(folder).resolve()
    with reg.read() as conn:
        rows = conn.execute(select(jobs.c.order_number, job_files.c.path)
                            .join(job_files, job_files.c.job_id == jobs.c.id)
                            .where(jobs.c.job_sha256 == str(job_sha256)).order_by(jobs.c.id, job_files.c.id)).all()
    return list(dict.fromkeys(number for number, path in rows if Path(path).resolve().parent == here))


def _replaced(value, **changes):
    """``dataclasses.replace`` of a work order or its identification, made as a copy of its fields with
    ``changes`` instead of running its ``__init__`` again (neither has a ``__post_init__``, every field is
    an ``__init__`` field, and the values were checked when the order was built): a sixth of the time."""
    new = object.__new__(type(value))
    new.__dict__.update(value.__dict__, **changes)
    return new


def _job_row(conn, number: str):
    from sqlalchemy import select

    from toolkit.register.schema import jobs

    row = conn.execute(select(jobs).where(jobs.c.order_number == str(number))).mappings().first()
    if row is None:
        raise BadInput(f"order {number!r} is not in the register")
    return row


def add_files(reg: Register, number: str, paths) -> list[dict]:
    """Record files written for a job with their SHA-256."""
    from toolkit.register.schema import job_files

    out = _file_rows(paths)
    with reg.write() as conn:
        job = _job_row(conn, number)
        when = now()
        if out:
            conn.execute(job_files.insert(), [{**f, "job_id": job["id"], "at": when} for f in out])
    return out


def _file_rows(paths) -> list[dict]:
    """Each file's path, SHA-256 and size, as the register keeps them."""
    out = []
    for p in paths:
        data = Path(p).read_bytes()
        out.append({"path": str(p), "sha256": hashlib.sha256(data).hexdigest(), "size": len(data)})
    return out


def _date_bound(text, name: str, end: bool = False) -> str | None:
    import datetime as dt

    if text is None or str(text).strip() == "":
        return None
    try:
        day = dt.date.fromisoformat(str(text).strip())
    except ValueError:
        raise BadInput.about(name, f"{text!r} is not a date; write YYYY-MM-DD, e.g. 2026-12-01") from None
    if end:
        day = day + dt.timedelta(days=1)
    return day.isoformat()


def job_filter(conn, *, type_name=None, status=None, since=None, until=None):
    """The WHERE conditions of a job selection (by rotor type, status, date range)."""
    from sqlalchemy import select

    from toolkit.register.schema import jobs, type_versions

    where = []
    if type_name:
        type_id = _type_id(conn, type_name)
        where.append(jobs.c.type_version_id.in_(select(type_versions.c.id).where(type_versions.c.type_id == type_id)))
    if status:
        if status not in STATUSES:
            raise BadInput.about("status", f"{status!r} is not one of {', '.join(STATUSES)}")
        where.append(jobs.c.status == status)
    low, high = _date_bound(since, "since"), _date_bound(until, "until", end=True)
    if low:
        where.append(jobs.c.created >= low)
    if high:
        where.append(jobs.c.created < high)
    return where


def list_jobs(reg: Register, *, type_name=None, status=None, since=None, until=None, limit: int = 200) -> list[dict]:
    from sqlalchemy import select

    from toolkit.register.schema import jobs, rotor_types, type_versions

    with reg.read() as conn:
        where = job_filter(conn, type_name=type_name, status=status, since=since, until=until)
        query = (select(jobs.c.order_number, jobs.c.serial, jobs.c.customer, jobs.c.status, jobs.c.created,
                        jobs.c.predicted_pass, rotor_types.c.name, type_versions.c.version)
                 .outerjoin(type_versions, type_versions.c.id == jobs.c.type_version_id)
                 .outerjoin(rotor_types, rotor_types.c.id == type_versions.c.type_id)
                 .where(*where).order_by(jobs.c.id.desc()).limit(int(limit)))
        rows = conn.execute(query).all()
    return [{"order_number": n, "serial": s, "customer": c, "status": st, "created": cr,
             "predicted_pass": bool(p), "type": t, "type_version": v} for n, s, c, st, cr, p, t, v in rows]


def job_detail(reg: Register, number: str, conn=None) -> dict:
    """Everything recorded about one job."""
    from sqlalchemy import select

    from toolkit.register.schema import (check_runs, job_files, job_status, operation_marks, rotor_types, signoffs,
                                         trim_runs, type_versions)

    def get(c):
        job = _job_row(c, number)
        jid = job["id"]

        def rows(table, order):
            return [dict(r) for r in c.execute(select(table).where(table.c.job_id == jid).order_by(order))
                    .mappings()]

        type_row = None
        if job["type_version_id"] is not None:
            type_row = c.execute(select(rotor_types.c.name, type_versions.c.version)
                                 .join(rotor_types, rotor_types.c.id == type_versions.c.type_id)
                                 .where(type_versions.c.id == job["type_version_id"])).first()
        strip = lambda items: [{k: v for k, v in item.items() if k not in ("id", "job_id")} for item in items]  # noqa: E731
        checks = strip(rows(check_runs, check_runs.c.id))
        for item in checks:
            item["passed"] = None if item["passed"] is None else bool(item["passed"])
        return {
            "order_number": job["order_number"], "serial": job["serial"], "customer": job["customer"],
            "status": job["status"], "created": job["created"], "created_by": job["created_by"],
            "type": type_row[0] if type_row else None, "type_version": type_row[1] if type_row else None,
            "job_sha256": job["job_sha256"], "job_text": job["job_text"],
            "predicted_pass": bool(job["predicted_pass"]), "order_data": json.loads(job["order_data"]),
            "workorder": json.loads(job["workorder"]),
            "status_history": strip(rows(job_status, job_status.c.id)),
            "check_runs": checks,
            "operation_marks": strip(rows(operation_marks, operation_marks.c.id)),
            "signoffs": strip(rows(signoffs, signoffs.c.id)),
            "files": strip(rows(job_files, job_files.c.id)),
            "trims": [{**t, "data": json.loads(t["data"])} for t in strip(rows(trim_runs, trim_runs.c.id))],
        }

    if conn is not None:
        return get(conn)
    with reg.read() as c:
        return get(c)


def _latest_checks(conn, job_id: int) -> dict[tuple[str, str], dict]:
    from sqlalchemy import select

    from toolkit.register.schema import check_runs

    out = {}
    for r in conn.execute(select(check_runs).where(check_runs.c.job_id == job_id).order_by(check_runs.c.id)).mappings():
        out[(r["kind"], r["target"])] = dict(r)
    return out


def _set_status(conn, job, status: str, by: str, source: str, note: str = "") -> None:
    from sqlalchemy import select, update

    from toolkit.register.schema import jobs, job_status, signoffs

    current = job["status"]
    if status not in STATUSES:
        raise BadInput.about("status", f"{status!r} is not one of {', '.join(STATUSES)}")
    if status == current:
        return
    if status not in TRANSITIONS[current]:
        allowed = ", ".join(TRANSITIONS[current]) or "none (released is final)"
        raise BadInput(f"order {job['order_number']}: status {current} cannot change to {status}; allowed: {allowed}")
    if status == "checked":
        workorder = json.loads(job["workorder"])
        checks = _latest_checks(conn, job["id"])
        planes = [p["name"] for p in workorder["planes"]]
        missing = [p for p in planes if ("residual", p) not in checks]
        vibration = [c for (k, _t), c in checks.items() if k == "vibration"]
        if missing and not vibration:
            raise BadInput(f"order {job['order_number']}: cannot be checked: no measured residual for plane(s) "
                           f"{', '.join(missing)}")
        failed = [p for p in planes if ("residual", p) in checks and not checks[("residual", p)]["passed"]]
        if failed:
            raise BadInput(f"order {job['order_number']}: cannot be checked: the measured residual of plane(s) "
                           f"{', '.join(failed)} exceeds the limit; record rework")
    if status == "released":
        signed = conn.execute(select(signoffs.c.id).where(signoffs.c.job_id == job["id"],
                                                          signoffs.c.role == "inspector")).first()
        if signed is None:
            raise BadInput(f"order {job['order_number']}: cannot be released without the inspector's sign-off")
    when = now()
    conn.execute(job_status.insert().values(job_id=job["id"], status=status, at=when, by=_by(by), source=source,
                                            note=_text(note, "note")))
    conn.execute(update(jobs).where(jobs.c.id == job["id"]).values(status=status))


def set_status(reg: Register, number: str, status: str, *, by: str = "", note: str = "",
               source: str = "command") -> dict:
    """Move a job to ``status`` if :data:`TRANSITIONS` allows it (checked needs passing residuals, released
    the inspector's sign-off)."""
    with reg.write() as conn:
        job = _job_row(conn, number)
        _set_status(conn, job, status, by, source, note)
    return {"order_number": number, "status": status}


def _residual(text, plane: dict, name: str) -> tuple[float, float | None]:
    from toolkit.units import quantity
    from toolkit.vectors import parse_angle

    text = str(text).strip()
    amount_text, _, angle_text = text.partition("@")
    angle = parse_angle(angle_text, f"{name} angle") if angle_text.strip() else None
    try:
        amount = quantity(amount_text, "unbalance", name, nonnegative=True).m_as("g*mm")
    except BadInput:
        try:
            grams = quantity(amount_text, "mass", name, nonnegative=True).m_as("g")
        except BadInput:
            raise BadInput.about(name, f"{text!r} is not a residual; give an unbalance or a mass at the "
                                       "correction radius, optionally with its angle, e.g. '850 g*mm@120' or "
                                       "'2.8 g'") from None
        amount = grams * float(plane["radius_mm"])
    return amount, angle


def record_check(reg: Register, number: str, *, residuals=None, vibrations=None, by: str = "",
                 source: str = "command", conn=None) -> list[dict]:
    """Record check-run readings: ``residuals`` {plane: "850 g*mm@120"} (checked against the plane's
    limit) and ``vibrations`` {sensor: "1.2 mm/s@75"}. Returns the rows recorded."""
    from toolkit.register.schema import check_runs
    from toolkit.vectors import parse_reading

    residuals, vibrations = dict(residuals or {}), dict(vibrations or {})
    if not residuals and not vibrations:
        raise BadInput.about("residual/vibration", "give at least one measured residual (per plane) or vibration "
                             "(per sensor)")

    def run(c):
        job = _job_row(c, number)
        planes = {p["name"]: p for p in json.loads(job["workorder"])["planes"]}
        rows, when = [], now()
        for plane, text in residuals.items():
            if plane not in planes:
                raise BadInput.about("residual", f"plane {plane!r} is not in order {number}; planes: "
                                                 f"{', '.join(planes)}")
            amount, angle = (text if isinstance(text, tuple) else _residual(text, planes[plane], f"residual {plane}"))
            limit = float(planes[plane]["limit_g_mm"] if planes[plane].get("limit_g_mm") is not None
                          else planes[plane]["u_per_g_mm"])
            rows.append({"kind": "residual", "target": plane, "amount": float(amount), "unit": "g*mm",
                         "angle_deg": angle, "limit_amount": limit, "passed": int(amount <= limit * (1 + 1e-9))})
        for sensor, text in vibrations.items():
            sensor = _text(sensor, "vibration", 120).strip()
            if not sensor:
                raise BadInput.about("vibration", "the sensor needs a name")
            has_angle = "@" in str(text)
            z, _kind, unit = parse_reading(str(text) if has_angle else f"{text}@0", f"vibration {sensor}")
            from toolkit.vectors import polar

            amount, angle = polar(z)
            rows.append({"kind": "vibration", "target": sensor, "amount": amount, "unit": unit,
                         "angle_deg": angle if has_angle else None, "limit_amount": None, "passed": None})
        c.execute(check_runs.insert(), [{**r, "job_id": job["id"], "at": when, "by": _by(by), "source": source}
                                        for r in rows])
        return [{**r, "passed": None if r["passed"] is None else bool(r["passed"])} for r in rows]

    if conn is not None:
        return run(conn)
    with reg.write() as c:
        return run(c)


def record_signoff(reg: Register, number: str, role: str, name: str, *, signed: str = "", source: str = "command",
                   conn=None) -> dict:
    from toolkit.register.schema import signoffs

    role = str(role).strip().lower()
    if role not in ROLES:
        raise BadInput.about("role", f"{role!r} is not one of {', '.join(ROLES)}")
    name = _by(name, f"role {role}")
    if not name:
        raise BadInput.about(f"role {role}", "give the name of who signs")

    def run(c):
        job = _job_row(c, number)
        c.execute(signoffs.insert().values(job_id=job["id"], role=role, name=name, signed=_text(signed, "date", 60),
                                           at=now(), source=source))
        return {"role": role, "name": name, "signed": signed}

    if conn is not None:
        return run(conn)
    with reg.write() as c:
        return run(c)


def record_trim(reg: Register, number: str, kind: str, data: dict, *, by: str = "", source: str = "command",
                coefficients=None, parent_id: int | None = None) -> dict:
    """Record a trim run against job ``number`` as a new row (its step is one more than the job's last):
    ``kind`` coefficients or machine, ``data`` what was measured and worked out (JSON-able).

    With ``coefficients`` (the trim's updated :class:`~toolkit.coefficients.Coefficients`) the job's rotor
    type also gets them as a new coefficient set, in the same transaction: reason ``trim``, parent
    ``parent_id`` (the set the trim started from, a set of the same type, or None), provenance naming the
    job, the trim step and the readings. The trim row then keeps ``coefficient_set`` ({set, type, parent})
    in its data and the result has it too."""
    from sqlalchemy import func, select

    from toolkit.register.schema import coefficient_sets, rotor_types, trim_runs, type_versions

    if kind not in ("coefficients", "machine"):
        raise BadInput.about("kind", f"{kind!r} is not coefficients or machine")
    if coefficients is not None and kind != "coefficients":
        raise BadInput.about("coefficients", "a machine trim has no influence coefficients to store")
    with reg.write() as conn:
        job = _job_row(conn, number)
        if job["status"] == "released":
            raise BadInput(f"order {number}: released is final; a further correction is a new job")
        last = conn.execute(select(func.max(trim_runs.c.step)).where(trim_runs.c.job_id == job["id"])).scalar()
        step = int(last or 0) + 1
        when = now()
        stored = None
        if coefficients is not None:
            type_row = None if job["type_version_id"] is None else conn.execute(
                select(rotor_types.c.id, rotor_types.c.name).join(type_versions, type_versions.c.type_id
                                                                  == rotor_types.c.id)
                .where(type_versions.c.id == job["type_version_id"])).first()
            if type_row is None:
                raise BadInput.about("coefficients", f"order {number} has no rotor type to store them for")
            if parent_id is not None and conn.execute(select(coefficient_sets.c.type_id).where(
                    coefficient_sets.c.id == int(parent_id))).scalar() != type_row[0]:
                raise BadInput.about("parent_id", f"{parent_id!r} is not a coefficient set of rotor type "
                                                  f"{type_row[1]!r}")
            provenance = {"trim": {"job": number, "step": step, "source": source,
                                   **{k: list(data.get(k, [])) for k in ("before", "installed", "after")}}}
            set_id = _insert_set(conn, type_row[0], coefficients, provenance, "trim", parent_id, by, when)
            stored = {"set": set_id, "type": type_row[1], "parent": parent_id}
            data = {**data, "coefficient_set": stored}
        text = _text(json.dumps(data, ensure_ascii=False, separators=(",", ":")), "trim data", MAX_TEXT)
        conn.execute(trim_runs.insert().values(job_id=job["id"], step=step, kind=kind, data=text, at=when,
                                               by=_by(by), source=source))
    result = {"order_number": number, "step": step, "kind": kind, "at": when}
    return {**result, "coefficient_set": stored} if stored else result


def record_marks(conn, job, marks: dict[int, tuple[str, str]], source: str) -> list[dict]:
    """Record operation marks {operation number: (status, remark)} inside a write transaction."""
    from toolkit.register.schema import operation_marks

    when = now()
    rows = [{"job_id": job["id"], "operation": int(k), "status": s, "remark": _text(r, "remark"), "at": when,
             "source": source} for k, (s, r) in sorted(marks.items())]
    if rows:
        conn.execute(operation_marks.insert(), rows)
    return [{k: v for k, v in r.items() if k != "job_id"} for r in rows]


# -- influence coefficients -------------------------------------------------------------------------------

def _provenance(coefficients, provenance: dict | None) -> dict:
    return {"sensors": list(coefficients.sensors), "planes": list(coefficients.planes),
            "weight_angles": coefficients.weight_angles, "phase": coefficients.phase,
            "speed_rpm": coefficients.speed_rpm, "radius_mm": dict(coefficients.radius_mm),
            "measured": coefficients.saved, **(provenance or {})}


def _insert_set(conn, type_id: int, coefficients, provenance: dict | None, reason: str, parent_id, by: str,
                when: str) -> int:
    """A new coefficient set row inside a write transaction; its id."""
    from toolkit.register.schema import coefficient_sets

    prov = _provenance(coefficients, provenance)
    return int(conn.execute(coefficient_sets.insert().values(
        type_id=type_id, parent_id=parent_id, reason=reason,
        data=json.dumps(coefficients.to_dict(), ensure_ascii=False), speed_rpm=coefficients.speed_rpm,
        provenance=json.dumps(prov, ensure_ascii=False, default=str), created=when, created_by=_by(by))
        .returning(coefficient_sets.c.id)).scalar_one())


def store_coefficients(reg: Register, type_name: str, coefficients, *, provenance: dict | None = None,
                       reason: str = "measured", parent_id: int | None = None, by: str = "") -> dict:
    """Store a :class:`~toolkit.coefficients.Coefficients` set for a rotor type (a new row; the history
    keeps every earlier set)."""
    when = now()
    with reg.write() as conn:
        set_id = _insert_set(conn, _type_id(conn, type_name), coefficients, provenance, reason, parent_id, by,
                             when)
    return {"set": set_id, "type": _type_name(type_name), "reason": reason, "parent": parent_id,
            "created": when, "provenance": _provenance(coefficients, provenance)}


def coefficient_history(reg: Register, type_name: str) -> list[dict]:
    from sqlalchemy import select

    from toolkit.register.schema import coefficient_sets

    with reg.read() as conn:
        type_id = _type_id(conn, type_name)
        rows = conn.execute(select(coefficient_sets).where(coefficient_sets.c.type_id == type_id)
                            .order_by(coefficient_sets.c.id)).mappings().all()
    return [{"set": r["id"], "parent": r["parent_id"], "reason": r["reason"], "speed_rpm": r["speed_rpm"],
             "created": r["created"], "by": r["created_by"], "provenance": json.loads(r["provenance"]),
             "coefficients": json.loads(r["data"])["coefficients"]} for r in rows]


def _set_of_row(row):
    """The :class:`~toolkit.coefficients.Coefficients` of a coefficient set row, read by the one reader of
    the format (which checks every field)."""
    import tempfile

    from toolkit.coefficients import load_coefficients

    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "set.json"
        path.write_text(row["data"], encoding="utf-8")
        return load_coefficients(path)


def latest_coefficients(reg: Register, type_name: str):
    """The newest coefficient set of a rotor type: ``(set id, Coefficients, created)``."""
    from sqlalchemy import select

    from toolkit.register.schema import coefficient_sets

    with reg.read() as conn:
        type_id = _type_id(conn, type_name)
        row = conn.execute(select(coefficient_sets).where(coefficient_sets.c.type_id == type_id)
                           .order_by(coefficient_sets.c.id.desc()).limit(1)).mappings().first()
    if row is None:
        raise BadInput(f"rotor type {type_name!r} has no stored influence coefficients yet")
    return int(row["id"]), _set_of_row(row), row["created"]


def coefficient_set(reg: Register, set_id: int) -> dict:
    """One stored coefficient set by its number: ``{set, type, coefficients (Coefficients), parent,
    reason, created}``."""
    from sqlalchemy import select

    from toolkit.register.schema import coefficient_sets, rotor_types

    with reg.read() as conn:
        row = conn.execute(select(coefficient_sets, rotor_types.c.name.label("type_name"))
                           .join(rotor_types, rotor_types.c.id == coefficient_sets.c.type_id)
                           .where(coefficient_sets.c.id == int(set_id))).mappings().first()
    if row is None:
        raise BadInput.about("set_id", f"no coefficient set {set_id!r} in the register")
    return {"set": int(row["id"]), "type": row["type_name"], "coefficients": _set_of_row(row),
            "parent": row["parent_id"], "reason": row["reason"], "created": row["created"]}


def trim_coefficients(reg: Register, type_name: str, before, installed, after, *, by: str = "",
                      job: str = "") -> dict:
    """Update the newest set of a rotor type from a trim run (:func:`toolkit.coefficients.trim_update`)
    and store the result as a new set whose parent is the old one."""
    from toolkit.coefficients import trim_update

    set_id, coefficients, _created = latest_coefficients(reg, type_name)
    new = trim_update(coefficients, before, installed, after)
    return store_coefficients(reg, type_name, new, reason="trim", parent_id=set_id, by=by,
                              provenance={"trim": {"before": list(before), "installed": dict(installed),
                                                   "after": list(after), "job": job}})


def stale_warnings(created: str, set_speed_rpm, speed_rpm, stale_days: float = DEFAULT_STALE_DAYS,
                   today=None) -> list[str]:
    """Warnings when a stored coefficient set is older than ``stale_days`` or from another speed (more than
    2 % apart; common practice, no source).

    >>> stale_warnings("2026-01-01T00:00:00.000000Z", 1480.0, 1480.0, 180, "2026-12-01")[0][:46]
    'stored influence coefficients are 334 days old'
    >>> stale_warnings("2026-11-30T00:00:00.000000Z", 1480.0, 900.0, 180, "2026-12-01")[0][:57]
    'stored influence coefficients were measured at 1480 r/min'
    """
    import datetime as dt

    out = []
    day = dt.date.fromisoformat(str(today)) if today else dt.datetime.now(dt.timezone.utc).date()
    try:
        age = (day - dt.date.fromisoformat(created[:10])).days
    except ValueError:
        age = None
    if age is not None and age > stale_days:
        out.append(f"stored influence coefficients are {age} days old (older than the shop's {stale_days:g} days); "
                   "confirm them with a trim run or measure them again")
    if set_speed_rpm and speed_rpm and abs(set_speed_rpm - speed_rpm) > 0.02 * speed_rpm:
        out.append(f"stored influence coefficients were measured at {set_speed_rpm:g} r/min; this rotor is "
                   f"balanced at {speed_rpm:g} r/min: influence coefficients change with speed, measure them "
                   "again at this speed")
    return out
