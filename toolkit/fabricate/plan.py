"""Plan a correction: the operations (holes, a plate, washers) that carry it out, what they achieve after
rounding, and whether the predicted residual stays within an allowance.

The predicted residual is the vector difference between the requested correction and what the rounded
operations achieve (D). Any rounded result whose residual is within the allowance is a good result and is
taken, even the smallest plate, hole or washer when the request is smaller than it (the allowance is
passed to the fabrication functions, which otherwise refuse such a request). If the residual exceeds the
allowance, finer options are tried in order before giving up:
smaller drills of the set (drilling), thinner stock and then finer size steps down to 0.1 mm (plates).
For washers the stack chooser already takes the nearest size and count of the series; with a fixed size
there is no finer option. A plan that still misses says so in ``reason``; it is returned, not
raised, so a work order can show it.

Angles and the add/remove sense: a correction is "add U at θ" or "remove U at θ". Holes remove at the heavy
spot (θ + 180° for an "add" request); plates and washers add opposite the heavy spot (θ + 180° for a
"remove" request). Every operation states its own action and angle in words.
"""

from __future__ import annotations

import cmath
import math
from dataclasses import dataclass, field

from toolkit.errors import BadInput, Infeasible
from toolkit.fabricate import drilling, plates, washers
from toolkit.fabricate import stock as _stock
from toolkit.fabricate.drilling import Limits
from toolkit.fabricate.shared import correction_g_mm, norm_angle, offset_angle
from toolkit.formatting import Formatter
from toolkit.units import Q_, magnitude
from toolkit.vectors import parse_angle

__all__ = ["Operation", "Plan", "plan_correction", "washer_series", "METHODS", "INCH_WASHER_SERIES"]

METHODS = ("drill", "plate", "washers")

#: The washer series an inch shop stacks unless it names another (ASME B18.22.1 type A narrow rows).
INCH_WASHER_SERIES = "inch SAE"


def washer_series(units: str, size=None, series=None, table: str = "washers") -> str | None:
    """The series to stack from: the one given; else, in an inch unit system, the inch series when the
    table has it (and has ``size``, if one is given); else None (the washer module's default, ISO 7089).

    >>> washer_series("imperial"), washer_series("imperial", size="M10"), washer_series("metric")
    ('inch SAE', None, None)
    """
    from toolkit.units import unit_system

    if series is not None or not unit_system(units).inch:
        return series
    inch = {w.size.strip().lower() for w in _stock.washers(table) if w.series == INCH_WASHER_SERIES}
    if inch and (size is None or str(size).strip().lower() in inch):
        return INCH_WASHER_SERIES
    return None


@dataclass(frozen=True)
class Operation:
    """One shop operation: kind ``"hole"``, ``"plate"`` or ``"washers"``, its action (``"remove"`` or
    ``"add"``), angle [deg], mass [g], the unbalance it removes or adds [g·mm], its dimensions [mm] and a
    plain-words description."""

    kind: str
    action: str
    angle_deg: float
    mass_g: float
    unbalance_g_mm: float
    dimensions: dict
    #: the sentence in two parts, before and after the place where the angle goes ("... at 57° ...")
    words: tuple[str, str]

    @property
    def description(self) -> str:
        """The whole sentence, with the angle in it (as the calculators print it)."""
        return f"{self.words[0]} at {self.angle_deg:g}°{self.words[1]}"

    @property
    def without_angle(self) -> str:
        """The sentence without the angle, for a work order that prints the angle, with its reference and
        sense, in a column of its own (and rounds it to the shop's marking step)."""
        return f"{self.words[0]}{self.words[1]}"

    def add_vector(self) -> complex:
        """The operation as an equivalent added unbalance [g·mm] (a removal at φ is an addition at φ+180°)."""
        v = cmath.rect(self.unbalance_g_mm, math.radians(self.angle_deg))
        return v if self.action == "add" else -v

    def to_dict(self) -> dict:
        return {"kind": self.kind, "action": self.action, "angle_deg": self.angle_deg, "mass_g": self.mass_g,
                "unbalance_g_mm": self.unbalance_g_mm, "dimensions": dict(self.dimensions),
                "description": self.description}


@dataclass(frozen=True)
class Plan:
    """Operations for one correction with the achieved vector, its error and the allowance check."""

    method: str
    action: str
    requested_g_mm: float
    requested_angle_deg: float
    operations: tuple[Operation, ...]
    achieved_g_mm: float
    achieved_angle_deg: float
    error_g_mm: float
    allowance_g_mm: float | None
    within_allowance: bool | None
    tried: tuple[str, ...]
    reason: str
    warnings: tuple[str, ...]
    cautions: tuple[str, ...]
    detail: object = field(repr=False, compare=False, default=None)

    @property
    def achieved(self):
        """(amount as a Quantity [g·mm], angle [deg]) in the request's own sense (add or remove)."""
        return Q_(self.achieved_g_mm, "g*mm"), self.achieved_angle_deg

    @property
    def error(self):
        """The predicted residual of this correction (vector difference) as a Quantity [g·mm]."""
        return Q_(self.error_g_mm, "g*mm")

    def to_dict(self) -> dict:
        return {
            "method": self.method, "action": self.action, "requested_g_mm": self.requested_g_mm,
            "requested_angle_deg": self.requested_angle_deg,
            "operations": [op.to_dict() for op in self.operations],
            "achieved_g_mm": self.achieved_g_mm, "achieved_angle_deg": self.achieved_angle_deg,
            "error_g_mm": self.error_g_mm, "allowance_g_mm": self.allowance_g_mm,
            "within_allowance": self.within_allowance, "tried": list(self.tried), "reason": self.reason,
            "warnings": list(self.warnings), "cautions": list(self.cautions),
            "detail": self.detail.to_dict() if self.detail is not None else None,
        }


def _ops_drill(r: drilling.DrillResult, say: Formatter | None = None) -> tuple[Operation, ...]:
    say = say or Formatter()
    ops = []
    for i, h in enumerate(r.holes, 1):
        where = "pitch radius" if r.orientation == "axial" else "surface radius"
        ops.append(Operation(
            "hole", "remove", h.angle_deg, h.mass_g, h.unbalance_g_mm,
            {"diameter_mm": h.diameter_mm, "depth_mm": h.depth_mm, "tip_depth_mm": h.tip_depth_mm,
             "radius_mm": r.radius_mm},
            (f"hole {i} of {len(r.holes)}: drill {r.orientation} {r.drill} ({r.point_angle_deg:g}° point)",
             f" on {say.dimension(r.radius_mm)} {where}, {say.depth(h.depth_mm)} deep to the shoulder "
             f"({say.depth(h.tip_depth_mm)} to the tip); removes {say.mass(h.mass_g, sig=4)}"
             + (f"; {say.depth(r.wall_mm - h.tip_depth_mm)} of wall left under the tip" if r.wall_mm else ""))))
    return tuple(ops)


def _ops_plate(p: plates.PlateResult, say: Formatter | None = None) -> tuple[Operation, ...]:
    say = say or Formatter()
    ops = []
    for i, a in enumerate(p.seat_angles_deg, 1):
        one = p.achieved_g_mm / len(p.seat_angles_deg) if p.seats == 1 else \
            p.achieved_g_mm / (2 * math.cos(math.radians(abs(offset_angle(a, p.add_angle_deg)))))
        ops.append(Operation(
            "plate", "add", a, p.mass_g + p.weld_mass_g, one,
            {"thickness_mm": p.thickness_mm, "width_mm": p.width_mm, "length_mm": p.length_mm,
             "fillet_mm": p.fillet_mm, "centroid_radius_mm": p.centroid_radius_mm},
            (f"plate{'' if p.seats == 1 else f' {i} of 2'}: weld a {p.shape} {p.thickness_label} plate "
             f"{say.dimension(p.width_mm)} × {say.dimension(p.length_mm)} ({say.mass(p.mass_g, sig=4)}, "
             f"about {say.mass(p.weld_mass_g, sig=4)} of weld with {say.dimension(p.fillet_mm)} fillets) on the "
             f"{p.surface + ' surface' if p.shape != 'face' else 'face'}", f", radius {say.dimension(p.radius_mm)}")))
    return tuple(ops)


def _ops_washers(s: washers.WasherStack, say: Formatter | None = None) -> tuple[Operation, ...]:
    say = say or Formatter()
    return (Operation(
        "washers", "add", s.add_angle_deg, s.mass_g, s.achieved_g_mm,
        {"size": s.size, "series": s.series, "count": s.count, "stack_height_mm": s.stack_height_mm,
         "centroid_radius_mm": s.centroid_radius_mm},
        (f"washers: stack {s.count} × {s.size} {s.series} ({say.mass(s.mass_g, sig=4)}) on the "
         f"{s.orientation} bolt",
         f", radius {say.dimension(s.radius_mm)}")),)


def _summarise(ops, U, angle, action):
    want = cmath.rect(U, math.radians(angle))
    got = sum((op.add_vector() for op in ops), 0j)
    if action == "remove":
        got = -got
    amount = abs(got)
    ang = norm_angle(math.degrees(cmath.phase(got))) if amount > 0 else angle
    return amount, ang, abs(got - want)


def plan_correction(unbalance, angle_deg, method: str, *, radius, material=None, density=None,
                    action: str = "add", allowance=None, orientation: str = "axial", surface: str = "outer",
                    shape: str = "flat", width=None, thickness=None, diameter=None, drills="metric",
                    stock="plate_stock", stock_unit: str = "mm", step="1 mm", size=None, series=None,
                    washer_table: str = "washers", limits: Limits | None = None, point_angle_deg: float = 118.0,
                    wall=None, fixed_positions=None, max_length=None, seat_offset_deg=None,
                    fillet=None, convexity=None, weld_run: str = "all-round", ce: float | None = None,
                    max_count: int = washers.DEFAULT_MAX_COUNT, materials_table: str = "materials",
                    units: str = "metric") -> Plan:
    """Operations that carry out one correction, with the achieved vector and the allowance check.

    unbalance : Quantity [mass·length] (``"2400 g*mm"``) or [mass] with ``radius`` (``"38 g"``).
    angle_deg : degrees from the rotor's reference mark. method : ``"drill"``, ``"plate"`` or ``"washers"``.
    action : ``"add"`` or ``"remove"`` (how the correction is stated). allowance : Quantity [mass·length]
    or None (the predicted residual allowed for this correction). The other keywords go to
    :func:`~toolkit.fabricate.drilling.drill_correction`, :func:`~toolkit.fabricate.plates.weld_plate` or
    :func:`~toolkit.fabricate.washers.washer_stack`. units : ``"metric"``, ``"imperial"`` or
    ``"inch-gram"``, the units of the operations' descriptions and the plan's reason (numbers in the
    records stay mm, g, g·mm); an inch system also stacks inch washers unless ``series`` or a metric
    ``size`` is given (:func:`washer_series`).

    >>> p = plan_correction("2400 g*mm", 131, "drill", radius="150 mm", material="steel", action="add",
    ...                     allowance="20 g*mm")
    >>> p.operations[0].kind, p.operations[0].action, p.operations[0].angle_deg, p.within_allowance
    ('hole', 'remove', 311.0, True)
    """
    if method not in METHODS:
        raise BadInput.about("method", f"{method!r} is not allowed; use one of {', '.join(METHODS)}")
    if action not in ("add", "remove"):
        raise BadInput.about("action", f"{action!r} is not allowed; use 'add' or 'remove'")
    U = correction_g_mm(unbalance, radius)
    angle = parse_angle(angle_deg, "angle")
    allow = None if allowance is None else magnitude(allowance, "unbalance", "g*mm", "allowance",
                                                     nonnegative=True)
    limits = limits or Limits()
    say = Formatter(units)
    attempts: list[tuple[str, object, tuple]] = []

    def run(label, fn, to_ops, **kw):
        res = fn(**kw)
        ops = to_ops(res, say)
        attempts.append((label, res, ops))
        return _summarise(ops, U, angle, action)[2]

    common = dict(radius=radius, angle_deg=angle, action=action, material=material, density=density,
                  materials_table=materials_table, allowance=None if allow is None else Q_(allow, "g*mm"))
    if method == "drill":
        kw = dict(common, orientation=orientation, drills=drills, point_angle_deg=point_angle_deg,
                  limits=limits, wall=wall, fixed_positions=fixed_positions)
        err = run("drill as chosen", drilling.drill_correction, _ops_drill, correction=unbalance,
                  diameter=diameter, **kw)
        if allow is not None and err > allow and diameter is None:
            first = attempts[0][1].diameter_mm
            for d in reversed([x for x in _stock.drills(drills) if x.diameter_mm < first]):
                try:
                    err = run(f"smaller drill {d.size}", drilling.drill_correction, _ops_drill,
                              correction=unbalance, diameter=f"{d.diameter_mm} mm", **kw)
                except Infeasible:
                    break
                if err <= allow:
                    break
    elif method == "plate":
        if width is None:
            raise BadInput.about("width", "a plate needs the seat's width, e.g. '40 mm'")
        kw = dict(common, width=width, shape=shape, surface=surface, stock=stock, stock_unit=stock_unit,
                  max_length=max_length, seat_offset_deg=seat_offset_deg, fillet=fillet, convexity=convexity,
                  weld_run=weld_run, ce=ce)
        err = run("plate as chosen", plates.weld_plate, _ops_plate, correction=unbalance, thickness=thickness,
                  step=step, **kw)
        if allow is not None and err > allow:
            first = attempts[0][1]
            st = first.step_mm
            thick = [first.thickness_mm] if thickness is not None else \
                [t.thickness_mm for t in _stock.plate_stock(stock, stock_unit) if t.thickness_mm <= first.thickness_mm]
            steps = [s for s in (st, st / 2, st / 5, st / 10) if s >= 0.1 - 1e-12] or [st]
            done = False
            for s in steps:
                for t in reversed(thick):
                    if s == st and t == first.thickness_mm:
                        continue
                    try:
                        err = run(f"{t:g} mm plate, {s:g} mm step", plates.weld_plate, _ops_plate,
                                  correction=unbalance, thickness=f"{t} mm", step=f"{s} mm", **kw)
                    except Infeasible:
                        continue
                    if err <= allow:
                        done = True
                        break
                if done:
                    break
    else:
        kw = dict(common, orientation=orientation, surface=surface, max_count=max_count, table=washer_table,
                  series=washer_series(units, size, series, washer_table))
        err = run("washers as chosen", washers.washer_stack, _ops_washers,
                  correction=unbalance, size=size, **kw)
    # keep the best attempt (the first one within the allowance, else the smallest error)
    scored = [(a, _summarise(a[2], U, angle, action)) for a in attempts]
    pick = None
    if allow is not None:
        pick = next((x for x in scored if x[1][2] <= allow), None)
    if pick is None:
        pick = min(scored, key=lambda x: x[1][2]) if allow is not None else scored[0]
    (label, res, ops), (amount, ang, err) = pick
    within = None if allow is None else err <= allow + 1e-9
    reason = ""
    if within is False:
        names = [a[0] for a in attempts]
        shown = ", ".join(names) if len(names) <= 4 else f"{', '.join(names[:2])}, ... {names[-1]} ({len(names)} options)"
        reason = (f"no option within the allowance of {say.unbalance(allow)}: tried {shown}; "
                  f"best leaves {say.unbalance(err)}; nearest: a finer tool or stock, or a second correction pass")
    warnings = tuple(res.warnings) + ((reason,) if reason else ())
    return Plan(method, action, U, angle, ops, amount, ang, err, allow, within,
                tuple(a[0] for a in attempts), reason, warnings, tuple(res.cautions), res)
