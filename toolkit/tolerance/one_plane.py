"""The tolerance of a single correction plane (ISO 21940-11:2016, 7.1 and 8.2 [H]; the statics transfer as a
stricter option) and the doubts about the one-plane conditions (rules of thumb [CP]).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Mapping

from toolkit.errors import BadInput
from toolkit.tolerance.allocation import transfer_mm
from toolkit.tolerance.boundary import G_MM, STATICS
from toolkit.units import Q_, magnitude

_ONE_PLANE_SOURCE = ("ISO 21940-11:2016, 7.1 and 8.2 (clause numbers from the standard's contents); the rule as "
                     "stated in secondary notes on disc-shaped rotors [H]")

#: The rules for the tolerance of a single correction plane: name -> (method, source).
ONE_PLANE_RULES = {
    "whole": ("one correction plane: the whole U_per is that plane's tolerance", _ONE_PLANE_SOURCE),
    "statics": ("one correction plane: the bearing-plane shares transferred to the plane by " + STATICS
                + " (stricter than the standard's one-plane rule)", STATICS),
}

#: A one-plane rotor is taken as narrow when its length is at most this fraction of the correction
#: diameter (rule of thumb, common practice [CP]; overridable with ``one_plane_length_ratio``).
ONE_PLANE_LENGTH_RATIO = 0.5
#: Without the rotor's length, a bearing span longer than this many correction diameters makes the
#: one-plane conditions doubtful (rule of thumb [CP]).
ONE_PLANE_SPAN_RATIO = 2.0
#: A correction plane farther from the centre of mass than this fraction of the bearing span makes the
#: one-plane conditions doubtful: a correction there adds a couple (rule of thumb [CP]).
ONE_PLANE_OFFSET_RATIO = 0.2


@dataclass(frozen=True)
class OnePlaneDoubt:
    """A reason to doubt that one correction plane is enough, with the parameters to check.

    ``template`` names the parameters as ``{name}`` fields (library names such as ``rotor_length``,
    ``bearing_span``, ``plane_position``, ``com_from_a``, ``correction_diameter``, ``one_plane_rule``);
    the face that shows it words them in the user's own terms (an option or a job key) with
    :meth:`text`.
    """

    check: str
    template: str
    parameters: tuple[str, ...]

    def text(self, names: Mapping[str, str] | None = None) -> str:
        """The warning with each parameter named by ``names`` (default: the library's own names)."""
        names = dict(names or {})
        return self.template.format(**{p: names.get(p, p) for p in self.parameters})

    def to_dict(self, names: Mapping[str, str] | None = None) -> dict:
        return {"check": self.check, "parameters": list(self.parameters), "text": self.text(names)}


@dataclass(frozen=True)
class OnePlane:
    """The tolerance of a single correction plane by both rules, the one used and the doubts found."""

    plane: str
    rule: str
    whole: object      # Quantity [g*mm]: the whole U_per (ISO 21940-11 one-plane rule)
    statics: object    # Quantity [g*mm]: the bearing shares transferred by statics
    method: str
    source: str
    doubts: tuple[OnePlaneDoubt, ...] = ()

    @property
    def used(self):
        return self.whole if self.rule == "whole" else self.statics

    @property
    def other_rule(self) -> str:
        return "statics" if self.rule == "whole" else "whole"

    @property
    def other(self):
        return self.statics if self.rule == "whole" else self.whole

    def to_dict(self, names: Mapping[str, str] | None = None) -> dict:
        return {"plane": self.plane, "rule": self.rule, "u_per_g_mm": self.used.m_as(G_MM),
                "whole_g_mm": self.whole.m_as(G_MM), "statics_g_mm": self.statics.m_as(G_MM),
                "other_rule": self.other_rule, "method": self.method, "source": self.source,
                "doubts": [d.to_dict(names) for d in self.doubts]}


def _one_plane_doubts(span: float, com: float, z: float, length: float | None, diameter: float | None,
                      length_ratio: float, rule: str) -> list[OnePlaneDoubt]:
    doubts = []
    stricter = ", or the stricter rule ({one_plane_rule} statics)" if rule == "whole" else ""
    rule_param = ("one_plane_rule",) if rule == "whole" else ()
    if length is not None and diameter is not None and length > length_ratio * diameter:
        doubts.append(OnePlaneDoubt(
            "long rotor",
            f"one correction plane: the rotor is {length:g} mm long against a {diameter:g} mm correction "
            f"diameter (more than {length_ratio:g} of it, a rule of thumb [CP]): check {{rotor_length}} and "
            f"{{correction_diameter}}; a rotor this long may need two planes" + stricter,
            ("rotor_length", "correction_diameter") + rule_param))
    elif length is None and diameter is not None and span > ONE_PLANE_SPAN_RATIO * diameter:
        doubts.append(OnePlaneDoubt(
            "long rotor",
            f"one correction plane: the bearing span {span:g} mm is more than {ONE_PLANE_SPAN_RATIO:g} "
            f"correction diameters ({diameter:g} mm; a rule of thumb [CP]): check that the rotor body is "
            f"narrow (give {{rotor_length}} to check it) and {{bearing_span}}; a long rotor may need two "
            f"planes" + stricter, ("rotor_length", "bearing_span") + rule_param))
    offset = abs(z - com)
    if offset > ONE_PLANE_OFFSET_RATIO * span:
        doubts.append(OnePlaneDoubt(
            "plane far from the centre of mass",
            f"one correction plane: the plane is {offset:g} mm from the centre of mass, more than "
            f"{ONE_PLANE_OFFSET_RATIO:g} of the bearing span (a rule of thumb [CP]): a correction there adds "
            f"a couple; check {{plane_position}} and {{com_from_a}}" + stricter,
            ("plane_position", "com_from_a") + rule_param))
    return doubts


def one_plane_allowance(u_per, u_a, u_b, bearing_span, com_from_a, position, *, rule: str = "whole",
                        plane: str = "I", rotor_length=None, correction_diameter=None,
                        length_ratio: float = ONE_PLANE_LENGTH_RATIO) -> OnePlane:
    """The tolerance of a single correction plane, by the standard's one-plane rule or by statics.

    ``rule="whole"`` (default): the whole U_per is the plane's tolerance (ISO 21940-11:2016, 7.1 and 8.2,
    for a rotor that needs one correction plane, 4.5.2 [H]). ``rule="statics"``: the bearing-plane
    allowances u_a, u_b transferred to the plane by statics (:func:`transfer_to_planes`, [D]), stricter
    unless the plane is at the centre of mass. Both values are in the result; ``doubts`` lists the reasons
    to check that one plane suffices: the rotor's length against the correction diameter (more than
    ``length_ratio``, default 0.5 [CP]), or without the length the bearing span against it (more than
    2 [CP]), and the plane's distance from the centre of mass (more than 0.2 of the span [CP]).

    Parameters: u_per, u_a, u_b : Quantity [mass*length]; bearing_span, com_from_a, position : Quantity
    [length] from bearing A towards B; rotor_length, correction_diameter : Quantity [length] or None.

    >>> r = one_plane_allowance("307.5 g*mm", "153.75 g*mm", "153.75 g*mm", "400 mm", "200 mm", "224.5 mm")
    >>> round(r.used.m_as("g*mm"), 1), round(r.statics.m_as("g*mm")), r.doubts
    (307.5, 274, ())
    """
    if rule not in ONE_PLANE_RULES:
        raise BadInput.about("one_plane_rule", f"{rule!r} is not known; use {' or '.join(ONE_PLANE_RULES)}")
    if isinstance(length_ratio, bool) or not isinstance(length_ratio, (int, float)) \
            or not math.isfinite(length_ratio) or length_ratio <= 0:
        raise BadInput.about("one_plane_length_ratio", f"{length_ratio!r} must be a number greater than zero (default "
                       f"{ONE_PLANE_LENGTH_RATIO:g})")
    u = magnitude(u_per, "unbalance", G_MM, "u_per", positive=True)
    ua = magnitude(u_a, "unbalance", G_MM, "u_a", positive=True)
    ub = magnitude(u_b, "unbalance", G_MM, "u_b", positive=True)
    d = magnitude(bearing_span, "length", "mm", "bearing_span", positive=True)
    com = magnitude(com_from_a, "length", "mm", "com_from_a")
    z = magnitude(position, "length", "mm", "plane position")
    length = None if rotor_length is None else magnitude(rotor_length, "length", "mm", "rotor_length",
                                                         positive=True)
    diameter = None if correction_diameter is None else magnitude(correction_diameter, "length", "mm",
                                                                  "correction_diameter", positive=True)
    statics, = transfer_mm(ua, ub, d, [z])
    method, source = ONE_PLANE_RULES[rule]
    return OnePlane(plane, rule, Q_(u, G_MM), Q_(statics, G_MM), method, source,
                    tuple(_one_plane_doubts(d, com, z, length, diameter, float(length_ratio), rule)))
