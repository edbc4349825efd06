"""The check of measured residuals against the planes' allowances, with the error allowance dU
(ISO 21940-14:2012 as recalled [M]).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Mapping

from toolkit.errors import BadInput
from toolkit.tolerance.boundary import G_MM
from toolkit.units import Q_, magnitude, quantity
from toolkit.vectors import parse_vector

CHECK_STAGES = ("after-balancing", "later-check")


@dataclass(frozen=True)
class ResidualCheck:
    """A measured residual in one plane against its allowance."""

    plane: str
    residual: object      # Quantity [g*mm]
    angle_deg: float
    allowance: object     # Quantity [g*mm]
    limit: object         # Quantity [g*mm]: allowance -/+ Delta U by the rule
    error_allowance: object
    rule: str
    passed: bool

    @property
    def margin(self):
        """limit - residual (negative when the plane fails)."""
        return self.limit - self.residual

    @property
    def margin_percent(self) -> float:
        return 100.0 * (self.margin / self.allowance).m_as("")

    def to_dict(self) -> dict:
        return {"plane": self.plane, "residual_g_mm": self.residual.m_as(G_MM),
                "residual_oz_in": self.residual.m_as("oz*in"), "angle_deg": self.angle_deg,
                "allowance_g_mm": self.allowance.m_as(G_MM), "limit_g_mm": self.limit.m_as(G_MM),
                "error_allowance_g_mm": self.error_allowance.m_as(G_MM),
                "margin_g_mm": self.margin.m_as(G_MM), "margin_percent": self.margin_percent,
                "rule": self.rule, "passed": self.passed}


def _rule(delta: float, stage: str) -> tuple[str, float]:
    if stage not in CHECK_STAGES:
        raise BadInput(f"check stage: {stage!r} is not known; use {' or '.join(CHECK_STAGES)}")
    if delta == 0:
        return "pass when residual <= allowance (no error allowance given)", 0.0
    if stage == "after-balancing":
        return ("pass when residual <= allowance - dU (acceptance directly after balancing; ISO 21940-14:2012 "
                "as recalled [M])", -delta)
    return ("fail only when residual > allowance + dU (later check; ISO 21940-14:2012 as recalled [M])", delta)


def named_pairs(items, parameter: str) -> list[tuple[str, object]]:
    """(name, value) pairs from a mapping or an iterable of pairs; a name given twice is refused.

    >>> named_pairs({"I": "-120 mm"}, "planes"), named_pairs([("A", "206 kg")], "journal_loads")
    ([('I', '-120 mm')], [('A', '206 kg')])
    """
    if items is None:
        return []
    if isinstance(items, Mapping):
        return list(items.items())
    pairs = []
    for item in items:
        if isinstance(item, str) or not isinstance(item, (tuple, list)) or len(item) != 2:
            raise BadInput.about(parameter, f"{item!r} is not a (name, value) pair; give a mapping such as "
                                            "{'I': '-120 mm'} or (name, value) pairs")
        pairs.append((str(item[0]), item[1]))
    names = [n for n, _v in pairs]
    dupes = sorted({n for n in names if names.count(n) > 1})
    if dupes:
        raise BadInput.about(parameter, f"name {dupes[0]!r} given more than once")
    return pairs


def check_residuals(allowances: Mapping[str, object], residuals, *, error_allowance=None,
                    stage: str = "after-balancing") -> tuple[ResidualCheck, ...]:
    """Check measured residuals (amount and angle) per plane against the planes' allowances.

    Rule [M] (ISO 21940-14:2012 as recalled): directly after balancing a plane passes when
    U_res <= U_per - dU; at a later check it fails only when U_res > U_per + dU. dU (``error_allowance``,
    Quantity [mass*length]) defaults to 0, when both rules read U_res <= U_per. The rule applied is in
    every result.

    Parameters: allowances : mapping plane name -> Quantity [mass*length]; residuals : mapping plane name
    -> ``"AMOUNT@ANGLE"`` (``"180 g*mm@40"``) or (Quantity, angle_deg), or an iterable of such (name,
    value) pairs; stage : ``"after-balancing"`` or ``"later-check"``.

    >>> c, = check_residuals({"A": "600 g*mm"}, {"A": "450 g*mm@40"}); c.passed, round(c.margin.m_as("g*mm"))
    (True, 150)
    """
    delta = 0.0 if error_allowance is None else float(
        magnitude(error_allowance, "unbalance", G_MM, "error_allowance", nonnegative=True))
    rule, sign = _rule(delta, stage)
    if not isinstance(residuals, Mapping):
        residuals = dict(named_pairs(residuals, "residuals"))
    checks = []
    for name, value in residuals.items():
        if name not in allowances:
            known = ", ".join(allowances) or "none (give the rotor geometry or journal loads)"
            raise BadInput.about("residuals", f"plane {name!r} is not known; planes: {known}")
        if isinstance(value, str):
            amount, angle = parse_vector(value, "unbalance", f"residuals {name}")
        else:
            amount, angle = value
            amount = quantity(amount, "unbalance", f"residuals {name}", nonnegative=True)
        allowed = magnitude(allowances[name], "unbalance", G_MM, f"allowance of {name}", positive=True)
        res = amount.m_as(G_MM)
        limit = allowed + sign
        passed = res <= limit
        checks.append(ResidualCheck(name, Q_(res, G_MM), float(angle), Q_(allowed, G_MM), Q_(limit, G_MM),
                                    Q_(delta, G_MM), rule, bool(passed)))
    return tuple(checks)
