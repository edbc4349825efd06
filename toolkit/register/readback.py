"""Reading back a returned work-order workbook: the operator's measured residuals, the operations' status
column and the sign-off names go into the register.

The workbook names its cells (see :func:`toolkit.export.xlsx.workbook`): ``cp_order_number`` and
``cp_input_sha256`` identify the job; ``measured_N`` / ``cp_measured_angle_N`` hold plane N's measured
residual, ``cp_status_K`` / ``cp_remark_K`` operation K's mark, ``cp_signoff_ROLE_name`` / ``_date`` the
sign-offs. A workbook whose order number is not in the register, or whose input hash differs from the
recorded job's, is refused with the reason and nothing is recorded.

Re-reading the same workbook records nothing twice: a value is recorded when it differs from the latest
one recorded (a changed value is a new entry; the old one stays). Then the status follows: every operation
marked done or skipped moves a planned job to balanced; a measured residual for every plane moves a
balanced job to checked (all within their limits) or to rework (any above). Release stays a decision of
its own (it needs the inspector's sign-off).
"""

from __future__ import annotations

import datetime as _dt
import json
import math
from pathlib import Path

from toolkit.errors import BadInput
from toolkit.register import records as R
from toolkit.register.store import Register

__all__ = ["read_workbook", "record_workbook"]

MAX_BYTES = 20_000_000


def _cell(wb, name: str):
    defined = wb.defined_names.get(name)
    if defined is None:
        return None
    for sheet, coord in defined.destinations:
        if sheet in wb.sheetnames:
            return wb[sheet][coord.replace("$", "")].value
    return None


def _number(value, cell: str) -> float | None:
    """The number of a ``cell`` ("wb.xlsx, measured residual of plane 1"); its errors are about ``path``, the
    workbook given."""
    if value is None or (isinstance(value, str) and not value.strip()):
        return None
    if isinstance(value, bool):
        raise BadInput.about("path", f"{cell}: {value!r} is not a number")
    try:
        x = float(str(value).replace(",", ".").strip()) if isinstance(value, str) else float(value)
    except (TypeError, ValueError):
        raise BadInput.about("path", f"{cell}: {value!r} is not a number") from None
    if not math.isfinite(x) or x < 0:
        raise BadInput.about("path", f"{cell}: {value!r} is not a measured amount (a number 0 or more)")
    return x


def _text(value) -> str:
    if value is None:
        return ""
    if isinstance(value, (_dt.datetime, _dt.date)):
        return value.isoformat()
    return " ".join(str(value).split())


def read_workbook(path) -> dict:
    """The register's cells of a returned work-order workbook, as found (numbers in the workbook's units)."""
    from zipfile import BadZipFile

    from openpyxl import load_workbook

    from toolkit.export.xlsx import SIGNOFF_ROLES

    p = Path(path)
    try:
        size = p.stat().st_size
    except OSError as exc:
        raise BadInput.about("path", f"{p} cannot be read ({exc.strerror})") from None
    if size > MAX_BYTES:
        raise BadInput.about("path", f"{p} is larger than {MAX_BYTES // 1_000_000} MB; not a returned work "
                                     "order")
    try:
        wb = load_workbook(p, data_only=True)
    except (BadZipFile, KeyError, ValueError, OSError) as exc:
        raise BadInput.about("path", f"{p} is not an .xlsx workbook "
                                     f"({' '.join(str(exc).split())[:120]})") from None
    number = _cell(wb, "cp_order_number")
    if number is None or not _text(number):
        raise BadInput.about("path", f"{p} is not a Counterpoise work-order workbook (it names no order number "
                                     "cell cp_order_number)")
    out = {"order_number": _text(number), "input_sha256": _text(_cell(wb, "cp_input_sha256")),
           "measured": {}, "operations": {}, "signoffs": {}}
    n = 1
    while wb.defined_names.get(f"measured_{n}") is not None:
        out["measured"][n] = (_number(_cell(wb, f"measured_{n}"), f"{p}, measured residual of plane {n}"),
                              _number(_cell(wb, f"cp_measured_angle_{n}"), f"{p}, angle of plane {n}"))
        n += 1
    for name in list(wb.defined_names):
        if name.startswith("cp_status_"):
            k = int(name.rsplit("_", 1)[1])
            out["operations"][k] = (_text(_cell(wb, name)).lower(), _text(_cell(wb, f"cp_remark_{k}")))
    for role in SIGNOFF_ROLES:
        out["signoffs"][role] = (_text(_cell(wb, f"cp_signoff_{role}_name")),
                                 _text(_cell(wb, f"cp_signoff_{role}_date")))
    wb.close()
    return out


def record_workbook(reg: Register, path, *, number: str | None = None, by: str = "") -> dict:
    """Record what a returned workbook says (see the module description); returns what was recorded and
    the job's status."""
    from sqlalchemy import select

    from toolkit.register.schema import operation_marks, signoffs
    from toolkit.workorder.model import unit_labels
    from toolkit.export.xlsx import STATUS_CHOICES

    found = read_workbook(path)
    source = f"workbook {Path(path).name}"
    with reg.write() as conn:
        if number is not None and str(number) != found["order_number"]:
            raise BadInput.about("path", f"{path} is for order {found['order_number']!r}, not {number!r}; "
                                         "nothing was recorded")
        try:
            job = R._job_row(conn, found["order_number"])
        except BadInput:
            raise BadInput.about("path", f"{path} is of order {found['order_number']!r}, which is not in the "
                                         "register; nothing was recorded") from None
        if found["input_sha256"] != job["job_sha256"]:
            shown = found["input_sha256"][:12] or "none"
            raise BadInput.about("path", f"{path}: the workbook's input hash ({shown}...) does not match order "
                                         f"{job['order_number']} ({job['job_sha256'][:12]}...): it was made from "
                                         "another job text; nothing was recorded")
        workorder = json.loads(job["workorder"])
        factor = unit_labels(workorder.get("units", "metric"))["unbalance"][1]
        planes = workorder["planes"]
        latest = R._latest_checks(conn, job["id"])
        residuals = {}
        for n, (amount, angle) in sorted(found["measured"].items()):
            if amount is None or n > len(planes):
                continue
            name = planes[n - 1]["name"]
            g_mm = amount / factor
            old = latest.get(("residual", name))
            if old and math.isclose(old["amount"], g_mm, rel_tol=1e-9, abs_tol=1e-9) and old["angle_deg"] == angle:
                continue
            residuals[name] = (g_mm, angle)
        checks = R.record_check(reg, job["order_number"], residuals=residuals, by=by, source=source,
                                conn=conn) if residuals else []
        marks_now = {}
        for r in conn.execute(select(operation_marks).where(operation_marks.c.job_id == job["id"])
                              .order_by(operation_marks.c.id)).mappings():
            marks_now[r["operation"]] = (r["status"], r["remark"])
        marks = {}
        for k, (status, remark) in found["operations"].items():
            if status and status not in STATUS_CHOICES:
                raise BadInput.about("path", f"{path}, operation {k}: status {status!r} is not one of "
                                             f"{', '.join(STATUS_CHOICES)}")
            status = status or "open"
            if marks_now.get(k, ("open", "")) != (status, remark):
                marks[k] = (status, remark)
        recorded_marks = R.record_marks(conn, job, marks, source)
        signed_now = {}
        for r in conn.execute(select(signoffs).where(signoffs.c.job_id == job["id"]).order_by(signoffs.c.id)).mappings():
            signed_now[r["role"]] = (r["name"], r["signed"])
        signs = []
        for role, (name, date) in found["signoffs"].items():
            if name and signed_now.get(role) != (name, date):
                signs.append(R.record_signoff(reg, job["order_number"], role, name, signed=date, source=source,
                                              conn=conn))
        # the status that follows from what is now recorded
        status = job["status"]
        all_marks = {**marks_now, **marks}
        ops = [op["number"] for p in planes for op in p["operations"]]
        moved = []
        if status in ("planned", "rework") and all(all_marks.get(k, ("open", ""))[0] in ("done", "skipped") for k in ops) \
                and (ops or found["measured"]):
            if status == "planned" or marks:
                R._set_status(conn, job, "balanced", by, source)
                status = "balanced"
                moved.append(status)
        if status == "balanced":
            latest = R._latest_checks(conn, job["id"])
            measured = [latest.get(("residual", p["name"])) for p in planes]
            if all(measured):
                new = "checked" if all(m["passed"] for m in measured) else "rework"
                R._set_status(conn, {**job, "status": status}, new, by, source)
                status = new
                moved.append(status)
    return {"order_number": job["order_number"], "check_runs": checks, "operation_marks": recorded_marks,
            "signoffs": signs, "status": status, "status_changes": moved}
