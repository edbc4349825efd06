"""The guided balancing run of the browser face: the steps' fields, and the job they make.

Every step posts every field (the other steps' as hidden inputs), so going back or forth never loses what
was entered. The fields become a job as the job file would hold it (``[order]``, ``[rotor]``,
``[geometry]``, ``[[plane]]``, ``[angles]``, ``[measurement]``), or a stored rotor type's template with this
rotor's tables laid over it, and the work order is built by the same chain as ``counterpoise order``.
A problem of the job goes beside the field it came from.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

__all__ = ["STEPS", "RunField", "FIELDS", "compose", "preview", "plane_names", "fields_html"]

STEPS = ("rotor", "angles", "runs", "corrections", "record")
STEP_TITLES = {"rotor": "1 Rotor", "angles": "2 Angle reference and senses", "runs": "3 Readings",
               "corrections": "4 Corrections", "record": "5 Record"}


@dataclass(frozen=True)
class RunField:
    name: str
    step: str
    label: str
    help: str = ""
    kind: str = "text"               # text, lines, choice, check
    choices: tuple[str, ...] = ()
    example: str = ""                # the invented demo rotor's value


def _f(name, step, label, help="", kind="text", choices=(), example=""):
    return RunField(name, step, label, help, kind, tuple(choices), example)


#: The invented demo rotor (the one of ``counterpoise demo``) fills a fresh form; every value is invented.
FIELDS = (
    _f("type", "rotor", "rotor type from the register", "a stored type; or a new rotor described below",
       "choice"),
    _f("serial", "rotor", "serial number", "of this rotor", example="EX-0093 (invented)"),
    _f("customer", "rotor", "customer", example="Example Works Ltd (invented example)"),
    _f("rotor", "rotor", "rotor", "what the rotor is (new rotor)",
       example="Two-plane induced-draught fan rotor (invented example)"),
    _f("mass", "rotor", "rotor mass", "e.g. 412 kg (new rotor)", example="412 kg"),
    _f("service_speed", "rotor", "maximum service speed", "the tolerance uses it, e.g. 1480 rpm",
       example="1480 rpm"),
    _f("balancing_speed", "rotor", "balancing speed", "e.g. 600 rpm", example="600 rpm"),
    _f("grade", "rotor", "balance quality grade", "e.g. G 6.3", example="G 6.3"),
    _f("material", "rotor", "material", "of the correction seats, e.g. carbon steel", example="carbon steel"),
    _f("bearing_span", "rotor", "bearing span", "bearing A to bearing B", example="1400 mm"),
    _f("centre_of_mass", "rotor", "centre of mass from bearing A", example="820 mm"),
    _f("p1_name", "rotor", "plane 1 name", example="drive-end hub"),
    _f("p1_position", "rotor", "plane 1 position from bearing A", example="380 mm"),
    _f("p1_radius", "rotor", "plane 1 correction radius", example="160 mm"),
    _f("p1_surface", "rotor", "plane 1 seat", "outer or inner surface, or a radial face", "choice",
       ("outer", "inner", "face"), example="outer"),
    _f("p2_name", "rotor", "plane 2 name", "leave empty for a one-plane rotor", example="fan-end rim"),
    _f("p2_position", "rotor", "plane 2 position from bearing A", example="1180 mm"),
    _f("p2_radius", "rotor", "plane 2 correction radius", example="780 mm"),
    _f("p2_surface", "rotor", "plane 2 seat", "", "choice", ("outer", "inner", "face"), example="outer"),
    _f("reference", "angles", "angle reference mark", "what angles are measured from", example="keyway"),
    _f("sense", "angles", "weight angles are measured", "", "choice", ("against rotation", "with rotation"),
       example="against rotation"),
    _f("phase", "angles", "the instrument's phase", "with trial runs: lag or lead", "choice", ("lag", "lead"),
       example="lag"),
    _f("kind", "runs", "what was measured", "machine readings per plane, or trial-mass runs", "choice",
       ("machine", "runs"), example="machine"),
    _f("p1_reading", "runs", "plane 1 reading", "machine readings: heavy spot AMOUNT@ANGLE, e.g. 96.5 g@112",
       example="96.5 g@112"),
    _f("p2_reading", "runs", "plane 2 reading", example="64.5 g@251"),
    _f("sensors", "runs", "sensors", "trial runs: one sensor name per line", "lines"),
    _f("original", "runs", "original run", "one reading per sensor, e.g. 4.20 mm/s@285", "lines"),
    _f("trial1", "runs", "trial run 1: trial masses", "PLANE=MASS@ANGLE, one per line, e.g. plane 1's name=25 g@0",
       "lines"),
    _f("readings1", "runs", "trial run 1: readings", "one per sensor", "lines"),
    _f("trial2", "runs", "trial run 2: trial masses", "empty for one plane", "lines"),
    _f("readings2", "runs", "trial run 2: readings", "one per sensor", "lines"),
    _f("trials_left_on", "runs", "trial masses stay on the rotor", "", "check"),
    _f("p1_method", "corrections", "plane 1 correction", "how to correct", "choice",
       ("", "drill", "plate", "washers"), example="drill"),
    _f("p1_width", "corrections", "plane 1 plate width", "room across the seat, for a plate", example=""),
    _f("p1_wall", "corrections", "plane 1 wall under holes", "for drilling", example="55 mm"),
    _f("p2_method", "corrections", "plane 2 correction", "", "choice", ("", "drill", "plate", "washers"),
       example="plate"),
    _f("p2_width", "corrections", "plane 2 plate width", example="50 mm"),
    _f("p2_wall", "corrections", "plane 2 wall under holes", example=""),
    _f("paper", "record", "paper of the work order", "", "choice", ("A4", "Letter"), example="A4"),
)
BY_NAME = {f.name: f for f in FIELDS}


def example_values() -> dict:
    return {f.name: f.example for f in FIELDS}


def _lines(text: str) -> list[str]:
    return [line.strip() for line in str(text or "").splitlines() if line.strip()]


def plane_names(values: dict, template: dict | None) -> list[str]:
    if template is not None:
        return [str(p.get("name", "")) for p in template.get("plane", [])][:2]
    return [values.get(k, "").strip() for k in ("p1_name", "p2_name") if values.get(k, "").strip()]


def compose(values: dict, template: dict | None) -> tuple[dict, dict]:
    """The job tables from the fields (over ``template`` when a stored type is chosen) and the map from
    job key paths to field names (to put a problem beside its field)."""
    v = {k: str(values.get(k, "") or "").strip() for k in BY_NAME}
    where: dict[str, str] = {}
    data: dict = {}
    if template is None:
        data["order"] = {}
        data["rotor"] = {"mass": v["mass"], "service_speed": v["service_speed"], "grade": v["grade"],
                         "material": v["material"]}
        if v["balancing_speed"]:
            data["rotor"]["balancing_speed"] = v["balancing_speed"]
        for key in ("mass", "service_speed", "balancing_speed", "grade", "material"):
            where[f"rotor.{key}"] = key
        data["geometry"] = {"bearing_span": v["bearing_span"], "centre_of_mass": v["centre_of_mass"]}
        where["geometry.bearing_span"], where["geometry.centre_of_mass"] = "bearing_span", "centre_of_mass"
        data["plane"] = []
        for n in (1, 2):
            if n == 2 and not v["p2_name"]:
                continue
            data["plane"].append({"name": v[f"p{n}_name"], "position": v[f"p{n}_position"],
                                  "radius": v[f"p{n}_radius"], "surface": v[f"p{n}_surface"] or "outer"})
            for key in ("name", "position", "radius", "surface"):
                where[f"plane[{n}].{key}"] = f"p{n}_{key}"
    else:
        data = {k: (list(x) if isinstance(x, list) else dict(x) if isinstance(x, dict) else x)
                for k, x in template.items()}
        data["plane"] = [dict(p) for p in template.get("plane", [])]
        data["order"] = dict(template.get("order") or {})
    order = data["order"]
    order.pop("number", None)
    if v["serial"]:
        order["serial"] = v["serial"]
    if v["customer"]:
        order["customer"] = v["customer"]
    if template is None and v["rotor"]:
        order["rotor"] = v["rotor"]
    from toolkit.register.records import PLACEHOLDER

    order["number"] = PLACEHOLDER  # the register numbers the job when it is recorded
    where["order.serial"], where["order.customer"], where["order.rotor"] = "serial", "customer", "rotor"
    for n, plane in enumerate(data["plane"][:2], start=1):
        method = v[f"p{n}_method"]
        if method:
            plane["methods"] = [method]
            where[f"plane[{n}].methods"] = f"p{n}_method"
        if v[f"p{n}_width"]:
            plane["width"] = v[f"p{n}_width"]
            where[f"plane[{n}].width"] = f"p{n}_width"
        if v[f"p{n}_wall"]:
            plane["wall"] = v[f"p{n}_wall"]
            where[f"plane[{n}].wall"] = f"p{n}_wall"
    data["angles"] = {"reference": v["reference"], "sense": v["sense"]}
    where["angles.reference"], where["angles.sense"] = "reference", "sense"
    names = [str(p.get("name", "")) for p in data["plane"]]
    if v["kind"] == "runs":
        runs = [{"name": "original", "readings": _lines(values.get("original"))}]
        where["measurement.run[1]"] = "original"
        for n in (1, 2):
            trial = {}
            for line in _lines(values.get(f"trial{n}")):
                plane, _, mass = line.partition("=")
                trial[plane.strip()] = mass.strip()
            if trial or _lines(values.get(f"readings{n}")):
                runs.append({"name": f"trial run {n}", "trial": trial,
                             "readings": _lines(values.get(f"readings{n}"))})
                where[f"measurement.run[{len(runs)}].trial"] = f"trial{n}"
                where[f"measurement.run[{len(runs)}]"] = f"readings{n}"
        data["measurement"] = {"kind": "runs", "phase": v["phase"] or "lag", "sensors": _lines(values.get("sensors")),
                               "trials_left_on": bool(v["trials_left_on"]), "run": runs}
        where["measurement.sensors"], where["measurement.phase"] = "sensors", "phase"
    else:
        readings = {}
        for n, name in enumerate(names[:2], start=1):
            readings[name] = v[f"p{n}_reading"]
            where[f"measurement.readings.{name}"] = f"p{n}_reading"
            where[f"measurement.readings.'{name}'"] = f"p{n}_reading"
        data["measurement"] = {"kind": "machine", "shows": "heavy spot", "readings": readings}
    shop = dict(data.get("shop") or {})
    shop["paper"] = v["paper"] or "A4"
    data["shop"] = shop
    return data, where


_PATH = re.compile(r"^(?:.*?: )?(?:\d+ problems in [^:]*: )?")


def place(problems, where: dict) -> dict:
    """Problems of the job (``path: message``) beside their fields; the rest under the key ""."""
    out: dict[str, list[str]] = {}
    for problem in problems:
        text = str(problem)
        path, _, message = text.partition(": ")
        field = None
        for key in sorted(where, key=len, reverse=True):
            if path == key or path.startswith(key + ".") or path.startswith(key + "["):
                field = where[key]
                break
        if field is None:
            out.setdefault("", []).append(text)
        else:
            out.setdefault(field, []).append(message or text)
    return {k: " ".join(v) for k, v in out.items()}


def preview(values: dict, reg=None):
    """The job text and the work order the fields make, or the problems by field: ``(text, order,
    errors, type_version_id)``."""
    from toolkit.errors import CounterpoiseError
    from toolkit.register import records as R
    from toolkit.workorder.build import build_order
    from toolkit.workorder.job import job_from_data

    template, version_id = None, None
    type_name = str(values.get("type", "") or "").strip()
    if type_name:
        if reg is None:
            return None, None, {"type": "no register to take the rotor type from"}, None
        try:
            t = R.template(reg, type_name)
        except CounterpoiseError as exc:
            return None, None, {"type": str(exc)}, None
        template, version_id = R._loads(t["template"], f"rotor type {type_name}"), t["version_id"]
    data, where = compose(values, template)
    try:
        job = job_from_data(data, "the balancing run", what="the run")
        order = build_order(job)
    except CounterpoiseError as exc:
        problems = getattr(exc, "problems", ()) or (str(exc),)
        return None, None, place(problems, where), version_id
    text = R.toml_text(data, "job entered in the browser face (guided balancing run)")
    return text, order, {}, version_id


#: The fields a stored rotor type supplies: not asked for when a type is chosen.
FROM_TYPE = frozenset(("rotor", "mass", "service_speed", "balancing_speed", "grade", "material", "bearing_span",
                       "centre_of_mass", "p1_name", "p1_position", "p1_radius", "p1_surface", "p2_name",
                       "p2_position", "p2_radius", "p2_surface"))


def fields_html(values: dict, step: str, errors: dict, planes: list[str], types: list[str], template=None):
    """Every field of the run as HTML: this step's as controls (each with its error beside it and its help),
    the others' as hidden inputs, so that every step posts every field; with a stored type's ``template``
    the fields it supplies are not asked for. Built here rather than in the template: forty fields a page
    cost a template loop more than the rest of the page."""
    from markupsafe import Markup, escape

    first = "plane " + (planes[0] if len(planes) > 0 else "1")
    second = "plane " + (planes[1] if len(planes) > 1 else "2")
    out = []
    for f in FIELDS:
        value = values.get(f.name, "")
        if f.step != step or (template and f.name in FROM_TYPE):
            out.append(f'<textarea name="{f.name}" hidden>{escape(value)}</textarea>\n')
            continue
        err = errors.get(f.name)
        out.append(f'<div class="field{" bad" if err else ""}">\n')
        if f.kind == "check":
            out.append(f'<label><input type="checkbox" name="{f.name}" value="on"{" checked" if value else ""}> '
                       f'{escape(f.label)}</label>\n')
        else:
            label = f.label.replace("plane 1", first).replace("plane 2", second)
            out.append(f'<label for="r-{f.name}">{escape(label)}</label>\n')
            if f.name == "type":
                options = "".join(f'<option value="{escape(t)}"{" selected" if value == t else ""}>{escape(t)}</option>'
                                  for t in types)
                out.append(f'<select id="r-type" name="type"><option value="">(a new rotor, described below)</option>'
                           f'{options}</select>\n')
            elif f.kind == "choice":
                options = "".join(f'<option value="{escape(c)}"{" selected" if value == c else ""}>'
                                  f'{escape(c or "(as the rotor type says)")}</option>' for c in f.choices)
                out.append(f'<select id="r-{f.name}" name="{f.name}">{options}</select>\n')
            elif f.kind == "lines":
                out.append(f'<textarea id="r-{f.name}" name="{f.name}" rows="3">{escape(value)}</textarea>\n')
            else:
                out.append(f'<input id="r-{f.name}" name="{f.name}" value="{escape(value)}">\n')
        if err:
            out.append(f'<p class="error" id="err-{f.name}" role="alert">{escape(err)}</p>\n')
        if f.help:
            out.append(f'<p class="help">{escape(f.help)}</p>\n')
        out.append("</div>\n")
    return Markup("".join(out))
