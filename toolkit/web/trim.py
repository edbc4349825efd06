"""The trim run of the guided balancing run: a job that was corrected is corrected once more, from a run
after the correction, and the trim is recorded against the same job (a new row each time, never over an
earlier one).

A job solved from trial-mass runs has influence coefficients: the first trim starts from them, the
readings of the original run and the correction installed (the planned operations); the coefficients are
updated from what the installed correction did (:func:`toolkit.coefficients.trim_correction`) and solve
the readings after it. A later trim starts from the previous trim's updated coefficients, its readings and
its correction. A job of balancing-machine readings has no coefficients (the machine measures per plane):
its trim is the job worked again by the same chain with the readings after the correction.

A job solved from a stored coefficient set of the register (one-run balancing) trims from that set. When
the job's rotor type has stored coefficients, a recorded coefficient trim may also store its updated
coefficients as a new set of the type (:func:`store_offer`, :func:`toolkit.register.records.record_trim`).

An error goes beside the field its parameter names (``before``, ``installed``, ``after``); an item of a
field (the library's ``after 2``, the second reading, or ``installed near``, that plane's mass; this
module's own ``after[3]``, the field's third line) is worded as its line in the field.
"""

from __future__ import annotations

import re
import tomllib

__all__ = ["TRIM_FIELDS", "basis", "compute", "store_offer", "updated_coefficients"]

#: (name, label, help) of the trim form's fields; each is one entry per line.
TRIM_FIELDS = (
    ("before", "readings before the installed correction",
     "one per sensor, as the instrument shows them, e.g. 4.20 mm/s@285"),
    ("installed", "correction installed",
     "PLANE=MASS@ANGLE, one per line, the mass added at the angle (a removal: the mass at the angle + 180°); "
     "include a trial mass left on"),
    ("after", "readings after the correction",
     "one per sensor, as the instrument shows them, e.g. 0.8 mm/s@120"),)


def _numbered(text) -> list[tuple[int, str]]:
    """The field's lines that are not blank, each with its line number in the field (1-based)."""
    return [(n, line.strip()) for n, line in enumerate(str(text or "").splitlines(), 1) if line.strip()]


def _lines(text) -> list[str]:
    return [line for _n, line in _numbered(text)]


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


def updated_coefficients(result: dict):
    """The :class:`~toolkit.coefficients.Coefficients` a coefficient trim's ``result`` (:func:`compute`)
    updated, to store as a set."""
    return _coefficients(result["updated_coefficients"])


def _vec(amount: float, angle: float, unit: str) -> str:
    from toolkit.units import format_number

    return f"{format_number(amount)} {unit}@{angle % 360.0:.1f}"


def _job(detail: dict):
    from toolkit.workorder.job import parse_job

    return parse_job(detail["job_text"], f"job {detail['order_number']}")


def _job_set(detail: dict) -> int | None:
    """The register's coefficient set a job was solved from (one-run balancing), or None."""
    from toolkit.register.oneshot import referenced_set

    measurement = tomllib.loads(detail["job_text"]).get("measurement") or {}
    return referenced_set(measurement.get("coefficients")) if measurement.get("kind") == "coefficients" else None


def basis(detail: dict, reg=None) -> dict:
    """What a new trim of the job ``detail`` (:func:`toolkit.register.records.job_detail`) starts from:
    ``kind`` (coefficients or machine), the sensor or plane names, the prefilled fields, the coefficients
    (their data) for a trial-run job, the step number, ``parent_set`` (the newest register coefficient set
    among the coefficients' ancestors: a set stored by an earlier trim of the job, or the set the job was
    solved from; None when there is none) and ``started_from`` (those coefficients in words). A job solved
    from a register set needs ``reg``. A job whose inputs can no longer be read (a coefficients file that is
    gone) raises :class:`~toolkit.errors.BadInput`."""
    import cmath

    from toolkit.errors import BadInput

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
                "installed": "", "after": ""}, "coefficients": None, "parent_set": None, "started_from": ""}
    job_set = _job_set(detail)
    stored = [t["data"]["coefficient_set"]["set"] for t in trims if t["data"].get("coefficient_set")]
    parent = stored[-1] if stored else job_set
    if trims:
        last = trims[-1]["data"]
        coefficients = last["updated_coefficients"]
        before, installed = last["after"], last["trim_installed"]
        started_from = f"trim {trims[-1]['step']}'s updated coefficients"
        if last.get("coefficient_set"):
            started_from += f" (coefficient set {last['coefficient_set']['set']})"
        return {"kind": kind, "step": step, "names": list(coefficients["sensors"]),
                "values": {"before": "\n".join(before), "installed": "\n".join(installed), "after": ""},
                "coefficients": coefficients, "parent_set": parent, "started_from": started_from}
    left_on: dict = {}
    if job_set is not None:  # one-run balancing: the register's set, and the job's original run
        if reg is None:
            raise BadInput(f"job {detail['order_number']} was solved from coefficient set {job_set} of the "
                           "register; give the register")
        from toolkit.register.records import coefficient_set

        coefficients = _coefficients_data(coefficient_set(reg, job_set)["coefficients"])
        measurement = tomllib.loads(detail["job_text"])["measurement"]
        before = [str(r) for r in measurement.get("original", [])]
        started_from = f"coefficient set {job_set} of the register"
    else:
        from toolkit.coefficients import coefficients_from
        from toolkit.influence import Settings, solve_runs
        from toolkit.runs import runs_from_dict

        job = _job(detail)
        m = job.measurement
        if m.kind == "coefficients":  # a job solved from a stored coefficients file: those, and its original run
            from toolkit.coefficients import load_coefficients

            coefficients = _coefficients_data(load_coefficients(m.coefficients))
            before = list(m.original)
            started_from = "the job's stored coefficients file"
        else:
            runset = runs_from_dict(dict(m.runs), f"job {detail['order_number']} [measurement]")
            solution = solve_runs(runset, settings=Settings(**m.thresholds))
            coefficients = _coefficients_data(coefficients_from(solution, note=f"job {detail['order_number']}"))
            before = list(m.raw["run"][0]["readings"])
            started_from = "the job's trial-mass runs"
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
            "coefficients": coefficients, "parent_set": parent, "started_from": started_from}


#: What must agree between a trim's coefficients and the rotor type's newest set before they may be stored
#: as the type's next set (one-run balancing reads a rotor's readings in these).
_SAME = (("sensors", "sensors"), ("planes", "planes"), ("reading_unit", "reading unit"),
         ("weight_angles", "weight-angle sense"), ("phase", "instrument phase"))


def store_offer(detail: dict, b: dict, reg) -> dict | None:
    """Whether a coefficient trim of job ``detail`` (its :func:`basis` ``b``) may store its updated
    coefficients as a new set of the job's rotor type: ``{offered, type, parent, latest, why}`` (``why`` says
    why not), or None for a machine trim."""
    from toolkit.errors import CounterpoiseError
    from toolkit.register.records import latest_coefficients

    if b["kind"] != "coefficients":
        return None
    offer = {"offered": False, "type": detail.get("type"), "parent": b["parent_set"], "latest": None, "why": ""}
    if not offer["type"]:
        return {**offer, "why": "the job has no rotor type in the register"}
    try:
        latest, newest, _created = latest_coefficients(reg, offer["type"])
    except CounterpoiseError:
        return {**offer, "why": f"rotor type {offer['type']} has no stored coefficient set"}
    mine = b["coefficients"]
    for key, words in _SAME:
        theirs = list(getattr(newest, key)) if key in ("sensors", "planes") else getattr(newest, key)
        if mine[key] != theirs:
            return {**offer, "latest": latest, "why": f"the job's {words} ({_listed(mine[key])}) differ from "
                                                      f"those of set {latest} of type {offer['type']} "
                                                      f"({_listed(theirs)})"}
    return {**offer, "offered": True, "latest": latest}


def _listed(value) -> str:
    return ", ".join(value) if isinstance(value, list) else str(value)


_LINE = re.compile(r"(before|installed|after)\[(\d+)\]")


def _placed(exc, items: dict) -> dict:
    """``{field: words}``: the error beside the field its parameter names, an item as its line in the field
    (``items``: field -> item -> line); an error about none of the fields goes above the form (``""``)."""
    labels = {name: label for name, label, _h in TRIM_FIELDS}
    parameter = exc.parameter or ""
    text = exc.text(lambda p: labels.get(p, p))
    line = _LINE.fullmatch(parameter)
    if line:  # this module's own: the field's line
        return {line[1]: f"line {line[2]}: {text}"}
    field, _, item = parameter.partition(" ")
    if field not in labels:
        return {"": str(exc)}
    if not item:
        return {field: text}
    lines = items.get(field, {})
    at = lines.get(item) or lines.get(item.removesuffix(" angle"))  # "after 2 angle": the 2nd reading's angle
    return {field: f"line {at}: {text}" if at else f"{item}: {text}"}


def compute(detail: dict, values: dict, reg=None) -> tuple[dict | None, dict]:
    """The trim of job ``detail`` from the form ``values`` (before, installed, after): ``(result,
    errors by field)``. The result is JSON-able and is what :func:`toolkit.register.records.record_trim`
    keeps. ``reg`` is needed for a job solved from a register coefficient set."""
    from toolkit.errors import CounterpoiseError

    b = basis(detail, reg)
    numbered = {name: _numbered(values.get(name)) for name, _l, _h in TRIM_FIELDS}
    if not numbered["after"]:
        return None, {"after": "give the readings after the correction, one per line"}
    # a reading's item (its place among the readings given, "2") to its line in the field
    items = {name: {str(i): n for i, (n, _t) in enumerate(numbered[name], 1)} for name in ("before", "after")}
    try:
        if b["kind"] == "machine":
            return _machine(detail, b, numbered["after"]), {}
        items["installed"] = {}
        return _coefficient_trim(detail, b, [t for _n, t in numbered["before"]], numbered["installed"],
                                 [t for _n, t in numbered["after"]], items["installed"]), {}
    except CounterpoiseError as exc:
        return None, _placed(exc, items)


def _coefficient_trim(detail, b, before, installed_lines, after, planes_at: dict) -> dict:
    """``installed_lines``: (line, text) pairs; ``planes_at`` gets each plane's line (for the errors)."""
    from toolkit.coefficients import trim_correction
    from toolkit.errors import BadInput

    planes = b["coefficients"]["planes"]
    if not installed_lines:
        raise BadInput.about("installed", f"give the correction installed, PLANE=MASS@ANGLE one per line, e.g. "
                                          f"{planes[0]}=6 g@255")
    installed = {}
    for n, line in installed_lines:
        plane, eq, mass = (part.strip() for part in line.partition("="))
        if not eq or not plane or not mass:
            raise BadInput.about(f"installed[{n}]", f"{line!r} is not PLANE=MASS@ANGLE, e.g. {planes[0]}=6 g@255")
        if plane not in planes:
            raise BadInput.about(f"installed[{n}]", f"unknown plane {plane!r}; planes are {', '.join(planes)}")
        if plane in planes_at:
            raise BadInput.about(f"installed[{n}]", f"plane {plane} is given on line {planes_at[plane]} already")
        installed[plane], planes_at[plane] = mass, n
    installed_lines = [line for _n, line in installed_lines]
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


def _machine_reading(text: str, name: str) -> None:
    """Refuse a machine reading the job could not read (an unbalance, or a mass at the plane's radius), as an
    error about ``name``; the job's own reader reads it again when the trim is built."""
    from toolkit.errors import BadInput
    from toolkit.vectors import parse_vector

    try:
        parse_vector(text, "unbalance", name)
    except BadInput as exc:
        try:
            parse_vector(text, "mass", name)
        except BadInput:
            raise BadInput.about(name, f"{exc.text()}; a mass at the plane's correction radius is read too, "
                                       "e.g. 4.1 g@300") from None


def _machine(detail, b, after) -> dict:
    """The job worked again with the readings after the correction (a balancing machine measures per plane).
    ``after``: (line, text) pairs."""
    from toolkit.errors import BadInput, CounterpoiseError
    from toolkit.workorder.build import build_order
    from toolkit.workorder.job import job_from_data, job_key_names

    planes = b["names"]
    readings, lines = {}, {}
    for n, line in after:
        plane, eq, reading = (part.strip() for part in line.partition("="))
        if not eq and len(after) == len(planes):
            plane, reading = planes[len(readings)], line
        if plane not in planes:
            raise BadInput.about(f"after[{n}]", f"{line!r}: give PLANE=AMOUNT@ANGLE with a plane of the job "
                                                f"({', '.join(planes)}), e.g. {planes[0]}=4.1 g@300")
        if plane in readings:
            raise BadInput.about(f"after[{n}]", f"plane {plane} is given on line {lines[plane]} already")
        _machine_reading(reading, f"after[{n}]")
        readings[plane], lines[plane] = reading, n
    missing = [p for p in planes if p not in readings]
    if missing:
        raise BadInput.about("after", f"no reading for plane(s) {', '.join(missing)}")
    data = tomllib.loads(detail["job_text"])
    data["measurement"] = {"kind": "machine", "shows": "heavy spot", "readings": readings}
    job = job_from_data(data, f"trim of job {detail['order_number']}", what="the trim")
    try:
        order = build_order(job)
    except CounterpoiseError as exc:  # about the job's own keys (a wall, a drill set): in the job's words
        raise BadInput(f"the trim correction cannot be made: {exc.worded(job_key_names(job))}") from None
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
