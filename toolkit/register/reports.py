"""What the register gives back: the balance certificate of a released job (PDF and data) and series
statistics for a rotor type or a date range (data, PDF with vector graphics, xlsx).

Statistics are SQL aggregates in the database (counts, means, a histogram by buckets, monthly trend), so
they stay fast on 100,000 jobs; only the scatter points of the as-found unbalance are fetched, the newest
:data:`SCATTER_POINTS` per plane.
"""

from __future__ import annotations

import json
import math
from io import BytesIO

from toolkit.errors import BadInput
from toolkit.register import records as R
from toolkit.register.store import Register

__all__ = ["certificate_data", "certificate_pdf", "series_statistics", "stats_pdf", "stats_xlsx", "stats_text",
           "SCATTER_POINTS", "BINS"]

SCATTER_POINTS = 2000
BINS = 12


# -- certificate ------------------------------------------------------------------------------------------

def certificate_data(reg: Register, number: str) -> dict:
    """The data of a released job's balance certificate (what the PDF prints)."""
    from toolkit.workorder.model import Formatter

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
    rule = next((p["notes"][0] for p in wo["planes"] if p.get("notes")), "pass when residual <= allowance")
    i = wo["ident"]
    return {
        "order_number": d["order_number"], "rotor": i["rotor"], "customer": i["customer"], "drawing": i["drawing"],
        "serial": i["serial"], "rotor_type": d["type"], "rotor_type_version": d["type_version"],
        "released": released["at"] if released else None, "released_by": released["by"] if released else "",
        "input_sha256": d["job_sha256"], "units": wo["units"],
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


def _latin(text) -> str:
    return str(text).replace("·", "\xb7").replace("≤", "<=").replace("Ø", "\xd8").replace("—", "-") \
        .encode("latin-1", "replace").decode("latin-1")


class _Page:
    """A small page writer on a reportlab canvas (A4 portrait)."""

    def __init__(self, title: str, subtitle: str):
        from reportlab.lib.pagesizes import A4
        from reportlab.pdfgen import canvas

        self.buffer = BytesIO()
        self.c = canvas.Canvas(self.buffer, pagesize=A4, pageCompression=1)
        self.c.setTitle(_latin(title))
        self.w, self.h = A4
        self.m = 42
        self.title, self.subtitle = title, subtitle
        self.page = 1
        self._head()

    def _head(self):
        c = self.c
        c.setFillColorRGB(0.16, 0.30, 0.36)
        c.rect(0, self.h - 64, self.w, 64, stroke=0, fill=1)
        c.setFillColorRGB(1, 1, 1)
        c.setFont("Helvetica-Bold", 17)
        c.drawString(self.m, self.h - 36, _latin(self.title))
        c.setFont("Helvetica", 9)
        c.drawString(self.m, self.h - 52, _latin(self.subtitle))
        c.setFillColorRGB(0, 0, 0)
        c.setFont("Helvetica", 7.5)
        c.drawRightString(self.w - self.m, 22, f"page {self.page}")
        self.y = self.h - 86

    def need(self, height: float):
        if self.y - height < 40:
            self.c.showPage()
            self.page += 1
            self._head()

    def heading(self, text: str):
        self.need(30)
        self.y -= 6
        self.c.setFont("Helvetica-Bold", 11)
        self.c.setFillColorRGB(0.16, 0.30, 0.36)
        self.c.drawString(self.m, self.y, _latin(text))
        self.c.setFillColorRGB(0, 0, 0)
        self.c.setLineWidth(0.6)
        self.c.line(self.m, self.y - 3, self.w - self.m, self.y - 3)
        self.y -= 16

    def line(self, text: str, size: float = 9, bold: bool = False, indent: float = 0):
        from reportlab.lib.utils import simpleSplit

        font = "Helvetica-Bold" if bold else "Helvetica"
        for part in simpleSplit(_latin(text), font, size, self.w - 2 * self.m - indent) or [""]:
            self.need(size + 4)
            self.c.setFont(font, size)
            self.c.drawString(self.m + indent, self.y, part)
            self.y -= size + 3

    def table(self, headers, rows, widths):
        total = self.w - 2 * self.m
        xs = [self.m]
        for wdt in widths[:-1]:
            xs.append(xs[-1] + wdt * total)
        self.need(30)
        self.c.setFont("Helvetica-Bold", 8.5)
        for x, h in zip(xs, headers):
            self.c.drawString(x + 2, self.y, _latin(h))
        self.y -= 4
        self.c.line(self.m, self.y, self.m + total, self.y)
        self.y -= 10
        self.c.setFont("Helvetica", 8.5)
        from reportlab.lib.utils import simpleSplit

        for row in rows:
            cells = [simpleSplit(_latin(v), "Helvetica", 8.5, wdt * total - 4) or [""] for v, wdt in zip(row, widths)]
            height = max(len(c) for c in cells) * 11
            self.need(height + 2)
            for x, lines in zip(xs, cells):
                for k, text in enumerate(lines):
                    self.c.setFont("Helvetica", 8.5)
                    self.c.drawString(x + 2, self.y - k * 11, text)
            self.y -= height + 1

    def finish(self) -> bytes:
        self.c.showPage()
        self.c.save()
        return self.buffer.getvalue()


def certificate_pdf(data: dict) -> bytes:
    """The balance certificate as PDF bytes (layout our own)."""
    page = _Page("BALANCE CERTIFICATE", f"Order {data['order_number']}  -  released {str(data['released'])[:10]}")
    page.heading("Rotor and order")
    for label, value in (("Order number", data["order_number"]), ("Rotor", data["rotor"]),
                         ("Customer", data["customer"]), ("Drawing", data["drawing"]), ("Serial number", data["serial"]),
                         ("Rotor type", f"{data['rotor_type']} (version {data['rotor_type_version']})"
                          if data["rotor_type"] else "-"),
                         ("Rotor mass", data["rotor_mass"]), ("Job text SHA-256", data["input_sha256"]),
                         ("Speeds", f"service (max.) {data['service_speed_rpm']:g} r/min, balanced at "
                                    f"{data['balancing_speed_rpm']:g} r/min")):
        page.line(f"{label}: {value or '-'}")
    page.heading("Criterion and result per correction plane")
    page.line(f"{data['criterion']}; permissible residual unbalance of the whole rotor {data['u_per_total']}.")
    page.line(data["angle_convention"], 8)
    page.table(["Plane", "Allowance", "Acceptance limit", "As found", "As left (measured)", "Result"],
               [[p["plane"], p["shown"]["allowance"], p["shown"]["limit"], p["shown"]["as_found"],
                 p["shown"]["as_left"], "-" if p["passed"] is None else ("PASS" if p["passed"] else "FAIL")]
                for p in data["planes"]], [0.12, 0.15, 0.16, 0.22, 0.23, 0.12])
    for v in data["vibration"]:
        page.line(f"Vibration at {v['sensor']}: {v['amount']:.3g} {v['unit']}"
                  + ("" if v["angle_deg"] is None else f" at {v['angle_deg']:.0f}°"))
    page.line(f"Acceptance rule: {data['acceptance_rule']}.", 8.5)
    page.heading("Operations carried out")
    if data["operations"]:
        page.table(["No.", "Plane", "Operation", "Mark"],
                   [[str(o["number"]), o["plane"], o["shown"], o["status"]] for o in data["operations"]],
                   [0.07, 0.13, 0.62, 0.18])
    else:
        page.line("None: the rotor was within its allowance as found.")
    page.heading("Sign-offs")
    for s in data["signoffs"]:
        page.line(f"{s['role'].capitalize()}: {s['name']}  ({s['signed']})")
    page.heading("Notes")
    page.line(data["note"], 8.5)
    page.line("Counterpoise shop register; this certificate reproduces the recorded entries of the order.", 7.5)
    return page.finish()


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


def _pct(x) -> str:
    return "-" if x is None else f"{100 * x:.1f} %"


def stats_text(s: dict) -> str:
    sel = ", ".join(f"{k} {v}" for k, v in s["selection"].items() if v) or "all jobs"
    lines = [f"Series statistics ({sel}): {s['jobs']} job(s)",
             "  by status: " + ", ".join(f"{k} {v}" for k, v in s["by_status"].items()),
             f"  first-pass yield {_pct(s['first_pass_yield'])}, rework rate {_pct(s['rework_rate'])} "
             f"(of {s['checked_or_rework']} checked or reworked)",
             f"  operations per rotor {s['operations_per_rotor']:.2f}" if s["operations_per_rotor"] is not None
             else "  operations per rotor -"]
    for p in s["planes"]:
        lines.append(f"  plane {p['plane']}: as found mean {p['as_found_mean_g_mm']:.0f} g·mm (min "
                     f"{p['as_found_min_g_mm']:.0f}, max {p['as_found_max_g_mm']:.0f}), "
                     f"{p['as_found_mean_per_allowance']:.2f} x allowance; correction mass mean "
                     f"{p['correction_mass_mean_g']:.1f} g")
    lines += [f"  {t['month']}: {t['jobs']} job(s), as found mean {t['as_found_mean_g_mm']:.0f} g·mm"
              for t in s["trend"]]
    return "\n".join(lines)


def _polar(c, cx: float, cy: float, radius: float, plane: dict) -> None:
    """As-found heavy spots on a polar plot: 0° at the top, angles counted clockwise on paper."""
    c.setLineWidth(0.4)
    c.setStrokeColorRGB(0.6, 0.6, 0.6)
    for k in (1, 2, 3, 4):
        c.circle(cx, cy, radius * k / 4, stroke=1, fill=0)
    for deg in range(0, 360, 30):
        a = math.radians(deg)
        c.line(cx, cy, cx + radius * math.sin(a), cy + radius * math.cos(a))
    c.setFont("Helvetica", 6.5)
    c.setFillColorRGB(0.3, 0.3, 0.3)
    for deg in range(0, 360, 90):
        a = math.radians(deg)
        c.drawCentredString(cx + (radius + 8) * math.sin(a), cy + (radius + 8) * math.cos(a) - 2, f"{deg}°")
    top = max((p["g_mm"] for p in plane["scatter"]), default=0) or 1.0
    c.drawString(cx + 3, cy + radius + 2, f"{top:.0f} g\xb7mm")
    c.setFillColorRGB(0.70, 0.18, 0.13)
    for p in plane["scatter"]:
        a, r = math.radians(p["deg"]), radius * p["g_mm"] / top
        c.circle(cx + r * math.sin(a), cy + r * math.cos(a), 1.3, stroke=0, fill=1)
    c.setFillColorRGB(0, 0, 0)


def _histogram(c, x: float, y: float, w: float, h: float, plane: dict) -> None:
    counts = plane["histogram"]["counts"]
    width = plane["histogram"]["bin_width_g_mm"]
    top = max(counts) or 1
    c.setLineWidth(0.5)
    c.setStrokeColorRGB(0, 0, 0)
    c.line(x, y, x + w, y)
    c.line(x, y, x, y + h)
    bar = w / len(counts)
    c.setFillColorRGB(0.16, 0.30, 0.36)
    for k, n in enumerate(counts):
        c.rect(x + k * bar + 1, y, bar - 2, h * n / top, stroke=0, fill=1)
    c.setFillColorRGB(0, 0, 0)
    c.setFont("Helvetica", 6.5)
    c.drawString(x, y - 9, "0")
    c.drawRightString(x + w, y - 9, f"{width * len(counts):.0f} g\xb7mm")
    c.drawString(x + 2, y + h + 2, f"max {top} rotors per bin")


def stats_pdf(s: dict) -> bytes:
    """The statistics as PDF: figures per plane (polar scatter and histogram, vector graphics), the trend."""
    sel = ", ".join(f"{k} {v}" for k, v in s["selection"].items() if v) or "all jobs"
    page = _Page("SERIES STATISTICS", f"{sel}  -  {s['jobs']} job(s)")
    page.heading("Summary")
    for line in stats_text(s).splitlines()[1:4]:
        page.line(line.strip())
    for key in ("first_pass_yield", "rework_rate"):
        page.line(f"{key.replace('_', ' ')}: {s['definitions'][key]}", 7.5)
    for plane in s["planes"]:
        page.heading(f"Plane {plane['plane']}: as-found unbalance (heavy spot)")
        page.line(f"{plane['jobs']} rotor(s); mean {plane['as_found_mean_g_mm']:.0f} g\xb7mm; "
                  f"{plane['as_found_mean_per_allowance']:.2f} x allowance on average; "
                  f"{plane['operations_per_rotor']:.2f} operation(s) and {plane['correction_mass_mean_g']:.1f} g "
                  "correction mass per rotor.", 8.5)
        page.need(190)
        _polar(page.c, page.m + 90, page.y - 90, 75, plane)
        _histogram(page.c, page.m + 230, page.y - 165, page.w - 2 * page.m - 240, 140, plane)
        page.y -= 190
        page.line(f"Scatter: {s['definitions']['scatter']}; angles from the reference mark at the top, drawn "
                  "clockwise on the page in each job's own angle sense.", 7)
    page.heading("Trend by month")
    page.table(["Month", "Jobs", "As found, mean of all planes [g\xb7mm]"],
               [[t["month"], str(t["jobs"]), f"{t['as_found_mean_g_mm']:.0f}"] for t in s["trend"]],
               [0.2, 0.2, 0.6])
    return page.finish()


def stats_xlsx(s: dict) -> bytes:
    """The statistics as a workbook: Summary, Planes, Histogram, Trend, Scatter sheets."""
    from openpyxl import Workbook

    from toolkit.export.xlsx import safe_text

    wb = Workbook()
    ws = wb.active
    ws.title = "Summary"

    def put(sheet, row):
        sheet.append([None] * len(row))
        r = sheet.max_row
        for k, v in enumerate(row, start=1):
            cell = sheet.cell(row=r, column=k)
            if isinstance(v, str):
                safe_text(cell, v)
            else:
                cell.value = v

    put(ws, ["Selection", json.dumps({k: v for k, v in s["selection"].items() if v}) or "all jobs"])
    put(ws, ["Jobs", s["jobs"]])
    for k, v in s["by_status"].items():
        put(ws, [f"status {k}", v])
    put(ws, ["First-pass yield", s["first_pass_yield"]])
    put(ws, ["Rework rate", s["rework_rate"]])
    put(ws, ["Operations per rotor", s["operations_per_rotor"]])
    planes = wb.create_sheet("Planes")
    put(planes, ["Plane", "Jobs", "As found mean [g·mm]", "Min [g·mm]", "Max [g·mm]", "Mean / allowance",
                 "Operations per rotor", "Correction mass mean [g]"])
    hist = wb.create_sheet("Histogram")
    put(hist, ["Plane", "From [g·mm]", "To [g·mm]", "Rotors"])
    scatter = wb.create_sheet("Scatter")
    put(scatter, ["Plane", "As found [g·mm]", "Heavy spot [°]"])
    for p in s["planes"]:
        put(planes, [p["plane"], p["jobs"], p["as_found_mean_g_mm"], p["as_found_min_g_mm"], p["as_found_max_g_mm"],
                     p["as_found_mean_per_allowance"], p["operations_per_rotor"], p["correction_mass_mean_g"]])
        w = p["histogram"]["bin_width_g_mm"]
        for k, n in enumerate(p["histogram"]["counts"]):
            put(hist, [p["plane"], k * w, (k + 1) * w, n])
        for pt in p["scatter"]:
            put(scatter, [p["plane"], pt["g_mm"], pt["deg"]])
    trend = wb.create_sheet("Trend")
    put(trend, ["Month", "Jobs", "As found mean [g·mm]"])
    for t in s["trend"]:
        put(trend, [t["month"], t["jobs"], t["as_found_mean_g_mm"]])
    buffer = BytesIO()
    wb.save(buffer)
    return buffer.getvalue()
