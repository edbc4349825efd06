"""What the register gives back, as data: the balance certificate of a released job and series statistics
for a rotor type or a date range. The files made from them are drawn in the export layer
(:mod:`toolkit.export.certificate`, :mod:`toolkit.export.statistics`).

Statistics are SQL aggregates in the database (counts, means, a histogram by buckets, monthly trend), so
they stay fast on 100,000 jobs; only the scatter points of the as-found unbalance are fetched, the newest
:data:`SCATTER_POINTS` per plane.
"""

from __future__ import annotations

from toolkit.errors import BadInput
from toolkit.register import records as R
from toolkit.register.store import Register

__all__ = ["certificate_data", "series_statistics", "SCATTER_POINTS", "BINS"]

SCATTER_POINTS = 2000
BINS = 12


# -- certificate ------------------------------------------------------------------------------------------

def certificate_data(reg: Register, number: str) -> dict:
    """The data of a released job's balance certificate (what the PDF prints)."""
    from toolkit.formatting import Formatter
    from toolkit.workorder.model import default_paper, rule_words

    d = R.job_detail(reg, number)
    if d["status"] != "released":
        raise BadInput(f"order {d['order_number']} is {d['status']}; a certificate is issued for a released job only")
    wo = d["workorder"]
    fmt = Formatter(wo["units"], wo["angle_reference"], wo["angle_sense"])
    latest = {}
    for c in d["check_runs"]:
        latest[(c["kind"], c["target"])] = c
    planes = []
    for p in wo["planes"]:
        left = latest.get(("residual", p["name"]))
        limit = p["limit_g_mm"] if p.get("limit_g_mm") is not None else p["u_per_g_mm"]
        planes.append({
            "plane": p["name"], "allowance_g_mm": p["u_per_g_mm"], "limit_g_mm": limit,
            "as_found_g_mm": p["initial_g_mm"], "as_found_deg": p["initial_deg"],
            "as_left_g_mm": left["amount"] if left else None, "as_left_deg": left["angle_deg"] if left else None,
            "as_left_measured": left["at"] if left else None,
            "passed": bool(left["passed"]) if left else None,
            "shown": {"allowance": fmt.unbalance(p["u_per_g_mm"]), "limit": fmt.unbalance(limit),
                      "as_found": f"{fmt.unbalance(p['initial_g_mm'])} at {fmt.angle(p['initial_deg'])}",
                      "as_left": ("not measured" if not left else fmt.unbalance(left["amount"])
                                  + ("" if left["angle_deg"] is None else f" at {fmt.angle(left['angle_deg'])}"))},
        })
    vibration = [{"sensor": t, "amount": c["amount"], "unit": c["unit"], "angle_deg": c["angle_deg"]}
                 for (k, t), c in latest.items() if k == "vibration"]
    marks = {}
    for m in d["operation_marks"]:
        marks[m["operation"]] = m["status"]
    operations = [{"number": op["number"], "plane": op["plane"], "action": op["action"], "kind": op["kind"],
                   "description": op["description"], "mass_g": op["mass_g"], "angle_deg": op["angle_deg"],
                   "status": marks.get(op["number"], "not marked"),
                   "shown": f"{op['action']} {fmt.mass(op['mass_g'])} at {fmt.where(op['angle_deg'])}: "
                            f"{op['description']}"}
                  for p in wo["planes"] for op in p["operations"]]
    signs = {}
    for s in d["signoffs"]:
        signs[s["role"]] = s
    released = next((s for s in reversed(d["status_history"]) if s["status"] == "released"), None)
    rule = rule_words(p.get("rule", "") for p in wo["planes"])  # the order's own rule, as its exporters print it
    i = wo["ident"]
    return {
        "order_number": d["order_number"], "rotor": i["rotor"], "customer": i["customer"], "drawing": i["drawing"],
        "serial": i["serial"], "rotor_type": d["type"], "rotor_type_version": d["type_version"],
        "released": released["at"] if released else None, "released_by": released["by"] if released else "",
        "input_sha256": d["job_sha256"], "units": wo["units"],
        "paper": wo.get("paper") or default_paper(wo["units"]),
        "criterion": (f"balance quality grade {wo['grade']} (ISO 21940-11)" if wo["criterion"] == "iso"
                      else f"{wo['criterion'].upper()} criterion"),
        "rotor_mass": fmt.rotor_mass(wo["rotor_mass_kg"]), "service_speed_rpm": wo["service_speed_rpm"],
        "balancing_speed_rpm": wo["balancing_speed_rpm"],
        "u_per_total": fmt.unbalance(wo["u_per_total_g_mm"]), "u_per_total_g_mm": wo["u_per_total_g_mm"],
        "angle_convention": fmt.convention(), "acceptance_rule": rule, "planes": planes, "vibration": vibration,
        "operations": operations,
        "signoffs": [{"role": r, "name": signs[r]["name"], "signed": signs[r]["signed"] or signs[r]["at"][:10]}
                     for r in R.ROLES if r in signs],
        "passed": all(p["passed"] for p in planes if p["passed"] is not None) and any(
            p["passed"] is not None for p in planes),
        "note": "The rotor maker's acceptance rules, local codes and licensed practice take precedence over "
                "this certificate.",
    }


# -- statistics -------------------------------------------------------------------------------------------

def series_statistics(reg: Register, *, type_name=None, status=None, since=None, until=None) -> dict:
    """Series statistics of the selected jobs (see the module description)."""
    from sqlalchemy import Integer, case, cast, func, select

    from toolkit.register.schema import job_planes, job_status, jobs

    with reg.read() as conn:
        where = R.job_filter(conn, type_name=type_name, status=status, since=since, until=until)
        selected = select(jobs.c.id).where(*where).scalar_subquery() if where else None

        def only(query, column):
            return query.where(column.in_(selected)) if selected is not None else query

        by_status = dict(conn.execute(only(select(jobs.c.status, func.count()), jobs.c.id)
                                      .group_by(jobs.c.status)).all())
        total = sum(by_status.values())
        # jobs that were checked or sent to rework, and those sent to rework: one pass over the status index
        reworked_job = case((job_status.c.status == "rework", job_status.c.job_id))
        tried, reworked = conn.execute(only(select(func.count(func.distinct(job_status.c.job_id)),
                                                   func.count(func.distinct(reworked_job)))
                                            .where(job_status.c.status.in_(("checked", "rework"))),
                                            job_status.c.job_id)).one()
        per_plane = conn.execute(only(select(
            job_planes.c.plane, func.count(), func.avg(job_planes.c.initial_g_mm), func.min(job_planes.c.initial_g_mm),
            func.max(job_planes.c.initial_g_mm), func.avg(job_planes.c.initial_g_mm / job_planes.c.u_per_g_mm),
            func.avg(job_planes.c.operations), func.avg(job_planes.c.mass_g), func.max(job_planes.c.u_per_g_mm),
            func.sum(job_planes.c.operations)),
            job_planes.c.job_id).group_by(job_planes.c.plane).order_by(job_planes.c.plane)).all()
        ops_total = sum(int(row[-1] or 0) for row in per_plane)
        planes = []
        for name, n, mean, low, high, ratio, ops, mass, u_per, _ops in per_plane:
            width = (float(high) / BINS) if high else 1.0
            scaled = job_planes.c.initial_g_mm / width
            # truncation toward zero: CAST in SQLite; PostgreSQL's CAST rounds, so floor() there
            whole = cast(func.floor(scaled), Integer) if reg.dialect == "postgresql" else cast(scaled, Integer)
            bucket = case((whole >= BINS - 1, BINS - 1), else_=whole)
            counts = dict(conn.execute(only(select(bucket, func.count()).where(job_planes.c.plane == name),
                                            job_planes.c.job_id).group_by(bucket)).all())
            points = conn.execute(only(select(job_planes.c.initial_g_mm, job_planes.c.initial_deg)
                                       .where(job_planes.c.plane == name), job_planes.c.job_id)
                                  .order_by(job_planes.c.job_id.desc()).limit(SCATTER_POINTS)).all()
            planes.append({
                "plane": name, "jobs": int(n), "as_found_mean_g_mm": float(mean), "as_found_min_g_mm": float(low),
                "as_found_max_g_mm": float(high), "as_found_mean_per_allowance": float(ratio),
                "operations_per_rotor": float(ops), "correction_mass_mean_g": float(mass),
                "allowance_max_g_mm": float(u_per),
                "histogram": {"bin_width_g_mm": width,
                              "counts": [int(counts.get(k, 0)) for k in range(BINS)]},
                "scatter": [{"g_mm": float(a), "deg": float(d)} for a, d in points],
            })
        month = func.substr(job_planes.c.created, 1, 7)
        # the jobs of a month: each has exactly one plane numbered 1 (cheaper than counting distinct jobs)
        first_plane = func.sum(case((job_planes.c.idx == 1, 1), else_=0))
        trend_rows = conn.execute(only(select(month, first_plane, func.avg(job_planes.c.initial_g_mm)),
                                       job_planes.c.job_id).group_by(month).order_by(month)).all()
    tried, reworked = int(tried or 0), int(reworked or 0)
    return {
        "selection": {"type": type_name, "status": status, "since": since, "until": until},
        "jobs": total, "by_status": {s: int(by_status.get(s, 0)) for s in R.STATUSES},
        "checked_or_rework": tried,
        "first_pass_yield": (tried - reworked) / tried if tried else None,
        "rework_rate": reworked / tried if tried else None,
        "operations_per_rotor": float(ops_total) / total if total else None,
        "planes": planes,
        "trend": [{"month": m, "jobs": int(n), "as_found_mean_g_mm": float(a)} for m, n, a in trend_rows],
        "definitions": {
            "first_pass_yield": "jobs that reached checked without ever being sent to rework, over the jobs that "
                                "were checked or sent to rework",
            "rework_rate": "jobs sent to rework at least once, over the jobs that were checked or sent to rework",
            "scatter": f"the newest {SCATTER_POINTS} as-found unbalances per plane (heavy spot, g·mm at degrees)",
        },
    }
