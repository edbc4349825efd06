"""Tolerances for rigid rotors: balance quality grades, e_per and U_per, allocation to planes, other
published criteria, and the check of measured residuals against the allowances.

Sources and marks (as in the project's domain notes): S stated in a published source, H stated in a
secondary reproduction, M from memory, D derived here by statics or algebra, CP common shop practice.

* Grade, e_per and U_per: ISO 21940-11:2016, clauses 6.3 and 6.3.3 [S]; the shop constant
  60000/(2*pi) = 9549.297 [D].
* Lever rule to the two bearing planes: ISO 21940-11:2016, 7.2 [M for the clause wording]; each share kept
  between 0.3 and 0.7 (never more than 7 : 3) per Bloch & Geitner, *Machinery Component Maintenance and
  Repair*, ch. 6 [S; the numbers in ISO form M]. The bounds can be overridden (``min_share``).
* Transfer from the bearing planes to correction planes at any axial position: rigid-body statics [D]. It
  gives the lever rule for planes at the bearings and the d/b reduction of Bloch & Geitner for planes
  outside them.
* One correction plane (a narrow, disc-like rotor, ISO 21940-11:2016, 4.5.2): the whole U_per is that
  plane's tolerance (ISO 21940-11:2016, 7.1 and 8.2, clause numbers from the standard's contents; the rule
  as stated in secondary notes on disc-shaped rotors [H]). The statics transfer is kept as a stricter
  option (``one_plane_rule="statics"``). When the one-plane conditions are doubtful (a long rotor, a plane
  far from the centre of mass) the report carries :class:`OnePlaneDoubt` records naming the parameters to
  check; the limits used are rules of thumb [CP], overridable.
* Static and couple tolerances for narrow or overhung rotors: the rule to use them is Bloch & Geitner
  ch. 6 [S]; the split formula is statics [D]. No figure here is the standard's own for that case.
* API 4W/N per plane: API Std 617, 7th ed., Annex B [S]; SI form 6350 W/N [H, D].
* MIL-STD-167-1 (1974) by speed range [H]: 0.177 W below 150 r/min, 4000 W/N^2 to 1000 r/min, 4 W/N above.
* Acceptance with an error allowance Delta U: ISO 21940-14:2012 as recalled [M]; Delta U defaults to 0.

Every public function takes pint quantities or strings with units (``"412 kg"``, ``"1480 rpm"``); the array
functions (:func:`permissible_unbalance`, :func:`specific_unbalance`, :func:`bearing_allowances`) also take
quantity arrays and convert them once at the boundary.
"""

from __future__ import annotations

import functools
import math
import re
from dataclasses import dataclass
from typing import Iterable, Mapping

import numpy as np

from toolkit import catalog
from toolkit.errors import BadInput, Infeasible
from toolkit.units import KINDS, Q_, magnitude, quantity, registry, speed_rpm
from toolkit.vectors import parse_vector

__all__ = [
    "SHOP_CONSTANT",
    "DEFAULT_MIN_SHARE",
    "CRITERIA",
    "Grade",
    "grades",
    "parse_grade",
    "specific_unbalance",
    "permissible_unbalance",
    "bearing_allowances",
    "BearingAllocation",
    "allocate_to_bearings",
    "transfer_to_planes",
    "StaticCouple",
    "static_couple_allowance",
    "api_allowance",
    "mil_std_167_allowance",
    "CriterionResult",
    "PlaneAllowance",
    "ResidualCheck",
    "check_residuals",
    "ToleranceReport",
    "tolerance_report",
    "ONE_PLANE_RULES",
    "OnePlane",
    "OnePlaneDoubt",
    "one_plane_allowance",
    "parse_named",
]

#: U_per [g*mm] = SHOP_CONSTANT * G [mm/s] * m [kg] / n [r/min]; 60000/(2*pi) because Omega = 2*pi*n/60
#: and 1 kg = 1000 g. [D] (ISO 21940-11:2016, 6.3.3 gives the shop form with 9549)
SHOP_CONSTANT = 60000.0 / (2.0 * math.pi)

#: Lower bound of a bearing plane's share of U_per; the upper bound is 1 - this. Bloch & Geitner ch. 6
#: ("never more than 7 : 3") [S]; the 0.3/0.7 numbers in the standard's form are [M]. Overridable.
DEFAULT_MIN_SHARE = 0.3

#: API residual unbalance per plane: 4 oz*in per lb of journal load, times r/min. API Std 617, 7th ed.,
#: Annex B [S]. In SI 4 oz*in/lb = 6350 g*mm/kg exactly (1 lb = 16 oz, 1 in = 25.4 mm) [D].
API_OZ_IN_PER_LB = 4.0

_G_MM = "g*mm"
_ISO_SOURCE = "ISO 21940-11:2016, 6.3.3"
_LEVER_SOURCE = ("ISO 21940-11:2016, 7.2 (clause wording from memory [M]); share bounds: Bloch & Geitner, "
                 "Machinery Component Maintenance and Repair, ch. 6")
_STATICS = "rigid-body statics, derived here [D], not a clause of the standard"


# -- balance quality grades ------------------------------------------------------------------------

@dataclass(frozen=True)
class Grade:
    """A balance quality grade G [mm/s] with the kinds of machinery it usually serves and its source."""

    mm_s: float
    machinery: str
    mark: str
    source: str
    custom: bool = False

    @property
    def label(self) -> str:
        """``"G 6.3"``; a custom grade reads ``"G 5 (custom)"``."""
        return f"G {self.mm_s:g}" + (" (custom)" if self.custom else "")

    def to_dict(self) -> dict:
        return {"grade_mm_s": self.mm_s, "label": self.label, "machinery": self.machinery,
                "mark": self.mark, "source": self.source, "custom": self.custom}


def _mark(cell: str) -> str:
    cell = cell.strip().upper()
    if cell not in ("S", "H", "M", "D", "CP"):
        raise ValueError(f"{cell!r} is not a mark; use S, H, M, D or CP")
    return cell


GRADE_SCHEMA = {"grade_mm_s": catalog.number, "machinery": catalog.text, "mark": _mark}


def grades(table: str = "grades") -> tuple[Grade, ...]:
    """The balance quality grades of ISO 21940-11:2016 (table ``tables/grades.csv``), finest first.

    Each row carries its source: every grade of the series, G 0.4 to G 4000, is confirmed in secondary
    reproductions of the standard's table [H] (G 0.4 to G 6.3 in tooling makers' catalogues that quote
    ISO 1940-1 / ISO 21940-11). ``table`` may name a shop's own CSV file with the same columns.

    >>> [g.label for g in grades()][:4]
    ['G 0.4', 'G 1', 'G 2.5', 'G 6.3']
    """
    if table == "grades":
        return _builtin_grades()
    return _grades_from(table)


@functools.lru_cache(maxsize=1)
def _builtin_grades() -> tuple[Grade, ...]:
    return _grades_from("grades")


def _grades_from(table) -> tuple[Grade, ...]:
    rows = catalog.load(table, GRADE_SCHEMA)
    return tuple(sorted((Grade(r["grade_mm_s"], r["machinery"], r["mark"], r["source"]) for r in rows),
                        key=lambda g: g.mm_s))


_GRADE_TEXT = re.compile(r"^G?\s*((?:[0-9]+\.?[0-9]*|\.[0-9]+))\s*(?:mm\s*/\s*s)?$", re.IGNORECASE)
_GRADE_HELP = "write e.g. 'G6.3', 'G 6.3', '6.3' or '6.3 mm/s'"


def parse_grade(value, *, custom: bool = False, table: str = "grades", name: str = "grade") -> Grade:
    """A balance quality grade from ``"G6.3"``, ``"G 6.3"``, ``"6.3"``, ``"6.3 mm/s"``, a quantity in
    [length]/[time], or the grade number.

    A value off the ISO 21940-11 series is refused unless ``custom=True``; a custom grade is marked as such
    (``Grade.custom``) and its source says the user gave it.

    >>> parse_grade("G6.3").mm_s, parse_grade("g 2.5").mm_s, parse_grade("0.25 in/s", custom=True).label
    (6.3, 2.5, 'G 6.35 (custom)')
    """
    if isinstance(value, Grade):
        return value
    if isinstance(value, bool):
        raise BadInput(f"{name}: {value!r} is not a balance quality grade; {_GRADE_HELP}")
    if isinstance(value, (int, float)):
        g = float(value)
        shown = value
    elif isinstance(value, str):
        shown = value.strip()
        match = _GRADE_TEXT.match(shown)
        if match:
            g = float(match.group(1))
        else:
            try:
                g = magnitude(shown, "grade", "mm/s", name)
            except BadInput:
                raise BadInput(f"{name}: {value!r} is not a balance quality grade; {_GRADE_HELP}") from None
            g = float(g)
    else:
        g = float(magnitude(value, "grade", "mm/s", name))
        shown = f"{g:g} mm/s"
    if not math.isfinite(g) or g <= 0:
        raise BadInput(f"{name}: {shown!r} must be a finite grade greater than zero; {_GRADE_HELP}")
    low, high = KINDS["grade"].lower, KINDS["grade"].upper
    if not low <= g <= high:
        raise BadInput(f"{name}: {shown!r} is outside the grades read, G {low:g} to G {high:g} (bounds of our "
                       f"own [CP]); {_GRADE_HELP}")
    series = grades(table)
    for row in series:
        if abs(row.mm_s - g) <= 1e-6 * g:
            return row
    if custom:
        g = round(g, 6)
        return Grade(g, "custom grade given by the user", "custom",
                     "custom grade given by the user; not a grade of the ISO 21940-11 series", custom=True)
    allowed = ", ".join(f"{r.mm_s:g}" for r in series)
    raise BadInput(f"{name}: {shown!r} is not in the ISO 21940-11 series (G {allowed}); to use a value off "
                   f"the series ask for a custom grade (--custom-grade)")


# -- boundary helpers (arrays convert once, validation by reductions) ------------------------------

@functools.lru_cache(maxsize=None)
def _unit(name: str):
    """A parsed pint Unit, cached: building quantities from unit strings re-parses them every time."""
    return registry().Unit(name)


def _is_array_quantity(value) -> bool:
    return isinstance(value, registry().Quantity) and isinstance(value.magnitude, np.ndarray)


def _mag(value, kind: str, unit: str, name: str, *, positive: bool = True):
    """Magnitude of a scalar (fully checked) or of an array quantity (dimension checked here, values
    checked later by :func:`_require_positive` with reductions, which keeps arrays fast)."""
    if _is_array_quantity(value):
        if not value.check(KINDS[kind].dimensionality):
            quantity(value, kind, name)  # raises the standard message
        if kind == "speed":
            _factor, root = registry().get_root_units(value.units)
            return value.m_as(_unit("rpm" if "radian" in root._units else "1/min"))
        return value.m_as(_unit(unit))
    if kind == "speed":
        return speed_rpm(value, name, positive=positive)
    return magnitude(value, kind, unit, name, positive=positive)


def _require_positive(result, signed, *inputs) -> None:
    """Raise BadInput naming the first input with a value that is not finite and greater than zero.

    Cheap check first, by reductions: ``result`` (a product or quotient of the inputs) must lie in
    (0, inf) and ``signed`` (the one input whose sign the result does not fix, or None) must be > 0; NaN
    fails both comparisons. Only on failure are the inputs searched, to name the field and element.
    ``inputs`` are ``(name, magnitudes, unit)``; scalars were already checked at the boundary.
    """
    if not any(isinstance(arr, np.ndarray) for _n, arr, _u in inputs):
        return
    if np.min(result) > 0 and np.max(result) < math.inf and (signed is None or np.min(signed) > 0):
        return
    for name, arr, unit in inputs:
        a = np.asarray(arr, dtype=float)
        bad = ~(np.isfinite(a) & (a > 0))
        if bad.any():
            i = int(np.flatnonzero(bad)[0])
            raise BadInput(f"{name}: element {i} is {a.flat[i]!r} {unit}; every value must be a finite "
                           f"number greater than zero")
    raise BadInput(f"the inputs give a result out of the floating-point range ({np.min(result)!r} to "
                   f"{np.max(result)!r}); check the units")


# -- e_per and U_per ---------------------------------------------------------------------------------

def specific_unbalance(grade, speed, *, custom_grade: bool = False):
    """Permissible residual specific unbalance e_per of a rigid rotor.

    ISO 21940-11:2016, 6.3: G = e_per * Omega, so e_per [um] = 1000 * G [mm/s] / Omega [rad/s]
    = 9549.297 * G / n [r/min]. (e_per in um equals U_per/m in g*mm/kg.)

    Parameters: grade (see :func:`parse_grade`); speed : Quantity [1/time], maximum service speed, scalar
    or array. Returns a Quantity [um] of the same shape. Valid for rigid rotors; speed must be > 0.

    >>> specific_unbalance("G6.3", "3000 rpm")
    <Quantity(20.0535..., 'micrometer')>
    """
    g = parse_grade(grade, custom=custom_grade).mm_s
    n = _mag(speed, "speed", "rpm", "speed")
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        e = (SHOP_CONSTANT * g) / n
    _require_positive(e, None, ("speed", n, "rpm"))
    return Q_(e, _unit("um"))


def permissible_unbalance(grade, mass, speed, *, custom_grade: bool = False):
    """Permissible residual unbalance U_per of a rigid rotor.

    ISO 21940-11:2016, 6.3.3: U_per = 1000 * G * m / Omega, U_per [g*mm], G [mm/s], m [kg], Omega [rad/s];
    shop form U_per = 9549.297 * G * m / n with n in r/min.

    Parameters: grade (``"G6.3"``, see :func:`parse_grade`); mass : Quantity [mass], rotor mass; speed :
    Quantity [1/time], maximum service speed. mass and speed may be quantity arrays (broadcast together):
    they are converted once and computed on floats. Returns a Quantity [g*mm]. Mass and speed must be > 0.

    >>> permissible_unbalance("G6.3", "100 kg", "3000 rpm")
    <Quantity(2005.35..., 'gram * millimeter')>
    >>> permissible_unbalance("G6.3", Q_(np.array([100.0, 200.0]), "kg"), "3000 rpm").m_as("g*mm").round(1)
    array([2005.4, 4010.7])
    """
    g = parse_grade(grade, custom=custom_grade).mm_s
    m = _mag(mass, "mass", "kg", "mass")
    n = _mag(speed, "speed", "rpm", "speed")
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        u = (SHOP_CONSTANT * g) * m / n
    _require_positive(u, n, ("speed", n, "rpm"), ("mass", m, "kg"))
    return Q_(u, _unit(_G_MM))


# -- allocation to the bearing planes ----------------------------------------------------------------

def _check_min_share(min_share) -> float:
    if isinstance(min_share, bool) or not isinstance(min_share, (int, float)) or not math.isfinite(min_share) \
            or not 0.0 <= min_share <= 0.5:
        raise BadInput(f"min_share: {min_share!r} must be a number from 0 to 0.5 (default 0.3, i.e. shares "
                       f"kept between 0.3 and 0.7)")
    return float(min_share)


def _lever_shares(span, com, min_share):
    raw_a = (span - com) / span
    return raw_a, np.clip(raw_a, min_share, 1.0 - min_share)


def bearing_allowances(u_per, bearing_span, com_from_a, *, min_share: float = DEFAULT_MIN_SHARE):
    """Allowances of the two bearing planes A and B by the lever rule, each share bounded.

    ISO 21940-11:2016, 7.2 (wording [M]): U_A = U_per * L_B / L, U_B = U_per * L_A / L with L_A = com_from_a,
    L_B = L - L_A; each share kept in [min_share, 1 - min_share] (0.3/0.7, Bloch & Geitner ch. 6) so the
    larger share goes to the plane nearer the centre of mass and the ratio never exceeds 7 : 3.

    Parameters: u_per : Quantity [mass*length]; bearing_span : Quantity [length], > 0; com_from_a :
    Quantity [length], from bearing A towards B. All may be arrays. Returns (U_A, U_B) as Quantities
    [g*mm]. A centre of mass outside the span gets the bound share (see :func:`allocate_to_bearings` for a
    warning in that case).

    >>> a, b = bearing_allowances("1000 g*mm", "500 mm", "50 mm"); round(a.m_as("g*mm")), round(b.m_as("g*mm"))
    (700, 300)
    """
    low = _check_min_share(min_share)
    u = _mag(u_per, "unbalance", _G_MM, "u_per")
    span = _mag(bearing_span, "length", "mm", "bearing_span")
    com = _mag(com_from_a, "length", "mm", "com_from_a", positive=False)
    _raw, share_a = _lever_shares(span, com, low)
    u_a = u * share_a
    _require_positive(u, None, ("u_per", u, _G_MM))
    _require_positive(span, None, ("bearing_span", span, "mm"))
    if isinstance(com, np.ndarray) and not math.isfinite(np.sum(com)):
        raise BadInput("com_from_a: every value must be a finite length")
    return Q_(u_a, _unit(_G_MM)), Q_(u - u_a, _unit(_G_MM))


@dataclass(frozen=True)
class BearingAllocation:
    """U_per split to bearing planes A and B by the bounded lever rule."""

    u_per: object
    bearing_span: object
    com_from_a: object
    u_a: object
    u_b: object
    lever_share_a: float
    share_a: float
    min_share: float
    bounded: bool
    method: str
    source: str
    warnings: tuple[str, ...] = ()

    @property
    def share_b(self) -> float:
        return 1.0 - self.share_a

    def to_dict(self) -> dict:
        return {"u_a_g_mm": self.u_a.m_as(_G_MM), "u_b_g_mm": self.u_b.m_as(_G_MM),
                "share_a": self.share_a, "share_b": self.share_b, "lever_share_a": self.lever_share_a,
                "share_bounds": [self.min_share, 1.0 - self.min_share], "bounded": self.bounded,
                "method": self.method, "source": self.source, "warnings": list(self.warnings)}


def _bounds_text(low: float) -> str:
    text = f"shares bounded to {low:.2f}-{1 - low:.2f}"
    if abs(low - DEFAULT_MIN_SHARE) > 1e-12:
        text += f" (user's bounds; default {DEFAULT_MIN_SHARE:.2f}-{1 - DEFAULT_MIN_SHARE:.2f})"
    return text


def allocate_to_bearings(u_per, bearing_span, com_from_a, *,
                         min_share: float = DEFAULT_MIN_SHARE) -> BearingAllocation:
    """The bounded lever rule for one rotor, with the method, the bounds used and warnings.

    Same formula as :func:`bearing_allowances` (ISO 21940-11:2016, 7.2 [M wording]; bounds Bloch & Geitner
    ch. 6, overridable with ``min_share``). Warns when a bound changed the lever-rule shares and when the
    centre of mass lies outside the bearings (an overhung rotor: consider static and couple tolerances).

    >>> r = allocate_to_bearings("1000 g*mm", "500 mm", "200 mm"); r.u_a, r.bounded
    (<Quantity(600.0, 'gram * millimeter')>, False)
    """
    low = _check_min_share(min_share)
    u = quantity(u_per, "unbalance", "u_per", positive=True)
    span = quantity(bearing_span, "length", "bearing_span", positive=True)
    com = quantity(com_from_a, "length", "com_from_a")
    _check_axial(com.m_as("mm"), span.m_as("mm"), "com_from_a")
    raw, share = _lever_shares(span.m_as("mm"), com.m_as("mm"), low)
    raw, share = float(raw), float(share)
    bounded = abs(raw - share) > 1e-12
    warnings = []
    if bounded:
        warnings.append(f"the lever rule gave shares {raw:.2f}/{1 - raw:.2f}; the bound {low:.2f}-"
                        f"{1 - low:.2f} was applied")
    if not 0.0 <= com.m_as("mm") <= span.m_as("mm"):
        warnings.append("the centre of mass lies outside the bearings (overhung rotor): the lever rule is "
                        "meant for inboard rotors; consider static and couple tolerances (--static-share)")
    u_g = u.m_as(_G_MM)
    method = f"lever rule U_A = U_per*L_B/L, U_B = U_per*L_A/L, {_bounds_text(low)}"
    return BearingAllocation(u, span, com, Q_(u_g * share, _G_MM), Q_(u_g * (1 - share), _G_MM), raw, share,
                             low, bounded, method, _LEVER_SOURCE, tuple(warnings))


#: Correction planes or a centre of mass farther than this many bearing spans outside the bearings are
#: refused as a likely typing error (our sanity bound [CP]).
AXIAL_LIMIT_SPANS = 3.0


def _check_axial(z_mm: float, span_mm: float, name: str) -> None:
    if not -AXIAL_LIMIT_SPANS * span_mm <= z_mm <= (1 + AXIAL_LIMIT_SPANS) * span_mm:
        raise BadInput(f"{name}: {z_mm:g} mm is more than {AXIAL_LIMIT_SPANS:g} bearing spans "
                       f"({span_mm:g} mm) outside the bearings; positions are measured from bearing A "
                       f"towards B, allowed {-AXIAL_LIMIT_SPANS * span_mm:g} to "
                       f"{(1 + AXIAL_LIMIT_SPANS) * span_mm:g} mm")


# -- transfer to correction planes ----------------------------------------------------------------

def transfer_to_planes(u_a, u_b, bearing_span, positions) -> tuple:
    """Per-plane tolerances for one or two correction planes at any axial positions, by statics.

    Derived here [D]: with bearing A at z = 0 and B at z = d, residuals U_i in planes at z_i load the
    bearing planes as U_A = sum U_i (d - z_i)/d and U_B = sum U_i z_i/d. The tolerances T_i = lam * w_i,
    with weights w = (U_A, U_B) for two planes (the plane nearer A takes A's weight) and w = (1,) for one,
    and lam = min(U_A / sum |d - z_i| w_i / d, U_B / sum |z_i| w_i / d), keep both bearing planes within
    their allowances for residuals at any angles. Planes at the bearings give T = (U_A, U_B), the lever
    rule; symmetric planes b apart outside the bearings give a total of (U_A + U_B) * d/b, the reduction of
    Bloch & Geitner ch. 6.

    Parameters: u_a, u_b : Quantity [mass*length]; bearing_span : Quantity [length]; positions : one or two
    Quantities [length] from bearing A towards B. Returns a tuple of Quantities [g*mm] in the given order.

    >>> [round(t.m_as("g*mm")) for t in transfer_to_planes("500 g*mm", "500 g*mm", "400 mm",
    ...                                                    ["-50 mm", "450 mm"])]
    [400, 400]
    """
    ua = magnitude(u_a, "unbalance", _G_MM, "u_a", positive=True)
    ub = magnitude(u_b, "unbalance", _G_MM, "u_b", positive=True)
    d = magnitude(bearing_span, "length", "mm", "bearing_span", positive=True)
    z = [float(magnitude(p, "length", "mm", f"plane {i + 1} position")) for i, p in enumerate(positions)]
    return tuple(Q_(t, _G_MM) for t in _transfer(ua, ub, d, z))


def _planes_together(z1: float, z2: float, d: float) -> str:
    """Why two plane positions (mm) cannot be told apart on a bearing span d (mm): both printed exactly.

    >>> _planes_together(260.0, 930.0, 1e20)
    'planes: the correction planes at 260 mm and 930 mm are closer than a billionth of the bearing span (1e+20 mm); give positions further apart or check the span'
    """
    if z1 == z2:
        return f"planes: both correction planes are at {z1:.12g} mm; give two different positions"
    return (f"planes: the correction planes at {z1:.12g} mm and {z2:.12g} mm are closer than a billionth of the "
            f"bearing span ({d:.6g} mm); give positions further apart or check the span")


def _transfer(ua: float, ub: float, d: float, z: list[float]) -> list[float]:
    if len(z) not in (1, 2):
        raise BadInput(f"planes: {len(z)} correction planes given; a rigid rotor takes one or two")
    if len(z) == 2 and abs(z[0] - z[1]) <= 1e-9 * d:
        raise BadInput(_planes_together(z[0], z[1], d))
    if len(z) == 1:
        w = [1.0]
    else:
        order = sorted(range(2), key=lambda i: z[i])
        w = [0.0, 0.0]
        w[order[0]], w[order[1]] = ua, ub
    load_a = sum(abs(d - zi) * wi for zi, wi in zip(z, w)) / d
    load_b = sum(abs(zi) * wi for zi, wi in zip(z, w)) / d
    lam = min(ua / load_a if load_a > 0 else math.inf, ub / load_b if load_b > 0 else math.inf)
    return [lam * wi for wi in w]


# -- one correction plane ------------------------------------------------------------------------

_ONE_PLANE_SOURCE = ("ISO 21940-11:2016, 7.1 and 8.2 (clause numbers from the standard's contents); the rule as "
                     "stated in secondary notes on disc-shaped rotors [H]")

#: The rules for the tolerance of a single correction plane: name -> (method, source).
ONE_PLANE_RULES = {
    "whole": ("one correction plane: the whole U_per is that plane's tolerance", _ONE_PLANE_SOURCE),
    "statics": ("one correction plane: the bearing-plane shares transferred to the plane by " + _STATICS
                + " (stricter than the standard's one-plane rule)", _STATICS),
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
        return {"plane": self.plane, "rule": self.rule, "u_per_g_mm": self.used.m_as(_G_MM),
                "whole_g_mm": self.whole.m_as(_G_MM), "statics_g_mm": self.statics.m_as(_G_MM),
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
        raise BadInput(f"one_plane_rule: {rule!r} is not known; use {' or '.join(ONE_PLANE_RULES)}")
    if isinstance(length_ratio, bool) or not isinstance(length_ratio, (int, float)) \
            or not math.isfinite(length_ratio) or length_ratio <= 0:
        raise BadInput(f"one_plane_length_ratio: {length_ratio!r} must be a number greater than zero (default "
                       f"{ONE_PLANE_LENGTH_RATIO:g})")
    u = magnitude(u_per, "unbalance", _G_MM, "u_per", positive=True)
    ua = magnitude(u_a, "unbalance", _G_MM, "u_a", positive=True)
    ub = magnitude(u_b, "unbalance", _G_MM, "u_b", positive=True)
    d = magnitude(bearing_span, "length", "mm", "bearing_span", positive=True)
    com = magnitude(com_from_a, "length", "mm", "com_from_a")
    z = magnitude(position, "length", "mm", "plane position")
    length = None if rotor_length is None else magnitude(rotor_length, "length", "mm", "rotor_length",
                                                         positive=True)
    diameter = None if correction_diameter is None else magnitude(correction_diameter, "length", "mm",
                                                                  "correction_diameter", positive=True)
    statics, = _transfer(ua, ub, d, [z])
    method, source = ONE_PLANE_RULES[rule]
    return OnePlane(plane, rule, Q_(u, _G_MM), Q_(statics, _G_MM), method, source,
                    tuple(_one_plane_doubts(d, com, z, length, diameter, float(length_ratio), rule)))


# -- static and couple tolerances ------------------------------------------------------------------

@dataclass(frozen=True)
class StaticCouple:
    """Static (resultant) and couple tolerances for a narrow or overhung rotor."""

    static_share: float
    static: object          # Quantity [g*mm] at the centre-of-mass plane
    couple_per_plane: object  # Quantity [g*mm], +/- in each correction plane
    couple_moment: object   # Quantity [g*mm*mm] = couple_per_plane * plane distance
    max_static_share: float
    planes: tuple[str, str]
    method: str
    source: str

    def to_dict(self) -> dict:
        return {"static_share": self.static_share, "static_g_mm": self.static.m_as(_G_MM),
                "couple_per_plane_g_mm": self.couple_per_plane.m_as(_G_MM),
                "couple_moment_g_mm2": self.couple_moment.m_as("g*mm**2"),
                "max_static_share": self.max_static_share, "planes": list(self.planes),
                "method": self.method, "source": self.source}


def static_couple_allowance(u_a, u_b, bearing_span, com_from_a, positions, static_share: float,
                            names: tuple[str, str] = ("I", "II")) -> StaticCouple:
    """Static and couple tolerances from bearing-plane allowances and a chosen static share.

    Rule to use them (planes closer than about a third of the span, or overhung): Bloch & Geitner ch. 6 [S].
    Split by statics [D]: static S = share * (U_A + U_B) at the centre-of-mass plane z_s; couple per plane
    U_c = (d/b) * min(U_A - S*|d - z_s|/d, U_B - S*|z_s|/d), b the correction-plane distance. Not the
    standard's own figures for this case.

    Parameters: u_a, u_b : Quantity [mass*length]; bearing_span, com_from_a : Quantity [length];
    positions : two Quantities [length]; static_share : fraction in (0, 1). Raises Infeasible when the
    static share leaves no couple allowance, naming the largest share that does.

    >>> sc = static_couple_allowance("500 g*mm", "500 g*mm", "400 mm", "200 mm", ["150 mm", "250 mm"], 0.5)
    >>> round(sc.static.m_as("g*mm")), round(sc.couple_per_plane.m_as("g*mm"))
    (500, 1000)
    """
    if isinstance(static_share, bool) or not isinstance(static_share, (int, float)) \
            or not 0.0 < static_share < 1.0:
        raise BadInput(f"static_share: {static_share!r} must be a fraction between 0 and 1 (exclusive), "
                       f"e.g. 0.5")
    ua = magnitude(u_a, "unbalance", _G_MM, "u_a", positive=True)
    ub = magnitude(u_b, "unbalance", _G_MM, "u_b", positive=True)
    d = magnitude(bearing_span, "length", "mm", "bearing_span", positive=True)
    zs = magnitude(com_from_a, "length", "mm", "com_from_a")
    if len(positions) != 2:
        raise BadInput(f"planes: static and couple tolerances need two correction planes, {len(positions)} "
                       f"given")
    z1, z2 = (magnitude(p, "length", "mm", f"plane {i + 1} position") for i, p in enumerate(positions))
    b = abs(z2 - z1)
    if b <= 1e-9 * d:
        raise BadInput(_planes_together(z1, z2, d))
    total = ua + ub
    limits = [ua * d / abs(d - zs) if abs(d - zs) > 0 else math.inf, ub * d / abs(zs) if abs(zs) > 0 else math.inf]
    max_share = min(min(limits) / total, 1.0)
    s = static_share * total
    uc = (d / b) * min(ua - s * abs(d - zs) / d, ub - s * abs(zs) / d)
    if uc <= 0:
        raise Infeasible(f"static_share: {static_share:g} leaves no couple allowance for this geometry; "
                         f"choose a static share below {max_share:.3f}")
    method = (f"static part {static_share:g} x (U_A + U_B) at the centre-of-mass plane; couple part the largest "
              f"that keeps both bearing planes within their allowances ({_STATICS})")
    return StaticCouple(float(static_share), Q_(s, _G_MM), Q_(uc, _G_MM), Q_(uc * b, "g*mm**2"), max_share,
                        tuple(names), method, "Bloch & Geitner ch. 6 (when to use the static/couple form); "
                        "split by statics [D]")


# -- other criteria --------------------------------------------------------------------------------

def api_allowance(journal_load, speed):
    """API residual unbalance per plane, U_max = 4 W / N [oz*in] (W journal static load [lb], N maximum
    continuous speed [r/min]); SI 6350 W/N g*mm with W in kg.

    API Std 617, 7th ed., Annex B [S]; SI form [H, D]. journal_load is a mass (or a force, read as weight
    under standard gravity); speed : Quantity [1/time]. Returns a Quantity [g*mm].

    >>> round(api_allowance("1 lb", "1 rpm").m_as("oz*in"), 6)
    4.0
    """
    w = _journal_lb(journal_load, "journal_load")
    n = speed_rpm(speed, "speed")
    return Q_(API_OZ_IN_PER_LB * w / n, "oz*in").to(_G_MM)


def _journal_lb(value, name: str) -> float:
    try:
        return float(magnitude(value, "mass", "lb", name, positive=True))
    except BadInput:
        try:
            force = magnitude(value, "force", "N", name, positive=True)
        except BadInput:
            raise BadInput(f"{name}: {value!r} is not a journal load; give a mass such as '206 kg' or "
                           f"'450 lb' (a force such as '2 kN' is read as weight)") from None
        return float(Q_(force / 9.80665, "kg").m_as("lb"))


#: MIL-STD-167-1 (1974) speed ranges [H]: (upper speed r/min, formula text, function of W [lb], N).
MIL_STD_167_RANGES = (
    (150.0, "0.177 W (below 150 r/min)", lambda w, n: 0.177 * w),
    (1000.0, "4000 W/N^2 (150 to 1000 r/min)", lambda w, n: 4000.0 * w / n ** 2),
    (math.inf, "4 W/N (above 1000 r/min)", lambda w, n: 4.0 * w / n),
)


def mil_std_167_allowance(rotor_weight, speed) -> tuple:
    """MIL-STD-167-1 (1974) residual unbalance per plane by speed range [H]: 0.177 W oz*in below
    150 r/min, 4000 W/N^2 from 150 to 1000 r/min, 4 W/N above, W the rotor weight [lb].

    The pieces join at 150 and 1000 r/min [D]. Returns (Quantity [g*mm], range text).

    >>> u, rng = mil_std_167_allowance("1000 lb", "3600 rpm"); round(u.m_as("oz*in"), 4), rng
    (1.1111, '4 W/N (above 1000 r/min)')
    """
    w = _journal_lb(rotor_weight, "rotor weight")
    n = speed_rpm(speed, "speed")
    for upper, text, formula in MIL_STD_167_RANGES:
        if n < upper:
            return Q_(formula(w, n), "oz*in").to(_G_MM), text
    raise AssertionError("unreachable")  # pragma: no cover


CRITERIA = {
    "iso": ("ISO 21940-11", _ISO_SOURCE + "; allocation " + _LEVER_SOURCE),
    "api": ("API 4W/N", "API Std 617, 7th ed., Annex B"),
    "mil-std-167": ("MIL-STD-167-1", "MIL-STD-167-1 (1974), as reproduced in training notes [H]"),
}


# -- the report ------------------------------------------------------------------------------------

@dataclass(frozen=True)
class CriterionResult:
    """One criterion's allowances: per bearing plane and per reported plane."""

    name: str
    label: str
    method: str
    source: str
    planes: tuple[tuple[str, object], ...]  # (plane name, Quantity [g*mm])
    notes: tuple[str, ...] = ()

    def allowance(self, plane: str):
        return dict(self.planes)[plane]

    def to_dict(self, strictest: Mapping[str, str] | None = None) -> dict:
        strictest = strictest or {}
        return {"name": self.name, "label": self.label, "method": self.method, "source": self.source,
                "notes": list(self.notes),
                "planes": [{"name": p, "u_per_g_mm": u.m_as(_G_MM), "u_per_oz_in": u.m_as("oz*in"),
                            "strictest": strictest.get(p) == self.name} for p, u in self.planes]}


@dataclass(frozen=True)
class PlaneAllowance:
    """The governing (strictest) allowance of one plane, with its method and source."""

    name: str
    u_per: object             # Quantity [g*mm]
    criterion: str
    method: str
    source: str
    position: object = None   # Quantity [mm] for a correction plane, None for a bearing plane
    by_criterion: tuple[tuple[str, object], ...] = ()

    def to_dict(self) -> dict:
        return {"name": self.name, "u_per_g_mm": self.u_per.m_as(_G_MM), "u_per_oz_in": self.u_per.m_as("oz*in"),
                "criterion": self.criterion, "method": self.method, "source": self.source,
                "position_mm": None if self.position is None else float(self.position.m_as("mm")),
                "by_criterion": {c: u.m_as(_G_MM) for c, u in self.by_criterion}}


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
        return {"plane": self.plane, "residual_g_mm": self.residual.m_as(_G_MM),
                "residual_oz_in": self.residual.m_as("oz*in"), "angle_deg": self.angle_deg,
                "allowance_g_mm": self.allowance.m_as(_G_MM), "limit_g_mm": self.limit.m_as(_G_MM),
                "error_allowance_g_mm": self.error_allowance.m_as(_G_MM),
                "margin_g_mm": self.margin.m_as(_G_MM), "margin_percent": self.margin_percent,
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


def check_residuals(allowances: Mapping[str, object], residuals, *, error_allowance=None,
                    stage: str = "after-balancing") -> tuple[ResidualCheck, ...]:
    """Check measured residuals (amount and angle) per plane against the planes' allowances.

    Rule [M] (ISO 21940-14:2012 as recalled): directly after balancing a plane passes when
    U_res <= U_per - dU; at a later check it fails only when U_res > U_per + dU. dU (``error_allowance``,
    Quantity [mass*length]) defaults to 0, when both rules read U_res <= U_per. The rule applied is in
    every result.

    Parameters: allowances : mapping plane name -> Quantity [mass*length]; residuals : mapping plane name
    -> ``"AMOUNT@ANGLE"`` (``"180 g*mm@40"``) or (Quantity, angle_deg), or an iterable of ``"NAME=AMOUNT@ANGLE"``
    strings; stage : ``"after-balancing"`` or ``"later-check"``.

    >>> c, = check_residuals({"A": "600 g*mm"}, {"A": "450 g*mm@40"}); c.passed, round(c.margin.m_as("g*mm"))
    (True, 150)
    """
    delta = 0.0 if error_allowance is None else float(
        magnitude(error_allowance, "unbalance", _G_MM, "error_allowance", nonnegative=True))
    rule, sign = _rule(delta, stage)
    if not isinstance(residuals, Mapping):
        residuals = dict(parse_named(r, "residual", "--residual") for r in residuals)
    checks = []
    for name, value in residuals.items():
        if name not in allowances:
            known = ", ".join(allowances) or "none (give the rotor geometry or journal loads)"
            raise BadInput(f"--residual: plane {name!r} is not known; planes: {known}")
        if isinstance(value, str):
            amount, angle = parse_vector(value, "unbalance", f"--residual {name}")
        else:
            amount, angle = value
            amount = quantity(amount, "unbalance", f"--residual {name}", nonnegative=True)
        allowed = magnitude(allowances[name], "unbalance", _G_MM, f"allowance of {name}", positive=True)
        res = amount.m_as(_G_MM)
        limit = allowed + sign
        passed = res <= limit
        checks.append(ResidualCheck(name, Q_(res, _G_MM), float(angle), Q_(allowed, _G_MM), Q_(limit, _G_MM),
                                    Q_(delta, _G_MM), rule, bool(passed)))
    return tuple(checks)


_NAME = re.compile(r"^[A-Za-z0-9][A-Za-z0-9 _.\-]{0,39}$")


def parse_named(text, kind: str, option: str):
    """Split ``NAME=VALUE`` (``"I=-120 mm"``, ``"A=206 kg"``, ``"I=180 g*mm@40"``); return (name, value
    text). Names are 1-40 letters, digits, spaces, ``_``, ``.`` or ``-``, starting with a letter or digit.

    >>> parse_named("I = -120 mm", "plane", "--plane")
    ('I', '-120 mm')
    """
    if not isinstance(text, str) or "=" not in text:
        raise BadInput(f"{option}: {text!r} is malformed; write NAME=VALUE, e.g. "
                       f"{_NAMED_EXAMPLES.get(kind, 'I=-120 mm')!r}")
    name, value = (part.strip() for part in text.split("=", 1))
    if not _NAME.match(name) or not value:
        raise BadInput(f"{option}: {text!r} is malformed; write NAME=VALUE with a short name, e.g. "
                       f"{_NAMED_EXAMPLES.get(kind, 'I=-120 mm')!r}")
    return name, value


_NAMED_EXAMPLES = {"plane": "I=-120 mm", "journal load": "A=206 kg", "residual": "I=180 g*mm@40"}


@dataclass(frozen=True)
class ToleranceReport:
    """Everything the tolerance of one rotor needs: inputs, ISO U_per, per-plane allowances by each
    criterion with the strictest marked, optional static/couple form, residual checks and warnings."""

    grade: Grade
    mass: object
    speed_rpm: float
    e_per: object
    u_per: object
    bearing_span: object
    com_from_a: object
    bearings: BearingAllocation | None
    criteria: tuple[CriterionResult, ...]
    planes: tuple[PlaneAllowance, ...]
    static_couple: StaticCouple | None
    checks: tuple[ResidualCheck, ...]
    warnings: tuple[str, ...]
    method: str = f"U_per = 1000*G*m/Omega ({_ISO_SOURCE})"
    source: str = _ISO_SOURCE
    one_plane: OnePlane | None = None  # one correction plane: both rules, the one used, the doubts

    @property
    def passed(self) -> bool | None:
        """True/False when residuals were checked, else None."""
        return None if not self.checks else all(c.passed for c in self.checks)

    def allowances(self) -> dict:
        """Plane name -> governing allowance (Quantity [g*mm]); ``rotor`` is the whole-rotor ISO U_per."""
        out = {p.name: p.u_per for p in self.planes}
        out.setdefault("rotor", self.u_per)
        return out

    def to_dict(self) -> dict:
        strictest = {p.name: p.criterion for p in self.planes}
        return {
            "grade_mm_s": self.grade.mm_s, "grade": self.grade.label, "custom_grade": self.grade.custom,
            "grade_source": self.grade.source, "speed_rpm": self.speed_rpm,
            "mass_kg": float(self.mass.m_as("kg")), "mass_lb": float(self.mass.m_as("lb")),
            "e_per_um": self.e_per.m_as("um"), "u_per_g_mm": self.u_per.m_as(_G_MM),
            "u_per_oz_in": self.u_per.m_as("oz*in"), "method": self.method, "source": self.source,
            "bearing_span_mm": None if self.bearing_span is None else float(self.bearing_span.m_as("mm")),
            "com_from_a_mm": None if self.com_from_a is None else float(self.com_from_a.m_as("mm")),
            "bearing_allocation": None if self.bearings is None else self.bearings.to_dict(),
            "planes": [p.to_dict() for p in self.planes],
            "criteria": [c.to_dict(strictest) for c in self.criteria],
            "static_couple": None if self.static_couple is None else self.static_couple.to_dict(),
            "one_plane": None if self.one_plane is None else self.one_plane.to_dict(),
            "checks": [c.to_dict() for c in self.checks], "passed": self.passed,
            "warnings": list(self.warnings),
        }


def _as_pairs(items, kind: str, option: str) -> list[tuple[str, object]]:
    if items is None:
        return []
    if isinstance(items, Mapping):
        pairs = list(items.items())
    else:
        pairs = [parse_named(i, kind, option) if isinstance(i, str) else tuple(i) for i in items]
    names = [n for n, _v in pairs]
    dupes = sorted({n for n in names if names.count(n) > 1})
    if dupes:
        raise BadInput(f"{option}: name {dupes[0]!r} given more than once")
    return pairs


def tolerance_report(grade, mass, speed, *, custom_grade: bool = False, bearing_span=None, com_from_a=None,
                     planes=None, static_share: float | None = None, criteria: Iterable[str] = ("iso",),
                     journal_loads=None, min_share: float = DEFAULT_MIN_SHARE, residuals=None,
                     error_allowance=None, check_stage: str = "after-balancing", one_plane_rule: str = "whole",
                     rotor_length=None, correction_diameter=None,
                     one_plane_length_ratio: float = ONE_PLANE_LENGTH_RATIO) -> ToleranceReport:
    """The tolerance of one rotor, per plane, by one or more criteria, with optional residual checks.

    Whole rotor: U_per and e_per (ISO 21940-11:2016, 6.3.3). Bearing planes A and B: ISO by the bounded
    lever rule (geometry, or the journal loads' ratio, which equals L_B/L by statics [D]); API 4W/N from
    each journal load (or loads from the geometry by statics); MIL-STD-167-1 per plane with the rotor
    weight. Correction planes (``planes``, name -> position from bearing A towards B): each criterion's
    bearing-plane allowances transferred by statics (:func:`transfer_to_planes`). The strictest criterion
    per plane governs (``report.planes``). One correction plane: by ISO the whole U_per is its tolerance
    (``one_plane_rule="whole"``, default; ISO 21940-11:2016, 7.1 and 8.2 [H]) or, as a stricter option,
    the statics transfer (``"statics"``); ``report.one_plane`` has both values and the doubts about the
    one-plane conditions (see :func:`one_plane_allowance`; ``rotor_length`` and ``correction_diameter``
    feed its length check). With ``static_share`` (two planes), static and couple tolerances from the
    governing bearing-plane allowances, and they govern the plane allowances: each plane's allowance is
    the largest T with 2T within the static part and T(|z1 - z_s| + |z2 - z_s|)/b within the couple part
    per plane, so residuals within T in both planes keep both parts within their tolerances [D].

    Parameters: grade, mass [mass], speed [1/time] as in :func:`permissible_unbalance`; bearing_span,
    com_from_a : Quantity [length]; planes : mapping or ``"NAME=POSITION"`` strings; journal_loads : mapping
    ``{"A": mass, "B": mass}`` or ``"A=206 kg"`` strings; criteria : names from :data:`CRITERIA`;
    min_share : lever bound (default 0.3 [M]); residuals, error_allowance, check_stage : see
    :func:`check_residuals`.

    >>> r = tolerance_report("G6.3", "412 kg", "1480 rpm", bearing_span="900 mm", com_from_a="400 mm")
    >>> [(p.name, round(p.u_per.m_as("g*mm"))) for p in r.planes]
    [('A', 9304), ('B', 7443)]
    """
    g = parse_grade(grade, custom=custom_grade)
    m = quantity(mass, "mass", "mass", positive=True)
    n = float(speed_rpm(speed, "speed"))
    low = _check_min_share(min_share)
    names = []
    if isinstance(criteria, str):
        criteria = (criteria,)
    for c in criteria:
        key = str(c).strip().lower()
        if key not in CRITERIA:
            raise BadInput(f"--criterion: {c!r} is not known; use {', '.join(CRITERIA)}")
        if key not in names:
            names.append(key)
    if not names:
        raise BadInput(f"--criterion: none given; use {', '.join(CRITERIA)}")
    u_per = permissible_unbalance(g, m, Q_(n, "rpm"))
    e_per = specific_unbalance(g, Q_(n, "rpm"))
    u = u_per.m_as(_G_MM)
    warnings: list[str] = []

    span = None if bearing_span is None else quantity(bearing_span, "length", "--bearing-span", positive=True)
    com = None if com_from_a is None else quantity(com_from_a, "length", "--com-from-a")
    if (span is None) != (com is None):
        raise BadInput("--bearing-span and --com-from-a go together: give both for the lever rule, or "
                       "neither")
    loads = {}
    for name, value in _as_pairs(journal_loads, "journal load", "--journal-load"):
        if name.upper() not in ("A", "B"):
            raise BadInput(f"--journal-load: bearing {name!r} is not known; use A and B, e.g. 'A=206 kg'")
        loads[name.upper()] = _journal_lb(value, f"--journal-load {name}")
    if len(loads) == 1:
        raise BadInput("--journal-load: give both bearings, e.g. --journal-load A=206 kg --journal-load B=206 kg")
    m_lb = m.m_as("lb")
    if loads and abs(loads["A"] + loads["B"] - m_lb) > 0.05 * m_lb:
        warnings.append(f"the journal loads add up to {Q_(loads['A'] + loads['B'], 'lb').m_as('kg'):.4g} kg, "
                        f"not the rotor mass {m.m_as('kg'):.4g} kg: check them")

    plane_pairs = _as_pairs(planes, "plane", "--plane")
    positions = []
    for name, value in plane_pairs:
        if span is None:
            raise BadInput("--plane: correction-plane positions need --bearing-span and --com-from-a")
        z = quantity(value, "length", f"--plane {name}")
        _check_axial(z.m_as("mm"), span.m_as("mm"), f"--plane {name}")
        positions.append(z)
    if len(positions) > 2:
        raise BadInput(f"--plane: {len(positions)} correction planes given; a rigid rotor takes one or two")

    # bearing-plane allowances [g*mm] of every criterion
    bearings = None
    if span is not None:
        bearings = allocate_to_bearings(u_per, span, com, min_share=low)
        warnings.extend(bearings.warnings)
        share_a = bearings.share_a
        iso_method = bearings.method
    elif loads:
        raw = loads["A"] / (loads["A"] + loads["B"])
        share_a = float(np.clip(raw, low, 1 - low))
        iso_method = (f"lever rule from the journal loads (W_A/W = L_B/L by statics [D]), {_bounds_text(low)}")
        if abs(raw - share_a) > 1e-12:
            warnings.append(f"the journal loads gave shares {raw:.2f}/{1 - raw:.2f}; the bound was applied")
    else:
        share_a = None
    if loads:
        w_a, w_b, w_text = loads["A"], loads["B"], "from the journal loads given"
    elif span is not None:
        la = com.m_as("mm") / span.m_as("mm")
        w_a, w_b, w_text = m_lb * (1 - la), m_lb * la, "journal loads from the rotor mass and geometry by statics [D]"
        if not 0 <= la <= 1:
            w_a = w_b = None
    else:
        w_a = w_b = w_text = None

    at_bearings: dict[str, tuple[float, float] | None] = {}
    methods, notes = {}, {}
    for key in names:
        note = []
        if key == "iso":
            at_bearings[key] = None if share_a is None else (u * share_a, u * (1 - share_a))
            methods[key] = iso_method if share_a is not None else "U_per = 1000*G*m/Omega (whole rotor)"
        elif key == "api":
            if w_a is None:
                raise BadInput("--criterion api: needs the journal loads (--journal-load A=MASS --journal-load "
                               "B=MASS) or an inboard geometry (--bearing-span, --com-from-a)")
            at_bearings[key] = (api_allowance(Q_(w_a, "lb"), Q_(n, "rpm")).m_as(_G_MM),
                                api_allowance(Q_(w_b, "lb"), Q_(n, "rpm")).m_as(_G_MM))
            methods[key] = f"U_max = 4*W/N oz*in per plane, W the journal static load ({w_text})"
        else:
            per_plane, rng = mil_std_167_allowance(m, Q_(n, "rpm"))
            at_bearings[key] = (per_plane.m_as(_G_MM),) * 2
            methods[key] = f"MIL-STD-167-1 per plane, W the rotor weight: {rng}"
            note.append("W taken as the whole rotor weight in each plane, as our source reproduces it [H]; "
                        "check the standard's text for two-plane work")
        notes[key] = tuple(note)

    plane_names: list[str] = []
    per_criterion: dict[str, list[float]] = {}
    plane_method_suffix = ""
    if positions:
        plane_names = [n_ for n_, _v in plane_pairs]
        z = [p.m_as("mm") for p in positions]
        for key, ab in at_bearings.items():
            if ab is None:
                raise BadInput("--plane: correction planes need --bearing-span and --com-from-a")
            per_criterion[key] = _transfer(ab[0], ab[1], span.m_as("mm"), z)
        plane_method_suffix = f"; transferred to the correction planes by {_STATICS}"
        d = span.m_as("mm")
        narrow = len(z) == 2 and abs(z[0] - z[1]) < d / 3
        overhung = len(z) == 2 and (max(z) < 0 or min(z) > d)
        if (narrow or overhung) and static_share is None:
            why = "closer than a third of the bearing span" if narrow else "both outboard of one bearing"
            warnings.append(f"the correction planes are {why}: state the tolerance as static and couple parts "
                            f"(--static-share), Bloch & Geitner ch. 6")
    elif (span is not None or loads) and all(ab is not None for ab in at_bearings.values()):
        plane_names = ["A", "B"]
        per_criterion = {k: list(ab) for k, ab in at_bearings.items()}

    one_plane = None
    if len(positions) == 1 and at_bearings.get("iso") is not None:
        ab = at_bearings["iso"]
        one_plane = one_plane_allowance(u_per, Q_(ab[0], _G_MM), Q_(ab[1], _G_MM), span, com, positions[0],
                                        rule=one_plane_rule, plane=plane_names[0], rotor_length=rotor_length,
                                        correction_diameter=correction_diameter,
                                        length_ratio=one_plane_length_ratio)
        per_criterion["iso"] = [one_plane.used.m_as(_G_MM)]
    elif one_plane_rule not in ONE_PLANE_RULES:
        raise BadInput(f"one_plane_rule: {one_plane_rule!r} is not known; use {' or '.join(ONE_PLANE_RULES)}")

    results = []
    for key in names:
        label, source = CRITERIA[key]
        values = per_criterion.get(key)
        if key == "iso" and one_plane is not None:
            results.append(CriterionResult(key, label, f"{one_plane.method} ({one_plane.rule} rule)",
                                           one_plane.source if one_plane.rule == "whole"
                                           else f"{_ISO_SOURCE}; transfer {_STATICS}",
                                           ((plane_names[0], one_plane.used),), notes[key]))
            continue
        plane_list = tuple((p, Q_(v, _G_MM)) for p, v in zip(plane_names, values)) if values else ()
        if not plane_list:  # no planes known: the whole-rotor ISO figure, the per-plane figure of others
            plane_list = (("rotor", u_per),) if key == "iso" else (("each plane", Q_(at_bearings[key][0], _G_MM)),)
        results.append(CriterionResult(key, label, methods[key] + (plane_method_suffix if values else ""),
                                       source, plane_list, notes[key]))

    governing = []
    for i, pname in enumerate(plane_names):
        options = [(per_criterion[k][i], k) for k in names]
        value, key = min(options)
        res = next(r for r in results if r.name == key)
        governing.append(PlaneAllowance(pname, Q_(value, _G_MM), key, res.method, res.source,
                                        positions[i] if positions else None,
                                        tuple((k, Q_(per_criterion[k][i], _G_MM)) for k in names)))

    sc = None
    if static_share is not None:
        if len(positions) != 2:
            raise BadInput("--static-share: needs two correction planes (--plane NAME=POSITION twice) and the "
                           "geometry")
        ab = [at_bearings[k] for k in names]
        ua, ub = min(x[0] for x in ab), min(x[1] for x in ab)
        sc = static_couple_allowance(Q_(ua, _G_MM), Q_(ub, _G_MM), span, com, positions, static_share,
                                     names=tuple(plane_names))
        governing = _governed_by_static_couple(governing, sc, [p.m_as("mm") for p in positions],
                                               com.m_as("mm"))

    report = ToleranceReport(g, m, n, e_per, u_per, span, com, bearings, tuple(results), tuple(governing), sc,
                             (), tuple(warnings), one_plane=one_plane)
    if g.custom:
        report = _replace(report, warnings=report.warnings + (
            f"custom grade G {g.mm_s:g} mm/s: not a grade of the ISO 21940-11 series",))
    if residuals:
        checks = check_residuals(report.allowances(), residuals if isinstance(residuals, Mapping)
                                 else dict(_as_pairs(residuals, "residual", "--residual")),
                                 error_allowance=error_allowance, stage=check_stage)
        report = _replace(report, checks=checks)
    return report


def _governed_by_static_couple(governing, sc: StaticCouple, z: list[float], zs: float) -> list:
    """Plane allowances from static and couple tolerances [D]: residuals U1, U2 within T in both planes give
    a static part |U1 + U2| <= 2T and a couple |U1 (z1 - z_s) + U2 (z2 - z_s)| <= T (|z1 - z_s| + |z2 - z_s|),
    so T = min(S/2, U_c b / (|z1 - z_s| + |z2 - z_s|)) keeps both within their tolerances."""
    b = abs(z[1] - z[0])
    s = sc.static.m_as(_G_MM)
    uc = sc.couple_per_plane.m_as(_G_MM)
    t = min(s / 2.0, uc * b / (abs(z[0] - zs) + abs(z[1] - zs)))
    method = (f"from the static and couple tolerances (static share {sc.static_share:g}): T = min(S/2, "
              f"U_c*b/(|z1 - z_s| + |z2 - z_s|)), so residuals within T in both planes keep the static part "
              f"within {_fmt_g_mm(s)} and the couple part within {_fmt_g_mm(uc)} per plane ({_STATICS})")
    return [PlaneAllowance(p.name, Q_(t, _G_MM), p.criterion, method, sc.source, p.position, p.by_criterion)
            for p in governing]


def _fmt_g_mm(value: float) -> str:
    return f"{value:.4g} g*mm"


def _replace(obj, **changes):
    import dataclasses

    return dataclasses.replace(obj, **changes)
