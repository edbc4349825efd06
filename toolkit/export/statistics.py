"""The register's series statistics as files, from :func:`toolkit.register.reports.series_statistics`: a
few lines of text (the terminal), a PDF with vector figures per plane (polar scatter of the as-found heavy
spots, histogram) and the monthly trend, and a workbook (Summary, Planes, Histogram, Scatter, Trend)."""

from __future__ import annotations

import json
import math
from io import BytesIO

from toolkit.export import pdfpage
from toolkit.export.reportpage import BAND, INK, ReportPage

__all__ = ["stats_text", "stats_pdf", "stats_xlsx"]


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
    c.setFillColorRGB(0.3, 0.3, 0.3)
    for deg in range(0, 360, 90):
        a = math.radians(deg)
        pdfpage.draw(c, cx + (radius + 8) * math.sin(a), cy + (radius + 8) * math.cos(a) - 2, f"{deg}°",
                     "regular", 6.5, "centre")
    top = max((p["g_mm"] for p in plane["scatter"]), default=0) or 1.0
    pdfpage.draw(c, cx + 3, cy + radius + 2, f"{top:.0f} g·mm", "regular", 6.5)
    c.setFillColorRGB(0.70, 0.18, 0.13)
    for p in plane["scatter"]:
        a, r = math.radians(p["deg"]), radius * p["g_mm"] / top
        c.circle(cx + r * math.sin(a), cy + r * math.cos(a), 1.3, stroke=0, fill=1)
    c.setFillColorRGB(*INK)


def _histogram(c, x: float, y: float, w: float, h: float, plane: dict) -> None:
    counts = plane["histogram"]["counts"]
    width = plane["histogram"]["bin_width_g_mm"]
    top = max(counts) or 1
    c.setLineWidth(0.5)
    c.setStrokeColorRGB(*INK)
    c.line(x, y, x + w, y)
    c.line(x, y, x, y + h)
    bar = w / len(counts)
    c.setFillColorRGB(*BAND)
    for k, n in enumerate(counts):
        c.rect(x + k * bar + 1, y, bar - 2, h * n / top, stroke=0, fill=1)
    c.setFillColorRGB(*INK)
    pdfpage.draw(c, x, y - 9, "0", "regular", 6.5)
    pdfpage.draw(c, x + w, y - 9, f"{width * len(counts):.0f} g·mm", "regular", 6.5, "right")
    pdfpage.draw(c, x + 2, y + h + 2, f"max {top} rotors per bin", "regular", 6.5)


def stats_pdf(s: dict) -> bytes:
    """The statistics as PDF: figures per plane (polar scatter and histogram, vector graphics), the trend."""
    with pdfpage.binary_streams():
        return _stats_pages(s)


def _stats_pages(s: dict) -> bytes:
    sel = ", ".join(f"{k} {v}" for k, v in s["selection"].items() if v) or "all jobs"
    page = ReportPage("SERIES STATISTICS", f"{sel}  -  {s['jobs']} job(s)")
    page.heading("Summary")
    for line in stats_text(s).splitlines()[1:4]:
        page.line(line.strip())
    for key in ("first_pass_yield", "rework_rate"):
        page.line(f"{key.replace('_', ' ')}: {s['definitions'][key]}", 7.5)
    for plane in s["planes"]:
        page.heading(f"Plane {plane['plane']}: as-found unbalance (heavy spot)")
        page.line(f"{plane['jobs']} rotor(s); mean {plane['as_found_mean_g_mm']:.0f} g·mm; "
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
    page.table(["Month", "Jobs", "As found, mean of all planes [g·mm]"],
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
