"""The diagrams of the browser face: SVG drawn by :mod:`toolkit.export.svg` from what a page computed.

The tolerance page shows the rotor from the side (positions there are measured from bearing A; the side
view measures from the rotor's left end, taken as the outermost of the bearings, planes and centre of
mass). The guided run shows a live polar diagram of the readings, trial masses and corrections typed so
far, and each plane's work-order diagram once the corrections are known.
"""

from __future__ import annotations

import functools
import re

__all__ = ["side_view", "run_vectors", "live_svg", "plane_svgs", "style_hash"]

_VECTOR = re.compile(r"^\s*([0-9]+(?:\.[0-9]*)?(?:[eE][-+]?[0-9]+)?)\s*([^@]*?)\s*@\s*(-?[0-9]+(?:\.[0-9]*)?)\s*°?\s*$")


def side_view(data: dict, units: str) -> str | None:
    """The side view of the tolerance result ``data`` (the ``--json`` object of ``tolerance``), or None when
    the result has no bearing span (then there is nothing to draw to scale)."""
    from toolkit.export.svg import side_view_svg

    span = data.get("bearing_span_mm")
    com = data.get("com_from_a_mm")
    if not span or com is None:
        return None
    planes = [(str(p["name"]), float(p["position_mm"])) for p in data.get("planes", [])
              if p.get("position_mm") is not None]
    ends = [0.0, float(span), float(com), *(pos for _n, pos in planes)]
    left, right = min(ends), max(ends)
    return side_view_svg(length_mm=right - left, bearings_mm=[0.0 - left, float(span) - left],
                         planes=[(n, pos - left) for n, pos in planes], centre_of_mass_mm=float(com) - left,
                         units=units if units in ("metric", "imperial") else "metric")


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
        for p in order.planes:
            vectors.append({"label": f"plane {p.name}", "amount": float(p.correction_g_mm), "unit": "g·mm",
                            "angle_deg": float(p.correction_deg), "role": "correction",
                            "action": p.correction_action})
    return vectors, skipped


def live_svg(values: dict, order=None, planes=()) -> tuple[str, list[str]]:
    """The live polar diagram of the guided run, and the entries it could not draw."""
    from toolkit.export.svg import vectors_svg

    vectors, skipped = run_vectors(values, order, planes)
    reference = str(values.get("reference", "")).strip() or "(no reference mark given)"
    sense = values.get("sense") if values.get("sense") in ("with rotation", "against rotation") \
        else "against rotation"
    title = "Readings, trial masses and corrections" if order is not None else "Readings and trial masses"
    return vectors_svg(title=title, reference=reference, angle_sense=sense, vectors=vectors[:48]), skipped


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
