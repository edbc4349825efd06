"""Job-file parts for keyed rotors and arbors: the ``[key]`` table and the ``arbor-index`` measurement kind.

``[key]`` (optional; one keyed joint of the rotor this job balances)
    ``convention`` (required: what this rotor is balanced to, ``"half-key"`` (ISO 21940-32:2012),
    ``"full-key"`` or ``"no-key"``), ``fill`` (what sits in its keyway during this balancing: ``"key"``,
    ``"half-key"`` or ``"nothing"``; default what the convention says), ``marking`` (the stamp; default by
    convention, H or F, from memory [M]), ``component`` (``"shaft"``, default, or ``"hub"``: which side of
    the keyed joint this rotor is), ``mate`` (an inline table ``{ convention = ..., fill = ..., marking =
    ... }`` for the other component; default half-key), ``in_service`` (``"key"``, default, or
    ``"nothing"``). With the key's geometry (``width``, ``height``, ``shaft_depth``, ``shaft_diameter``,
    ``keyway_length``, all required together; optional ``hub_depth``, ``key_length``, ``hub_length``,
    ``keyway_start``, ``key_start``, ``hub_start`` (axial positions from bearing A, like the planes'),
    ``keyway_angle`` (degrees from the job's reference mark, in its sense), ``material`` or ``density``,
    ``half_key_height``, ``half_key_length``, ``hub_half_key_height``, ``hub_half_key_length``) the
    unbalance the key mismatch leaves in service is computed (:func:`toolkit.keys.key_unbalance`), shared
    onto the correction planes by statics and corrected with the measured unbalance.
``[measurement]`` ``kind = "arbor-index"``
    The part read on an arbor at two or more index positions: ``[measurement.readings]`` holds per plane a
    list ``["0=300 g*mm@40", "180=180 g*mm@200"]`` (INDEX=AMOUNT@ANGLE, the part's mark at INDEX degrees on
    the arbor; without INDEX, equal steps) with amounts as unbalances or masses at the plane's radius;
    optional ``max_spread`` (the consistency limit, a fraction; 0.1 by default [CP]). The part's share
    (:func:`toolkit.arbor.index_separation`) is the measured unbalance the order corrects; the arbor's share
    and the consistency check go on the order.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Any, Mapping

from toolkit.errors import BadInput, Worded

__all__ = ["KeySpec", "KEY_KEYS", "parse_key", "arbor_measurement"]

_LENGTHS = ("width", "height", "shaft_depth", "hub_depth", "shaft_diameter", "keyway_length", "key_length",
            "hub_length", "half_key_height", "half_key_length", "hub_half_key_height", "hub_half_key_length")
_POSITIONS = ("keyway_start", "key_start", "hub_start")
_GEOMETRY_REQUIRED = ("width", "height", "shaft_depth", "shaft_diameter", "keyway_length")
#: The keys a [key] table may hold.
KEY_KEYS = ("convention", "fill", "marking", "component", "mate", "in_service", *_LENGTHS, *_POSITIONS,
            "keyway_angle", "material", "density")
_MATE_KEYS = ("convention", "fill", "marking")


@dataclass(frozen=True)
class KeySpec:
    """The key convention of the job's rotor and, with geometry, the unbalance its key mismatch leaves.

    ``convention``, ``fill`` and ``marking`` are this rotor's (``component``, "shaft" or "hub");
    ``marking_given`` says whether the job gave the marking (else by convention, [M]); ``mate`` the other
    component's; ``result`` the :class:`toolkit.keys.KeyUnbalance` with shares in the job's planes (None
    without geometry); ``warnings`` in the job's terms.
    """

    component: str
    convention: str
    fill: str
    marking: str
    marking_given: bool
    mate: Mapping = field(default_factory=dict)
    in_service: str = "key"
    result: Any = None
    warnings: tuple[str, ...] = ()

    def to_dict(self) -> dict:
        return {"component": self.component, "convention": self.convention, "fill": self.fill,
                "marking": self.marking, "marking_given": self.marking_given, "mate": dict(self.mate),
                "in_service": self.in_service, "warnings": list(self.warnings),
                "unbalance": None if self.result is None else self.result.to_dict()}


def _norm(value) -> str:
    return "-".join(str(value).strip().lower().replace("_", " ").replace("-", " ").split())


def _pick(ck, table: Mapping, path: tuple, allowed: tuple[str, ...], default=None, required=False):
    """A choice written with hyphens, spaces or underscores ("half-key", "half key"): returned hyphenated."""
    from toolkit.workorder.job import _MISSING, _shown

    value = table.get(path[-1], _MISSING)
    if value is _MISSING:
        if required:
            ck.add(path, f"missing; allowed: {', '.join(repr(a) for a in allowed)}")
        return default
    if not isinstance(value, str) or _norm(value) not in allowed:
        ck.add(path, f"{_shown(value)} is not allowed; allowed: {', '.join(repr(a) for a in allowed)}")
        return default
    return _norm(value)


#: key_unbalance's parameter names as keys of the [key] table, for this rotor as the shaft or as the hub.
def _job_names(component: str) -> dict[str, str]:
    own, other = ("shaft", "hub") if component == "shaft" else ("hub", "shaft")
    return {f"{own}_convention": "convention", f"{own}_fill": "fill", f"{own}_marking": "marking",
            f"{other}_convention": "mate.convention", f"{other}_fill": "mate.fill",
            f"{other}_marking": "mate.marking", "density": "density", "material": "material"}


def _reword(text: str, component: str) -> str:
    """A library message or warning whose leading names are key_unbalance's parameters, in [key] terms: a
    warning through the parameters it names (:class:`toolkit.errors.Worded`), an error's text by its head."""
    names = _job_names(component)

    def name(p: str) -> str:
        return "[[plane]] position" if p == "planes" else f"[key] {names.get(p, p)}"

    if isinstance(text, Worded):
        return text.worded(name)
    head, sep, rest = text.partition(":")
    if sep and re.fullmatch(r"[a-z_]+(?:/[a-z_]+)*", head.strip()):
        return "/".join(name(p) for p in head.strip().split("/")) + sep + rest
    return text


def parse_key(ck, data: Mapping, planes, material: str):
    """Validate the job's ``[key]`` table (problems go to the checker ``ck``); returns a :class:`KeySpec` or
    None when the job has no [key] table."""
    from toolkit.keys import MARKINGS, default_fill, key_convention
    from toolkit.workorder.job import _MISSING, _angle, _quantity, _shown, _table, _text, _unknown

    if "key" not in data:
        return None
    path = ("key",)
    t = _table(ck, data, path)
    _unknown(ck, t, path, KEY_KEYS)
    component = _pick(ck, t, path + ("component",), ("shaft", "hub"), default="shaft")
    convention = _pick(ck, t, path + ("convention",), ("half-key", "full-key", "no-key"), required=True)
    fill = _pick(ck, t, path + ("fill",), ("key", "half-key", "nothing"))
    marking = _text(ck, t, path + ("marking",), one_line=True).strip() or None
    in_service = _pick(ck, t, path + ("in_service",), ("key", "nothing"), default="key")
    mate_t = t.get("mate", {})
    mate: dict = {}
    if not isinstance(mate_t, dict):
        ck.add(path + ("mate",), f"{_shown(mate_t)} is not a table; write mate = {{ convention = \"half-key\" }}")
        mate_t = {}
    for key in mate_t:
        if key not in _MATE_KEYS:
            ck.add(path + ("mate", key), f"unknown key; allowed keys here: {', '.join(_MATE_KEYS)}")
    mate_conv = _pick(ck, mate_t, path + ("mate", "convention"), ("half-key", "full-key", "no-key"))
    mate_fill = _pick(ck, mate_t, path + ("mate", "fill"), ("key", "half-key", "nothing"))
    mate_mark = _text(ck, mate_t, path + ("mate", "marking"), one_line=True).strip() or None
    if convention is None:
        return None
    other = "hub" if component == "shaft" else "shaft"
    fill = fill or default_fill(convention, component)
    mate = {"component": other, "convention": mate_conv or "half-key",
            "fill": mate_fill or default_fill(mate_conv or "half-key", other),
            "marking": mate_mark or MARKINGS[mate_conv or "half-key"], "marking_given": mate_mark is not None}
    warnings = ["[key] " + w for w in key_convention(convention, fill, marking, component).warnings]
    values: dict[str, Any] = {}
    for key in _LENGTHS:
        q = _quantity(ck, t, path + (key,), "length", positive=True)
        if q is not None:
            values[key] = q
    for key in _POSITIONS:
        q = _quantity(ck, t, path + (key,), "length")
        if q is not None:
            values[key] = q
    if "keyway_angle" in t:
        angle = _angle(ck, t["keyway_angle"], path + ("keyway_angle",))
        if angle is not None:
            values["keyway_angle"] = angle
    density = _quantity(ck, t, path + ("density",), "density", positive=True)
    key_material = _text(ck, t, path + ("material",)).strip() or None
    if density is not None and key_material is not None:
        ck.add(path + ("density",), "give the key's material or its density, not both")
    geometry_given = [k for k in t if k in _LENGTHS or k in _POSITIONS or k in ("keyway_angle", "material",
                                                                                  "density")]
    spec = dict(component=component, convention=convention, fill=fill,
                marking=marking or MARKINGS[convention], marking_given=marking is not None,
                mate=MappingProxyType(mate), in_service=in_service)
    if not geometry_given:
        if in_service != "key":
            ck.add(path + ("in_service",), "needs the key's geometry (width, height, shaft_depth, shaft_diameter, "
                                           "keyway_length) to compute what a rotor run without its key carries")
        return KeySpec(**spec, warnings=tuple(warnings))
    missing = [k for k in _GEOMETRY_REQUIRED if k not in t]
    if missing:
        ck.add(path + (missing[0],), f"missing; the key's geometry needs {', '.join(_GEOMETRY_REQUIRED)} "
                                     f"together (missing: {', '.join(missing)})")
        return KeySpec(**spec, warnings=tuple(warnings))
    if component == "hub" and "hub_length" not in t:
        ck.add(path + ("hub_length",), "missing; this rotor is the hub: give the hub's length over the key")
        return KeySpec(**spec, warnings=tuple(warnings))
    if ck.problems or not planes:
        return KeySpec(**spec, warnings=tuple(warnings))  # the problems above are reported first
    from toolkit.keys import key_unbalance

    own = "shaft" if component == "shaft" else "hub"
    conv = {f"{own}_convention": convention, f"{own}_fill": fill, f"{own}_marking": spec["marking"],
            f"{other}_convention": mate["convention"], f"{other}_fill": mate["fill"],
            f"{other}_marking": mate["marking"]}
    if "hub_length" not in values:  # no hub on the shaft: nothing about a hub applies
        conv = {k: v for k, v in conv.items() if not k.startswith("hub_")}
    try:
        result = key_unbalance(**values, **conv, in_service=in_service,
                               material=None if density is not None else (key_material or material),
                               density=density, planes={p.name: p.position for p in planes})
    except BadInput as exc:
        text = _reword(str(exc), component)
        head, _sep, rest = text.partition(":")
        name = head.replace("[key] ", "").split("/")[0].strip()
        if name in KEY_KEYS:
            ck.add(path + (name,), rest.strip())
        else:
            ck.add(path + (("mate",) if name.startswith("mate.") else ()), text.replace("[key] ", "", 1))
        return KeySpec(**spec, warnings=tuple(warnings))
    warnings += [_reword(w, component) for w in result.warnings
                 if not w.startswith(("shaft_fill", "hub_fill")) or f"{own}_fill" not in w]
    return KeySpec(**spec, result=result, warnings=tuple(dict.fromkeys(warnings)))


def arbor_measurement(ck, meas: Mapping, names: list[str], planes, raw: Mapping):
    """The ``arbor-index`` measurement: each plane's readings at index positions separated into the arbor's
    and the part's shares. Returns a :class:`~toolkit.workorder.job.Measurement` whose ``readings`` are the
    part's shares and whose ``index`` holds each plane's :class:`toolkit.arbor.IndexResult`."""
    from toolkit.units import Q_
    from toolkit.workorder.job import Measurement, _MISSING, _shown, _table, _unknown

    path = ("measurement",)
    _unknown(ck, meas, path, ("kind", "readings", "max_spread"))
    spread = meas.get("max_spread")
    if spread is not None and (isinstance(spread, bool) or not isinstance(spread, (int, float))
                               or not 0 < spread <= 1):
        ck.add(path + ("max_spread",), f"{_shown(spread)} is not allowed; give a fraction above 0 and at most 1, "
                                       "e.g. 0.1")
        spread = None
    readings_t = _table(ck, meas, path + ("readings",))
    for key in readings_t:
        if key not in names:
            ck.add(path + ("readings", key), f"no plane named {key!r}; planes: {', '.join(names) or 'none'}")
    parts, results = {}, {}
    from toolkit.arbor import index_separation

    for plane in planes:
        vpath = path + ("readings", plane.name)
        value = readings_t.get(plane.name, _MISSING)
        if value is _MISSING:
            ck.add(vpath, "missing; give this plane's readings at the index positions as a list, e.g. "
                          "[\"0=300 g*mm@40\", \"180=180 g*mm@200\"]")
            continue
        if not isinstance(value, list) or not all(isinstance(v, str) for v in value):
            ck.add(vpath, f"{_shown(value)} is not a list of readings; write e.g. "
                          "[\"0=300 g*mm@40\", \"180=180 g*mm@200\"]")
            continue
        heads = [v.partition("=") for v in value]
        indexed = [h for h in heads if h[1]]
        if indexed and len(indexed) != len(heads):
            ck.add(vpath, "give INDEX=AMOUNT@ANGLE for every reading, or for none (equal steps)")
            continue
        try:
            r = index_separation([h[2].strip() if h[1] else h[0] for h in heads],
                                 [h[0].strip() for h in heads] if indexed else None, radius=plane.radius,
                                 max_spread=spread)
        except BadInput as exc:
            ck.add(vpath, str(exc))
            continue
        results[plane.name] = r
        parts[plane.name] = (Q_(r.part_g_mm, "g*mm"), r.part_angle_deg)
    return Measurement("arbor-index", MappingProxyType(parts), raw=raw, index=MappingProxyType(results),
                       max_spread=spread)
