"""Fit and runout errors of mounted parts, a point unbalance shared onto correction planes, and the error
budget of an assembly of separately balanced components.

Sources and marks (S published, H secondary reproduction, M from memory, D derived here, CP common practice):

* A part of mass m mounted with its mass centre a distance e off the shaft axis carries an unbalance
  U = m * e; with m in kg and e in um, U comes out in g*mm [D]. A diametral clearance c lets the part sit
  up to e = c/2 off centre; a total indicated runout T measured at the fit means e = T/2 [D].
* ISO 21940-14:2012 counts such mounting errors among the systematic errors of the balancing process, and
  ISO 21940-11:2016 treats rotors assembled from separately balanced components, whose errors add to the
  assembly's residual [S for the topics; the clauses' wording is not reproduced here].
* Summation rule of the budget [M]: the vector sum where every angle is known; otherwise the worst case
  (magnitudes added) and a root-sum-square estimate, both shown. The rule is ours as recalled from common
  use, not a clause of either standard; :data:`SUMMATION_RULE` states it on every result.
* One unbalance at an axial position shared onto two correction planes by the moment balance of a rigid
  rotor [D]: U_1 = U (z_2 - z)/(z_2 - z_1), U_2 = U (z - z_1)/(z_2 - z_1) (signed, so a share outside the
  planes turns by 180 degrees); one plane takes the whole unbalance.

Every public function takes pint quantities or strings with units (``"38 kg"``, ``"0.02 mm"``) and refuses
bare numbers, naming the parameter. Angles are degrees from the rotor's reference mark, in the sense the
caller uses for all angles of one call.
"""

from __future__ import annotations

import cmath
import math
from dataclasses import dataclass, field

from toolkit.errors import BadInput
from toolkit.units import Q_, magnitude
from toolkit.vectors import parse_angle, polar

__all__ = ["SUMMATION_RULE", "SUMMATION_MARK", "PlaneShare", "split_to_planes", "FitUnbalance", "fit_unbalance",
           "BudgetItem", "budget_item", "Budget", "error_budget", "ITEM_KINDS"]

#: How the budget adds its contributions, and the mark of that rule (M: as recalled, not a clause).
SUMMATION_RULE = ("vector sum where every angle is known; otherwise the worst case (magnitudes added) and a "
                  "root-sum-square estimate, both shown")
SUMMATION_MARK = "M"

_FIT_SOURCE = ("U = m*e with e = c/2 (diametral clearance) or T/2 (total indicated runout), derived here [D]; "
               "mounting errors as systematic errors of balancing: ISO 21940-14:2012 [S, topic]")
_BUDGET_SOURCE = ("assembled rotors: ISO 21940-11:2016 [S, topic]; systematic errors: ISO 21940-14:2012 "
                  "[S, topic]; summation rule [M]")

#: The kinds of contribution a budget lists.
ITEM_KINDS = ("component", "fit", "key", "other")


# -- a point unbalance onto correction planes --------------------------------------------------------

@dataclass(frozen=True)
class PlaneShare:
    """The share of an unbalance that falls to one correction plane: amount [g*mm] at its heavy-spot angle."""

    plane: str
    position_mm: float
    amount_g_mm: float
    angle_deg: float

    @property
    def amount(self):
        return Q_(self.amount_g_mm, "g*mm")

    def to_dict(self) -> dict:
        return {"plane": self.plane, "position_mm": self.position_mm, "amount_g_mm": self.amount_g_mm,
                "angle_deg": self.angle_deg}


def _plane_list(planes) -> list[tuple[str, float]]:
    """``planes`` as ``[(name, position_mm)]``: a mapping name -> position or a sequence of pairs."""
    items = list(planes.items()) if hasattr(planes, "items") else list(planes)
    out = []
    for i, item in enumerate(items):
        try:
            name, pos = item
        except (TypeError, ValueError):
            raise BadInput.about("planes", f"item {i + 1} ({item!r}) is not a pair of a name and a position, "
                           f"e.g. ('I', '120 mm')") from None
        name = str(name).strip()
        if not name:
            raise BadInput.about("planes", f"item {i + 1} has an empty name")
        out.append((name, float(magnitude(pos, "length", "mm", f"planes {name}"))))
    if len(out) not in (1, 2):
        raise BadInput.about("planes", f"{len(out)} correction planes given; give one or two")
    if len(out) == 2:
        if out[0][0] == out[1][0]:
            raise BadInput.about("planes", f"both planes are called {out[0][0]!r}; give two names")
        if abs(out[0][1] - out[1][1]) < 1e-9 * max(1.0, abs(out[0][1]), abs(out[1][1])):
            raise BadInput.about("planes", f"both planes are at {out[0][1]:g} mm; give two different positions")
    return out


def _shares(parts, planes: list[tuple[str, float]]) -> list[complex]:
    """Signed complex shares [g*mm] in each plane of point unbalances ``parts`` = [(complex g*mm, z mm)]."""
    if len(planes) == 1:
        return [sum((u for u, _z in parts), 0j)]
    (_n1, z1), (_n2, z2) = planes
    b = z2 - z1
    return [sum((u * (z2 - z) / b for u, z in parts), 0j), sum((u * (z - z1) / b for u, z in parts), 0j)]


def _to_shares(values: list[complex], planes) -> tuple[PlaneShare, ...]:
    return tuple(PlaneShare(name, z, *polar(v)) for v, (name, z) in zip(values, planes))


def split_to_planes(unbalance, axial_position, planes) -> tuple[PlaneShare, ...]:
    """One unbalance at an axial position shared onto one or two correction planes by statics [D].

    U_1 = U (z_2 - z)/(z_2 - z_1) and U_2 = U (z - z_1)/(z_2 - z_1): the two shares have the same resultant
    and the same moment as U at z. A share of negative sign (z outside the planes) is the same amount at the
    angle + 180 degrees. With one plane the plane takes the whole unbalance (its couple is not corrected).

    Parameters: unbalance, an unbalance vector (``"180 g*mm@90"`` or a pair (quantity, angle [deg]));
    axial_position : Quantity [length]; planes, a mapping name -> position [length] or pairs
    (name, position), one or two of them, positions along the same axis as ``axial_position``.

    >>> [(s.plane, round(s.amount_g_mm, 3), s.angle_deg) for s in
    ...  split_to_planes("100 g*mm@90", "250 mm", {"I": "0 mm", "II": "200 mm"})]
    [('I', 25.0, 270.0), ('II', 125.0, 90.0)]
    """
    from toolkit.vectors import to_complex

    u = to_complex(unbalance, "unbalance", "unbalance")
    z = float(magnitude(axial_position, "length", "mm", "axial_position"))
    plist = _plane_list(planes)
    return _to_shares(_shares([(u, z)], plist), plist)


# -- fits and runout ------------------------------------------------------------------------------------

@dataclass(frozen=True)
class FitUnbalance:
    """The unbalance a mounting error leaves: U = m*e, with the basis of e and the angle when known."""

    mass_kg: float
    basis: str                 # "clearance", "runout" or "eccentricity"
    given_mm: float            # the clearance, the runout or the eccentricity as given [mm]
    eccentricity_um: float
    unbalance_g_mm: float
    angle_deg: float | None    # heavy spot (the runout's high spot), None where unknown
    method: str
    source: str
    warnings: tuple[str, ...] = ()

    @property
    def unbalance(self):
        return Q_(self.unbalance_g_mm, "g*mm")

    def as_item(self, name: str) -> "BudgetItem":
        """This error as a contribution to :func:`error_budget`."""
        return BudgetItem(str(name), "fit", self.unbalance_g_mm, self.angle_deg, f"{self.basis} fit: {self.method}")

    def to_dict(self) -> dict:
        return {"inputs": {"mass_kg": self.mass_kg, "basis": self.basis, f"{self.basis}_mm": self.given_mm},
                "eccentricity_um": self.eccentricity_um, "unbalance_g_mm": self.unbalance_g_mm,
                "angle_deg": self.angle_deg, "method": self.method, "source": self.source,
                "warnings": list(self.warnings)}


def fit_unbalance(mass, *, clearance=None, runout=None, eccentricity=None, angle=None) -> FitUnbalance:
    """The unbalance of a part mounted off centre: U = m * e [D].

    e = c/2 for a diametral clearance c (the largest offset the fit allows), e = T/2 for a total indicated
    runout T measured at the fit, or e as given. U [g*mm] = m [kg] * e [um].

    Parameters: mass : Quantity [mass] of the mounted part; exactly one of clearance, runout, eccentricity :
    Quantity [length]; angle [deg], the runout's high spot (the heavy spot of this error), where it was
    read; a clearance leaves the angle unknown. Returns :class:`FitUnbalance`.

    >>> r = fit_unbalance("38 kg", clearance="0.02 mm"); round(r.eccentricity_um, 6), round(r.unbalance_g_mm, 6)
    (10.0, 380.0)
    >>> fit_unbalance("38 kg", runout="0.04 mm", angle=120).angle_deg
    120.0
    """
    m = float(magnitude(mass, "mass", "kg", "mass", positive=True))
    given = [(k, v) for k, v in (("clearance", clearance), ("runout", runout), ("eccentricity", eccentricity))
             if v is not None]
    if len(given) != 1:
        raise BadInput.about("clearance/runout/eccentricity", "give exactly one of a diametral clearance "
                       "(e.g. '0.02 mm'), a total indicated runout (e.g. '0.04 mm') or an eccentricity "
                       f"(e.g. '10 um'); {len(given)} given")
    basis, value = given[0]
    x = float(magnitude(value, "length", "mm", basis, nonnegative=True))
    e_um = (x / 2.0 if basis in ("clearance", "runout") else x) * 1000.0
    ang = None if angle is None else parse_angle(angle, "angle")
    warnings = []
    if basis == "clearance" and ang is not None:
        warnings.append("angle: a clearance does not fix where the part sits; the angle given is used as stated")
    if x > 1.0:
        warnings.append(f"{basis}: {x:g} mm is large for a fit (more than 1 mm); check the unit")
    how = {"clearance": f"e = c/2 = {x:g} mm / 2", "runout": f"e = T/2 = {x:g} mm TIR / 2",
           "eccentricity": "e as given"}[basis]
    if not math.isfinite(m * e_um):
        raise BadInput.about(basis, f"{m:g} kg at {e_um:g} um gives an unbalance beyond the floating-point range; "
                       f"check the units")
    method = f"U = m*e, {how} = {e_um:g} um, m = {m:g} kg"
    return FitUnbalance(m, basis, x, e_um, m * e_um, ang, method, _FIT_SOURCE, tuple(warnings))


# -- the error budget ---------------------------------------------------------------------------------

@dataclass(frozen=True)
class BudgetItem:
    """One contribution to an assembly's error budget: amount [g*mm] and its heavy-spot angle (None if
    unknown)."""

    name: str
    kind: str
    amount_g_mm: float
    angle_deg: float | None = None
    note: str = ""

    def to_dict(self) -> dict:
        return {"name": self.name, "kind": self.kind, "amount_g_mm": self.amount_g_mm, "angle_deg": self.angle_deg,
                "note": self.note}


def budget_item(name, unbalance, *, kind: str = "component", note: str = "") -> BudgetItem:
    """A contribution to :func:`error_budget`: a component's residual, a fit, a key error or another error.

    ``unbalance`` is ``"120 g*mm@40"`` (angle known), ``"120 g*mm"`` or a Quantity (angle unknown), or a pair
    (quantity, angle [deg]).

    >>> budget_item("impeller", "120 g*mm@40")
    BudgetItem(name='impeller', kind='component', amount_g_mm=120.0, angle_deg=40.0, note='')
    """
    from toolkit.vectors import parse_vector

    label = str(name).strip()
    if not label:
        raise BadInput.about("name", "a budget item needs a name, e.g. 'impeller'")
    if kind not in ITEM_KINDS:
        raise BadInput.about("kind", f"{kind!r} is not allowed; use one of {', '.join(ITEM_KINDS)}")
    what = f"{label} unbalance"
    if isinstance(unbalance, tuple) and len(unbalance) == 2:
        amount = magnitude(unbalance[0], "unbalance", "g*mm", what, nonnegative=True)
        angle = None if unbalance[1] is None else parse_angle(unbalance[1], f"{label} angle")
    elif isinstance(unbalance, str) and ("@" in unbalance or "∠" in unbalance):
        q, angle = parse_vector(unbalance, "unbalance", what)
        amount = magnitude(q, "unbalance", "g*mm", what, nonnegative=True)
    else:
        amount, angle = magnitude(unbalance, "unbalance", "g*mm", what, nonnegative=True), None
    return BudgetItem(label, kind, float(amount), angle, str(note))


@dataclass(frozen=True)
class Budget:
    """An assembly's error budget: the contributions (largest first), their sums and the verdict."""

    items: tuple[BudgetItem, ...]
    tolerance_g_mm: float | None
    known_g_mm: float              # magnitude of the vector sum of the items with known angles
    known_angle_deg: float | None
    all_angles_known: bool
    vector_sum_g_mm: float | None  # the vector sum of all items (only when every angle is known)
    worst_case_g_mm: float         # |known vector sum| + sum of the unknown magnitudes
    rss_g_mm: float                # sqrt(|known vector sum|^2 + sum of the unknown magnitudes squared)
    magnitudes_g_mm: float         # plain sum of every magnitude (the bound if no angle were known)
    verdict: str | None            # "within", "within by estimate" or "exceeds" (None without a tolerance)
    rule: str
    rule_mark: str
    source: str
    warnings: tuple[str, ...] = field(default=())

    @property
    def passed(self) -> bool | None:
        return None if self.verdict is None else self.verdict != "exceeds"

    def to_dict(self) -> dict:
        total = self.magnitudes_g_mm
        return {"items": [dict(i.to_dict(), share_of_magnitudes=(i.amount_g_mm / total if total > 0 else 0.0),
                               share_of_tolerance=(i.amount_g_mm / self.tolerance_g_mm
                                                   if self.tolerance_g_mm else None)) for i in self.items],
                "tolerance_g_mm": self.tolerance_g_mm, "known_g_mm": self.known_g_mm,
                "known_angle_deg": self.known_angle_deg, "all_angles_known": self.all_angles_known,
                "vector_sum_g_mm": self.vector_sum_g_mm, "worst_case_g_mm": self.worst_case_g_mm,
                "rss_g_mm": self.rss_g_mm, "magnitudes_g_mm": self.magnitudes_g_mm, "verdict": self.verdict,
                "passed": self.passed, "rule": self.rule, "rule_mark": self.rule_mark, "source": self.source,
                "warnings": list(self.warnings)}


def error_budget(items, tolerance=None) -> Budget:
    """The error budget of an assembly: contributions sorted largest first, added by :data:`SUMMATION_RULE`.

    Items with known angles are added as vectors (K = |sum U_i e^{i a_i}|); items of unknown angle add their
    magnitudes u_j in the worst case (K + sum u_j) and as a root-sum-square estimate (sqrt(K^2 + sum u_j^2))
    [M for the rule]. With a tolerance the verdict is "within" (the vector sum, or the worst case, is within
    it), "within by estimate" (only the root-sum-square estimate is) or "exceeds".

    Parameters: items, :class:`BudgetItem` values (see :func:`budget_item`, :meth:`FitUnbalance.as_item`);
    tolerance : Quantity [mass*length] or None, the assembly's permissible residual unbalance.

    >>> b = error_budget([budget_item("a", "300 g*mm@0"), budget_item("b", "400 g*mm")], "600 g*mm")
    >>> b.worst_case_g_mm, b.rss_g_mm, b.verdict
    (700.0, 500.0, 'within by estimate')
    """
    items = tuple(items)
    if not items:
        raise BadInput.about("items", "the budget has no contributions; give at least one")
    for i, it in enumerate(items):
        if not isinstance(it, BudgetItem):
            raise BadInput.about("items", f"item {i + 1} ({it!r}) is not a budget item; build it with budget_item()")
    names = [it.name for it in items]
    dupes = sorted({n for n in names if names.count(n) > 1})
    if dupes:
        raise BadInput.about("items", f"the name {dupes[0]!r} is used twice; give each contribution its own name")
    tol = None if tolerance is None else float(magnitude(tolerance, "unbalance", "g*mm", "tolerance",
                                                          positive=True))
    known = [it for it in items if it.angle_deg is not None]
    unknown = [it for it in items if it.angle_deg is None]
    kvec = sum((cmath.rect(it.amount_g_mm, math.radians(it.angle_deg)) for it in known), 0j)
    k_amount, k_angle = polar(kvec)
    worst = k_amount + sum(it.amount_g_mm for it in unknown)
    rss = math.hypot(k_amount, *(it.amount_g_mm for it in unknown))
    if not (math.isfinite(worst) and math.isfinite(rss) and math.isfinite(k_amount)):
        raise BadInput.about("items", "the contributions add up beyond the floating-point range; check their units")
    all_known = not unknown
    verdict = None
    if tol is not None:
        if worst <= tol * (1 + 1e-12):
            verdict = "within"
        elif rss <= tol * (1 + 1e-12):
            verdict = "within by estimate"
        else:
            verdict = "exceeds"
    warnings = []
    if unknown and known:
        warnings.append(f"{len(unknown)} of {len(items)} contributions have no angle: their magnitudes are added "
                        f"to the vector sum of the others (worst case) and root-sum-squared with it (estimate)")
    if verdict == "within by estimate":
        warnings.append("within the tolerance only by the root-sum-square estimate, not in the worst case: measure "
                        "the angles of the largest unknown contributions, or tighten them")
    ordered = tuple(sorted(items, key=lambda it: (-it.amount_g_mm, it.name)))
    return Budget(ordered, tol, k_amount, k_angle if known else None, all_known, k_amount if all_known else None,
                  worst, rss, sum(it.amount_g_mm for it in items), verdict, SUMMATION_RULE, SUMMATION_MARK,
                  _BUDGET_SOURCE, tuple(warnings))
