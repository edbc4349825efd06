"""The diagrams of the browser face: SVG drawn by :mod:`toolkit.export.svg` from what a page computed.

The tolerance page shows the rotor from the side (positions there are measured from bearing A; the side
view measures from the rotor's left end, taken as the outermost of the bearings, planes and centre of
mass). The guided run shows a live polar diagram of the readings, trial masses and corrections typed so
far, and each plane's work-order diagram once the corrections are known.
"""

from __future__ import annotations

import functools
import re

__all__ = ["side_view", "run_vectors", "live_svg", "plane_svgs", "trim_svg", "style_hash"]

_VECTOR = re.compile(r"^\s*([0-9]+(?:\.[0-9]*)?(?:[eE][-+]?[0-9]+)?)\s*([^@]*?)\s*@\s*(-?[0-9]+(?:\.[0-9]*)?)\s*°?\s*$")


def side_view(data: dict, units: str) -> str | None:
    """The side view of the tolerance result ``data`` (the ``--json`` object of ``tolerance``), or None when
    the result has no bearing span (then there is nothing to draw to scale)."""
    span = data.get("bearing_span_mm")
    com = data.get("com_from_a_mm")
    if not span or com is None:
        return None
    planes = [(str(p["name"]), float(p["position_mm"])) for p in data.get("planes", [])
              if p.get("position_mm") is not None]
    ends = [0.0, float(span), float(com), *(pos for _n, pos in planes)]
    left, right = min(ends), max(ends)
    return _side_view_svg(right - left, (0.0 - left, float(span) - left), tuple((n, pos - left) for n, pos in planes),
                          float(com) - left, units if units in ("metric", "imperial") else "metric")


@functools.lru_cache(maxsize=256)
def _side_view_svg(length_mm: float, bearings_mm: tuple, planes: tuple, com_mm: float, units: str) -> str:
    """The side view's SVG text: a pure function of the geometry and the unit system (floats, names and
    strings in, an immutable string out, nothing of a request or a person in it), so a geometry drawn once
    is drawn again from this cache; another rotor's numbers can never appear in it."""
    from toolkit.export.svg import side_view_svg

    return side_view_svg(length_mm=length_mm, bearings_mm=list(bearings_mm), planes=list(planes),
                         centre_of_mass_mm=com_mm, units=units)


def _vector(text: str):
    """``(amount, unit, angle)`` of ``96.5 g@112``, or None when the text is not (yet) such a vector."""
    m = _VECTOR.match(str(text or ""))
    if not m:
        return None
    return float(m.group(1)), m.group(2).strip() or "(no unit)", float(m.group(3))


def _lines(text) -> list[str]:
    return [line.strip() for line in str(text or "").splitlines() if line.strip()]


def run_vectors(values: dict, order=None, planes=()) -> tuple[list[dict], list[str]]:
    """The vectors of the guided run's fields (and of the work order, when one could be built): readings,
    trial masses, corrections with add or remove. Also the entries that could not be drawn, in words."""
    vectors: list[dict] = []
    skipped: list[str] = []

    def put(label, text, role, action=None):
        v = _vector(text)
        if v is None:
            skipped.append(f"{label}: {str(text)[:40]!r}")
            return
        item = {"label": label, "amount": v[0], "unit": v[1], "angle_deg": v[2], "role": role}
        if action:
            item["action"] = action
        vectors.append(item)

    names = list(planes) or ["1", "2"]
    if values.get("kind", "machine") == "machine":
        for n, name in enumerate(names[:2], 1):
            text = str(values.get(f"p{n}_reading", "")).strip()
            if text:
                put(f"plane {name}", text, "reading")
    else:
        sensors = _lines(values.get("sensors")) or []
        for k, text in enumerate(_lines(values.get("original"))):
            put(f"original, {sensors[k] if k < len(sensors) else f'sensor {k + 1}'}", text, "reading")
        for n in (1, 2):
            for line in _lines(values.get(f"trial{n}")):
                plane, _eq, mass = line.partition("=")
                put(f"trial run {n}, {plane.strip() or '?'}", mass, "trial")
            for k, text in enumerate(_lines(values.get(f"readings{n}"))):
                put(f"trial run {n}, {sensors[k] if k < len(sensors) else f'sensor {k + 1}'}", text, "reading")
    if order is not None:
        for n, p in enumerate(order.planes, start=1):
            # the correction and the allowance in the unit the plane's reading was typed in (a mass at the
            # correction radius or an unbalance), else as a mass at the radius like the trial masses
            typed = _vector(values.get(f"p{n}_reading", "")) if values.get("kind", "machine") == "machine" else None
            unit, factor = _unit_of(typed[1] if typed else "g", p.radius_mm)
            vectors.append({"label": f"plane {p.name}", "amount": float(p.correction_g_mm) * factor, "unit": unit,
                            "angle_deg": float(p.correction_deg), "role": "correction",
                            "action": p.correction_action})
            if p.limit and p.limit > 0:
                vectors.append({"label": f"plane {p.name}", "amount": float(p.limit) * factor, "unit": unit,
                                "angle_deg": 0.0, "role": "allowance"})
    return vectors, skipped


def _unit_of(unit_text: str, radius_mm: float) -> tuple[str, float]:
    """The unit to draw a plane's correction in (as the reading was typed: a mass at the correction radius
    or an unbalance) and the factor from g·mm to it; g (a mass at the radius) when the text is neither."""
    from toolkit.errors import BadInput
    from toolkit.units import quantity

    for kind, base in (("mass", "g"), ("unbalance", "g*mm")):
        try:
            one = quantity(f"1 {unit_text}", kind)
        except BadInput:
            continue
        per = one.m_as(base) * (radius_mm if kind == "mass" else 1.0)  # g·mm of one unit
        return unit_text, 1.0 / per
    return "g", 1.0 / radius_mm


def live_svg(values: dict, order=None, planes=()) -> tuple[str, list[str]]:
    """The live polar diagram of the guided run, and the entries it could not draw."""
    from toolkit.export.svg import vectors_svg

    vectors, skipped = run_vectors(values, order, planes)
    reference = str(values.get("reference", "")).strip() or "(no reference mark given)"
    sense = values.get("sense") if values.get("sense") in ("with rotation", "against rotation") \
        else "against rotation"
    title = "Readings, trial masses and corrections" if order is not None else "Readings and trial masses"
    return vectors_svg(title=title, reference=reference, angle_sense=sense, vectors=vectors[:48]), skipped


def trim_svg(detail: dict, basis: dict, values: dict, result: dict | None) -> str:
    """The trim page's polar diagram: the readings after the correction as typed and, once worked out, the
    trim corrections (add or remove in words) and, for machine readings, each plane's allowance circle, each
    in the unit its reading was typed in; with the job's angle reference and sense."""
    from toolkit.export.svg import vectors_svg

    wo = detail["workorder"]
    vectors: list[dict] = []
    radius = {p["name"]: float(p["radius_mm"]) for p in wo["planes"]}
    typed_unit: dict[str, str] = {}
    for k, line in enumerate(_lines(values.get("after"))):
        if basis["kind"] == "machine":
            plane, _eq, text = line.partition("=")
            label = f"plane {plane.strip()}, after"
        else:
            names = basis["names"]
            plane, text, label = "", line, f"{names[k] if k < len(names) else f'sensor {k + 1}'}, after"
        v = _vector(text)
        if v is not None:
            vectors.append({"label": label, "amount": v[0], "unit": v[1], "angle_deg": v[2], "role": "reading"})
            typed_unit[plane.strip()] = v[1]
    if result is not None and result.get("kind") == "machine":
        for p in result["planes"]:
            unit, factor = _unit_of(typed_unit.get(p["plane"], "g"), radius.get(p["plane"], 1.0))
            if p["operations"]:
                vectors.append({"label": f"trim, plane {p['plane']}", "amount": p["correction_g_mm"] * factor,
                                "unit": unit, "angle_deg": p["correction_deg"], "role": "correction",
                                "action": p["action"]})
            vectors.append({"label": f"plane {p['plane']}", "amount": p["limit_g_mm"] * factor, "unit": unit,
                            "angle_deg": 0.0, "role": "allowance"})
    elif result is not None:
        for c in result["corrections"]:
            vectors.append({"label": f"trim, plane {c['plane']}", "amount": c["mass_g"], "unit": "g",
                            "angle_deg": c["angle_deg"], "role": "correction", "action": c["action"]})
    title = "Readings after the correction" + (" and the trim correction" if result is not None else "")
    return vectors_svg(title=title, reference=str(wo.get("angle_reference") or "(no reference mark given)"),
                       angle_sense=wo.get("angle_sense") if wo.get("angle_sense") in ("with rotation", "against rotation")
                       else "against rotation", vectors=vectors[:48])


def plane_svgs(order) -> list[str]:
    """Each plane's polar diagram as the work order draws it."""
    from toolkit.export.svg import plane_svg

    return [plane_svg(order, i) for i in range(len(order.planes))]


@functools.lru_cache(maxsize=1)
def style_hash() -> str:
    """The CSP hash of the style element every diagram carries (the same rules in every SVG), so that the
    page's Content-Security-Policy can allow exactly that style element and no other inline style."""
    import base64
    import hashlib

    from toolkit.export.svg import vectors_svg

    svg = vectors_svg(title="t", reference="r", angle_sense="with rotation", vectors=[])
    styles = set(re.findall(r"<style>(.*?)</style>", svg, re.S))
    return " ".join("'sha256-" + base64.b64encode(hashlib.sha256(s.encode()).digest()).decode() + "'"
                    for s in sorted(styles))
