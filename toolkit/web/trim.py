"""The trim run of the guided balancing run: a job that was corrected is corrected once more, from a run
after the correction, and the trim is recorded against the same job (a new row each time, never over an
earlier one).

A job solved from trial-mass runs has influence coefficients: the first trim starts from them, the
readings of the original run and the correction installed (the planned operations); the coefficients are
updated from what the installed correction did (:func:`toolkit.coefficients.trim_correction`) and solve
the readings after it. A later trim starts from the previous trim's updated coefficients, its readings and
its correction. A job of balancing-machine readings has no coefficients (the machine measures per plane):
its trim is the job worked again by the same chain with the readings after the correction.
"""

from __future__ import annotations

import re
import tomllib

__all__ = ["TRIM_FIELDS", "basis", "compute"]

#: (name, label, help) of the trim form's fields; each is one entry per line.
TRIM_FIELDS = (
    ("before", "readings before the installed correction",
     "one per sensor, as the instrument shows them, e.g. 4.20 mm/s@285"),
    ("installed", "correction installed",
     "PLANE=MASS@ANGLE, one per line, the mass added at the angle (a removal: the mass at the angle + 180°); "
     "include a trial mass left on"),
    ("after", "readings after the correction",
     "one per sensor, as the instrument shows them, e.g. 0.8 mm/s@120"),)


def _lines(text) -> list[str]:
    return [line.strip() for line in str(text or "").splitlines() if line.strip()]


def _coefficients_data(c) -> dict:
    return {"sensors": list(c.sensors), "planes": list(c.planes), "weight_angles": c.weight_angles,
            "phase": c.phase, "reading_unit": c.reading_unit, "reading_kind": c.reading_kind,
            "speed_rpm": c.speed_rpm, "radius_mm": [list(x) for x in c.radius_mm], "saved": c.saved, "note": c.note,
            "matrix": [[[z.real, z.imag] for z in row] for row in c.matrix]}


def _coefficients(d: dict):
    from toolkit.coefficients import Coefficients

    return Coefficients(sensors=tuple(d["sensors"]), planes=tuple(d["planes"]),
                        matrix=tuple(tuple(complex(re, im) for re, im in row) for row in d["matrix"]),
                        weight_angles=d["weight_angles"], phase=d["phase"], reading_unit=d["reading_unit"],
                        reading_kind=d["reading_kind"], speed_rpm=d["speed_rpm"],
                        radius_mm=tuple((str(n), float(r)) for n, r in d["radius_mm"]), saved=d["saved"],
                        note=d["note"])


def _vec(amount: float, angle: float, unit: str) -> str:
    from toolkit.units import format_number

    return f"{format_number(amount)} {unit}@{angle % 360.0:.1f}"


def _job(detail: dict):
    from toolkit.workorder.job import parse_job

    return parse_job(detail["job_text"], f"job {detail['order_number']}")


def basis(detail: dict) -> dict:
    """What a new trim of the job ``detail`` (:func:`toolkit.register.records.job_detail`) starts from:
    ``kind`` (coefficients or machine), the sensor or plane names, the prefilled fields, the coefficients
    (their data) for a trial-run job, and the step number. A job whose inputs can no longer be read (a
    coefficients file that is gone) raises :class:`~toolkit.errors.BadInput`."""
    import cmath

    wo = detail["workorder"]
    trims = detail.get("trims") or []
    planes = [p["name"] for p in wo["planes"]]
    step = len(trims) + 1
    kind = "coefficients" if (wo.get("field_record") or {}) else "machine"
    if kind == "machine":
        last = trims[-1]["data"] if trims else None
        before = last["after"] if last else [f"{p['name']}={_vec(p['initial_g_mm'], p['initial_deg'], 'g·mm')}"
                                             for p in wo["planes"]]
        return {"kind": kind, "step": step, "names": planes, "values": {"before": "\n".join(before),
                "installed": "", "after": ""}, "coefficients": None}
    if trims:
        last = trims[-1]["data"]
        coefficients = last["updated_coefficients"]
        before, installed = last["after"], last["trim_installed"]
    else:
        from toolkit.coefficients import coefficients_from
        from toolkit.influence import Settings, solve_runs
        from toolkit.runs import runs_from_dict

        job = _job(detail)
        m = job.measurement
        left_on: dict = {}
        if m.kind == "coefficients":  # a job solved from a stored coefficients file: those, and its original run
            from toolkit.coefficients import load_coefficients

            coefficients = _coefficients_data(load_coefficients(m.coefficients))
            before = list(m.original)
        else:
            runset = runs_from_dict(dict(m.runs), f"job {detail['order_number']} [measurement]")
            solution = solve_runs(runset, settings=Settings(**m.thresholds))
            coefficients = _coefficients_data(coefficients_from(solution, note=f"job {detail['order_number']}"))
            before = list(m.raw["run"][0]["readings"])
            if runset.trials_left_on and runset.runs:  # the last run's trial masses stay on: installed too
                left_on = dict(runset.runs[-1].trials)
        installed = []
        for p in wo["planes"]:  # the planned operations' effect, as a mass at the plane's correction radius
            z = sum((cmath.rect(op["unbalance_g_mm"] * (1 if op["action"] == "add" else -1),
                                cmath.pi * op["angle_deg"] / 180.0) for op in p["operations"]), 0j)
            z += left_on.get(p["name"], 0j) * float(p["radius_mm"])
            if abs(z) > 0:
                grams, angle = abs(z) / float(p["radius_mm"]), cmath.phase(z) * 180.0 / cmath.pi
                installed.append(f"{p['name']}={_vec(grams, angle, 'g')}")
    return {"kind": kind, "step": step, "names": list(coefficients["sensors"]),
            "values": {"before": "\n".join(before), "installed": "\n".join(installed), "after": ""},
            "coefficients": coefficients}


def _field_of(message: str) -> str:
    head = message.split(":", 1)[0]
    for name in ("installed", "after", "before"):
        if head.startswith(name) or f" {name}" in head:
            return name
    return ""


def compute(detail: dict, values: dict) -> tuple[dict | None, dict]:
    """The trim of job ``detail`` from the form ``values`` (before, installed, after): ``(result,
    errors by field)``. The result is JSON-able and is what :func:`toolkit.register.records.record_trim`
    keeps."""
    from toolkit.errors import CounterpoiseError

    b = basis(detail)
    after = _lines(values.get("after"))
    if not after:
        return None, {"after": "give the readings after the correction, one per line"}
    try:
        if b["kind"] == "machine":
            return _machine(detail, b, after), {}
        return _coefficient_trim(detail, b, _lines(values.get("before")), _lines(values.get("installed")),
                                 after), {}
    except CounterpoiseError as exc:
        text = str(exc)
        text = text.split(": ", 1)[-1] if text.startswith("job ") else text
        field = _field_of(text) or "after"
        return None, {field: re.sub(r"^(before|after) (\d+):", r"line \2:", text)}  # "after 2": its 2nd reading


def _coefficient_trim(detail, b, before, installed_lines, after) -> dict:
    from toolkit.coefficients import trim_correction
    from toolkit.errors import BadInput

    installed = {}
    for line in installed_lines:
        plane, eq, mass = line.partition("=")
        if not eq or not plane.strip() or not mass.strip():
            raise BadInput(f"installed: {line!r} is not PLANE=MASS@ANGLE, e.g. "
                           f"{b['coefficients']['planes'][0]}=6 g@255")
        installed[plane.strip()] = mass.strip()
    coefficients = _coefficients(b["coefficients"])
    trim = trim_correction(coefficients, before, installed, after, origin=f"job {detail['order_number']}")
    s = trim.solution
    corrections = [c.to_dict() for c in s.corrections]
    trim_installed = []
    for c in s.corrections:  # what the next trim starts from when this one is installed as worked out
        angle = c.angle_deg if c.action == "add" else (c.angle_deg + 180.0) % 360.0
        if c.mass.m_as("g") > 0:
            trim_installed.append(f"{c.plane}={_vec(c.mass.m_as('g'), angle, 'g')}")
    return {"kind": "coefficients", "step": b["step"], "before": before, "installed": installed_lines,
            "after": after, "corrections": corrections, "residual": [dict(r) for r in s.predicted_residual],
            "warnings": [w for w in s.warnings if not w.startswith("stored coefficients saved")], "unit": coefficients.reading_unit, "phase": coefficients.phase,
            "weight_angles": coefficients.weight_angles, "trim_installed": trim_installed,
            "updated_coefficients": _coefficients_data(trim.updated),
            "coefficient_rows": [{"sensor": coefficients.sensors[i], "plane": coefficients.planes[j],
                                  "amount": abs(z), "angle_deg": _angle(z)}
                                 for i, row in enumerate(trim.updated.matrix) for j, z in enumerate(row)]}


def _angle(z: complex) -> float:
    import cmath

    return (cmath.phase(z) * 180.0 / cmath.pi) % 360.0


def _machine(detail, b, after) -> dict:
    """The job worked again with the readings after the correction (a balancing machine measures per plane)."""
    from toolkit.errors import BadInput
    from toolkit.workorder.build import build_order
    from toolkit.workorder.job import job_from_data

    planes = b["names"]
    readings = {}
    for line in after:
        plane, eq, reading = line.partition("=")
        if not eq and len(after) == len(planes):
            plane, reading = planes[len(readings)], line
        if plane.strip() not in planes:
            raise BadInput(f"after: {line!r}: give PLANE=AMOUNT@ANGLE with a plane of the job "
                           f"({', '.join(planes)}), e.g. {planes[0]}=4.1 g@300")
        readings[plane.strip()] = reading.strip()
    missing = [p for p in planes if p not in readings]
    if missing:
        raise BadInput(f"after: no reading for plane(s) {', '.join(missing)}")
    data = tomllib.loads(detail["job_text"])
    data["measurement"] = {"kind": "machine", "shows": "heavy spot", "readings": readings}
    try:
        order = build_order(job_from_data(data, f"trim of job {detail['order_number']}", what="the trim"))
    except BadInput as exc:
        raise BadInput(f"after: {str(exc).split(': ', 1)[-1]}") from None
    return {"kind": "machine", "step": b["step"], "before": _lines(b["values"]["before"]),
            "installed": [], "after": [f"{k}={v}" for k, v in readings.items()],
            "planes": [{"plane": p.name, "after_g_mm": p.initial_g_mm, "after_deg": p.initial_deg,
                        "limit_g_mm": p.limit, "after_within": bool(p.initial_g_mm <= p.limit * (1 + 1e-9)),
                        "action": p.correction_action, "correction_g_mm": p.correction_g_mm,
                        "correction_deg": p.correction_deg,
                        "operations": [{"action": op.action, "angle_deg": op.angle_deg,
                                        "description": op.description} for op in p.operations],
                        "predicted_g_mm": p.predicted_g_mm, "passed": bool(p.passed)} for p in order.planes],
            "warnings": list(order.warnings)}
