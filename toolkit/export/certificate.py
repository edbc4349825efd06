"""The balance certificate of a released job as PDF, from :func:`toolkit.register.reports.certificate_data`
(layout our own; the work orders' embedded fonts, on the order's paper)."""

from __future__ import annotations

from toolkit.export import pdfpage
from toolkit.export.reportpage import ReportPage

__all__ = ["certificate_pdf"]


def certificate_pdf(data: dict) -> bytes:
    """The balance certificate as PDF bytes."""
    with pdfpage.binary_streams():
        page = ReportPage("BALANCE CERTIFICATE", f"Order {data['order_number']}  -  released "
                          f"{str(data['released'])[:10]}", data.get("paper") or "A4")
        _order(page, data)
        _result(page, data)
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


def _order(page: ReportPage, data: dict) -> None:
    page.heading("Rotor and order")
    for label, value in (("Order number", data["order_number"]), ("Rotor", data["rotor"]),
                         ("Customer", data["customer"]), ("Drawing", data["drawing"]), ("Serial number", data["serial"]),
                         ("Rotor type", f"{data['rotor_type']} (version {data['rotor_type_version']})"
                          if data["rotor_type"] else "-"),
                         ("Rotor mass", data["rotor_mass"]), ("Job text SHA-256", data["input_sha256"]),
                         ("Speeds", f"service (max.) {data['service_speed_rpm']:g} r/min, balanced at "
                                    f"{data['balancing_speed_rpm']:g} r/min")):
        page.line(f"{label}: {value or '-'}")


def _result(page: ReportPage, data: dict) -> None:
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
