"""Weld-on plates that add a required unbalance: flat on an outer surface, rolled to the radius (outer or
inner surface) or flat on a radial face.

Geometry (docs/methods.md §3, derived [D]): a flat plate of thickness t touching an outer surface of
radius R at its middle has its centroid at R + t/2 and mass ρ t w b. A plate rolled to the radius is an
annular sector (arc length b on R, half-angle α = b/(2R), R_o = R + t, or R − t on an inner surface):
m = ρ w α |R_o² − R²|, centroid r̄ = (2/3)(sin α/α)(R_o³ − R³)/(R_o² − R²). On a flat radial face the
centroid is the plate's centre, at the given radius.

Weld metal: a fillet of leg z has cross-section z²/2 [D] plus 10–30 % convexity ([M], default 20 %,
overridable); the default leg is the minimum fillet for the plate thickness: 3 mm up to 6 mm, 5 mm up to
12 mm, 6 mm up to 20 mm, 8 mm above [H: AWS D1.1 minimum fillet table], never more than the plate
thickness. The fillet's centroid lies z/3 from the surface [D]; welds along the arc are spread by
sin α/α, welds at the ends sit at ±α [D].
"""

from __future__ import annotations

import math
from dataclasses import dataclass, asdict

from toolkit.errors import BadInput, Infeasible
from toolkit.fabricate import stock as _stock
from toolkit.fabricate.shared import correction_g_mm, describe_placement, norm_angle, solve_bracketed
from toolkit.fabricate.materials import preheat_guidance, require_weldable, resolve_density
from toolkit.units import format_number as _fmt, magnitude
from toolkit.vectors import parse_angle

__all__ = ["SHAPES", "SURFACES", "WELD_RUNS", "PlateResult", "plate_geometry", "min_fillet_mm",
           "weld_plate", "CAUTIONS", "DEFAULT_CONVEXITY"]

SHAPES = ("flat", "rolled", "face")
SURFACES = ("outer", "inner")
#: Which edges are welded: all round (default, common practice for balance plates), the two ends, the sides.
WELD_RUNS = ("all-round", "ends", "sides")
#: Weld convexity allowance on top of z²/2 [M: 10–30 %], overridable.
DEFAULT_CONVEXITY = 0.20
#: Shortest plate: at least this long and two fillet legs (our choice, common practice [CP]).
MIN_LENGTH_MM = 10.0
#: Longest plate, as a multiple of its width, before a thicker stock is preferred (our choice, CP).
DEFAULT_ASPECT = 3.0

CAUTIONS = (
    "Lock the rotor and isolate its drive (lock-out/tag-out, OSHA 29 CFR 1910.147) before welding.",
    "Weld only to a qualified procedure (e.g. ISO 15614-1 or AWS D1.1) by a qualified welder; mind preheat "
    "and heat effects on the rotor.",
    "Put the return clamp on the rotor next to the weld, never across bearings; strip coatings near the weld "
    "and keep a fire watch (OSHA 29 CFR 1926.352/.354).",
    "Weigh the plate before welding (plate is rolled heavier than nominal) and re-check the balance after "
    "cooling; follow the rotor maker, local codes and licensed practice.",
)


def min_fillet_mm(thickness_mm: float) -> float:
    """Minimum fillet leg for a base thickness [mm] (AWS D1.1 minimum fillet table, as reproduced [H]).

    >>> [min_fillet_mm(t) for t in (5, 6, 10, 16, 25)]
    [3.0, 3.0, 5.0, 6.0, 8.0]
    """
    if thickness_mm <= 6:
        return 3.0
    if thickness_mm <= 12:
        return 5.0
    if thickness_mm <= 20:
        return 6.0
    return 8.0


def _plate_kernel(shape: str, surface: str, R: float, t: float, w: float, b: float, rho: float):
    """(mass [g], centroid radius [mm]) of the plate alone; lengths mm, rho g/mm³."""
    if shape == "rolled":
        alpha = b / (2 * R)
        s = t if surface == "outer" else -t
        Ro = R + s
        # |Ro² - R²| = t·|2R + s| and |Ro³ - R³| / |Ro² - R²| = (Ro² + Ro·R + R²) / |2R + s|, written so that
        # no difference of nearly equal numbers is taken (a huge radius once gave 0/0)
        area2 = t * abs(2 * R + s)
        m = rho * w * alpha * area2
        spread = math.sin(alpha) / alpha if alpha > 0 else 1.0
        rbar = (2.0 / 3.0) * spread * (Ro * Ro + Ro * R + R * R) / abs(2 * R + s)
        return m, rbar
    m = rho * t * w * b
    if shape == "face":
        return m, R
    return m, R + t / 2.0


def _weld_kernel(shape: str, surface: str, R: float, w: float, b: float, z: float, convexity: float,
                 run: str, rho: float):
    """(weld mass [g], its unbalance contribution [g·mm]) for the chosen weld run."""
    area = z * z / 2.0 * (1.0 + convexity)
    sides = 2 * b if run in ("all-round", "sides") else 0.0
    ends = 2 * w if run in ("all-round", "ends") else 0.0
    m_sides, m_ends = rho * area * sides, rho * area * ends
    if shape == "face":
        return m_sides + m_ends, (m_sides + m_ends) * R
    r_w = R + z / 3.0 if surface == "outer" else R - z / 3.0
    alpha = b / (2 * R)
    spread = math.sin(alpha) / alpha if alpha > 0 else 1.0
    return m_sides + m_ends, r_w * (m_sides * spread + m_ends * math.cos(alpha))


def plate_geometry(shape: str, radius, thickness, width, length, density, surface: str = "outer") -> dict:
    """Mass [g], centroid radius [mm] and unbalance [g·mm] of a plate alone (formulas in the module text).

    >>> g = plate_geometry("rolled", "250 mm", "8 mm", "50 mm", "80 mm", "7850 kg/m^3")
    >>> round(g["mass_g"], 2), round(g["centroid_radius_mm"], 2)
    (255.22, 252.94)
    """
    shape, surface = _check_shape(shape, surface)
    R = magnitude(radius, "length", "mm", "radius", positive=True)
    t = magnitude(thickness, "length", "mm", "thickness", positive=True)
    w = magnitude(width, "length", "mm", "width", positive=True)
    b = magnitude(length, "length", "mm", "length", positive=True)
    rho = resolve_density(density=density).g_mm3
    _check_fit_shape(shape, surface, R, t, b)
    m, rbar = _plate_kernel(shape, surface, R, t, w, b, rho)
    return {"mass_g": m, "centroid_radius_mm": rbar, "unbalance_g_mm": m * rbar}


def _check_shape(shape, surface):
    if shape not in SHAPES:
        raise BadInput.about("shape", f"{shape!r} is not allowed; use one of {', '.join(SHAPES)}")
    if surface not in SURFACES:
        raise BadInput.about("surface", f"{surface!r} is not allowed; use one of {', '.join(SURFACES)}")
    if shape == "flat" and surface == "inner":
        raise BadInput.about("shape", "flat with {surface} inner: a flat plate cannot sit in a bore; use {shape} "
                                      "rolled", mentions=("surface",))
    return shape, surface


def _check_fit_shape(shape, surface, R, t, b):
    if shape == "face" and t <= 0:
        raise BadInput.about("thickness", f"{t!r} must be greater than zero")
    if shape == "rolled":
        if b >= math.pi * R:
            raise Infeasible("a {b} plate would wrap half the {R} {radius}; use two seats or another method",
                             mentions=("radius",), quantities={"b": (b, "mm"), "R": (R, "mm")})
        if surface == "inner" and t >= R:
            raise BadInput.about("thickness", "{t} does not fit inside a {R} {radius}", mentions=("radius",),
                                 quantities={"t": (t, "mm"), "R": (R, "mm")})


@dataclass(frozen=True)
class PlateResult:
    """A weld-on plate for a required unbalance, after rounding its size to the shop's step."""

    shape: str
    surface: str
    radius_mm: float
    thickness_mm: float
    thickness_label: str
    width_mm: float
    length_mm: float
    seats: int
    seat_angles_deg: tuple[float, ...]
    mass_g: float
    weld_mass_g: float
    fillet_mm: float
    fillet_source: str
    convexity: float
    convexity_source: str
    weld_run: str
    centroid_radius_mm: float
    requested_g_mm: float
    add_angle_deg: float
    given_action: str
    given_angle_deg: float
    achieved_g_mm: float
    error_g_mm: float
    step_mm: float
    density_kg_m3: float
    material: str | None
    density_source: str
    warnings: tuple[str, ...] = ()
    method: str = "plate and fillet geometry (derived here [D])"
    cautions: tuple[str, ...] = CAUTIONS

    def placement(self, unb=None) -> str:
        """Where the correction goes, in words; ``unb`` formats an unbalance in g·mm (default metric)."""
        return describe_placement("add", self.given_action, self.requested_g_mm, self.given_angle_deg,
                                  self.add_angle_deg, "weld the plate opposite, at", unb=unb)

    def to_dict(self) -> dict:
        out = asdict(self)
        out["seat_angles_deg"] = list(self.seat_angles_deg)
        out["total_mass_g"] = self.seats * (self.mass_g + self.weld_mass_g)
        out["placement"] = self.placement()
        out["warnings"], out["cautions"] = list(self.warnings), list(self.cautions)
        return out


def _solve_length(shape, surface, R, t, w, U1, rho, z, conv, run):
    def total(b):
        m, rbar = _plate_kernel(shape, surface, R, t, w, b, rho)
        return m * rbar + _weld_kernel(shape, surface, R, w, b, z, conv, run, rho)[1]

    hi = 0.95 * math.pi * R if shape != "face" else 1e7
    lo = 1e-9
    if not (math.isfinite(total(hi)) and math.isfinite(total(lo))):
        raise BadInput(f"radius {R:g} mm, thickness {t:g} mm, width {w:g} mm, fillet {z:g} mm: out of the range "
                       f"the plate formulas can compute; check the values and their units")
    if total(hi) < U1:
        return None, total
    if total(lo) > U1:
        return 0.0, total
    return solve_bracketed(lambda b: total(b) - U1, lo, hi, 1e-12), total


#: The rounding step of plate sizes: bounds of our own [CP] (a shear cuts to about 0.5 mm; 100 mm is coarse).
PLATE_STEP_BOUNDS = ("0.01 mm", "100 mm")


def weld_plate(correction, *, radius, width, thickness=None, shape: str = "flat", surface: str = "outer",
               angle_deg=0.0, action: str = "add", material=None, density=None, step="1 mm",
               fillet=None, convexity: float | None = None, weld_run: str = "all-round", stock="plate_stock",
               stock_unit: str = "mm", max_length=None, seat_offset_deg: float | None = None,
               aspect: float = DEFAULT_ASPECT, include_weld: bool = True, ce: float | None = None,
               materials_table: str = "materials", allowance=None) -> PlateResult:
    """A weld-on plate that adds ``correction``, sized to stock thickness and rounded to ``step``.

    correction : Quantity [mass·length] or [mass] with ``radius``. radius : Quantity [length] (surface
    radius; for ``shape="face"`` the radius of the plate's centre). width : Quantity [length] (axial width
    on a cylinder, radial width on a face). thickness : Quantity [length] or None (thinnest stock whose
    length stays within ``aspect`` × width and ``max_length``). step : Quantity [length], size rounding.
    fillet : leg [length] (default AWS D1.1 minimum [H]); convexity : fraction (default 0.2 [M]).
    A plate shorter than max(10 mm, 2 fillet legs) [CP] is refused with washers or a hole suggested,
    unless ``allowance`` (Quantity [mass·length], the residual allowed for this correction) is given and
    the smallest plate's residual (what it adds beyond the request) is within it: then that plate is
    taken and a warning gives its residual.
    max_length : the seat's room along the arc; if the plate does not fit and ``seat_offset_deg`` is given,
    the correction is split onto two seats at angle ± offset (each U / (2 cos offset)), else refused.
    Materials marked not weldable are refused with another method suggested. ce : the rotor's IIW carbon
    equivalent, if known; its preheat guidance and the material's welding note are added to the warnings.

    >>> p = weld_plate("38 g", radius="620 mm", width="40 mm", thickness="6 mm", shape="rolled",
    ...                material="steel")
    >>> p.length_mm, round(p.achieved_g_mm), round(p.centroid_radius_mm, 2)
    (17.0, 23050, 622.99)
    """
    shape, surface = _check_shape(shape, surface)
    if weld_run not in WELD_RUNS:
        raise BadInput.about("weld_run", f"{weld_run!r} is not allowed; use one of {', '.join(WELD_RUNS)}")
    if action not in ("add", "remove"):
        raise BadInput.about("action", f"{action!r} is not allowed; use 'add' or 'remove'")
    R = float(magnitude(radius, "length", "mm", "radius", positive=True))
    U = correction_g_mm(correction, radius)
    w0 = float(magnitude(width, "length", "mm", "width", positive=True))
    st = float(magnitude(step, "length", "mm", "step", positive=True, bounds=PLATE_STEP_BOUNDS,
                         what="plate size step"))
    dens = resolve_density(material, density, materials_table)
    require_weldable(dens)
    rho = dens.g_mm3
    given = parse_angle(angle_deg, "angle")
    add_angle = norm_angle(given + 180.0) if action == "remove" else given
    conv, conv_src = _convexity(convexity)
    if not (isinstance(aspect, (int, float)) and aspect > 0):
        raise BadInput.about("aspect", f"{aspect!r} must be a number greater than zero")
    warnings = []
    if dens.material is not None and dens.material.notes:
        warnings.append(f"{dens.material.name}: {dens.material.notes}")
    if ce is not None:
        warnings.append(preheat_guidance(ce))
    w = float(max(st, round(round(w0 / st) * st, 9)))
    if abs(w - w0) > 1e-9:
        warnings.append(f"width {w0:g} mm rounded to the {st:g} mm step: {w:g} mm")
    room = None if max_length is None else magnitude(max_length, "length", "mm", "max_length", positive=True)
    options = _thickness_options(thickness, stock, stock_unit)
    fillet_mm = None if fillet is None else magnitude(fillet, "length", "mm", "fillet", positive=True)
    offset = _seat_offset(seat_offset_deg)

    seat = _Seat(shape, surface, R, w, rho, conv, weld_run, fillet_mm, include_weld)
    chosen, too_small = _first_fit(seat, options, U, offset, room, aspect * w if thickness is None else math.inf,
                                   thickness is None)
    allow = None if allowance is None else float(magnitude(allowance, "unbalance", "g*mm", "allowance",
                                                             nonnegative=True))
    smallest_taken = False
    if chosen is None and too_small:
        chosen = _smallest_within(seat, too_small, U, allow, room, st, warnings)
        smallest_taken = chosen is not None
        if chosen is None:
            raise _too_small(too_small, U, w, allow)
    if chosen is None:
        reason = _nearest(U, R, w, options, room, offset, shape, surface, rho, fillet_mm, conv, weld_run)
        most = None if allow is None else _most_plate(R, w, options, room, shape, surface, rho, fillet_mm, conv,
                                                      weld_run)
        if most is not None and U > most and U - most <= allow:
            # the largest plate that fits leaves a residual within the allowance: take it
            got = _largest_within(most, U, allow, options, dens, warnings, radius=radius, w=w, shape=shape,
                                  surface=surface, add_angle=add_angle, action=action, given=given, step=step,
                                  fillet=fillet, convexity=convexity, weld_run=weld_run, max_length=max_length,
                                  aspect=aspect, include_weld=include_weld)
            if got is not None:
                return got
        raise reason
    seats, (t_opt, z, b_exact, _total, _U1) = chosen
    b = _rounded_length(b_exact, st, room, smallest_taken)
    return _plate_result(seat, seats, t_opt, z, b, offset, U, add_angle, action, given, st, dens, conv_src,
                         warnings)


def _convexity(convexity) -> tuple[float, str]:
    """The weld's convexity as a fraction, and where it came from (the default, or "given")."""
    if convexity is None:
        return DEFAULT_CONVEXITY, "default 20 % [M: 10–30 %]"
    if isinstance(convexity, bool) or not isinstance(convexity, (int, float)) or not 0 <= convexity <= 1:
        raise BadInput.about("convexity", f"{convexity!r} must be a fraction from 0 to 1 (e.g. 0.2)")
    return float(convexity), "given"


def _thickness_options(thickness, stock, stock_unit: str) -> list:
    """The plate thicknesses to try: the one given, else every thickness of the ``stock`` table."""
    if thickness is not None:
        tv = float(magnitude(thickness, "length", "mm", "thickness", positive=True))
        return [_stock.PlateThickness(f"{tv:g} mm", tv, "given")]
    return list(_stock.plate_stock(stock, stock_unit))


def _seat_offset(seat_offset_deg) -> float | None:
    """The angle [degrees] of two split seats either side of the correction, or None (one seat only)."""
    if seat_offset_deg is None:
        return None
    if isinstance(seat_offset_deg, bool) or not isinstance(seat_offset_deg, (int, float)) \
            or not 0 < seat_offset_deg < 90:
        raise BadInput.about("seat_offset_deg", f"{seat_offset_deg!r} must be an angle between 0 and 90 "
                                                "degrees")
    return float(seat_offset_deg)


def _largest_within(most, U, allow, options, dens, warnings, *, radius, w, shape, surface, add_angle, action,
                    given, step, fillet, convexity, weld_run, max_length, aspect, include_weld):
    """The largest plate that fits (adding ``most`` g·mm of the ``U`` asked), as the plate of this request,
    if what it leaves is within ``allow``; else None."""
    try:
        got = weld_plate(f"{most * (1 - 1e-6)!r} g*mm", radius=radius, width=f"{w!r} mm",
                         thickness=f"{options[-1].thickness_mm!r} mm", shape=shape, surface=surface,
                         angle_deg=add_angle, action="add", density=f"{dens.kg_m3!r} kg/m^3", step=step,
                         fillet=fillet, convexity=convexity, weld_run=weld_run, max_length=max_length,
                         aspect=aspect, include_weld=include_weld)
    except Infeasible:
        return None
    if abs(got.achieved_g_mm - U) > allow + 1e-9:
        return None
    import dataclasses

    note = (f"{_fmt(U)} g·mm is more than the largest plate adds; it adds {_fmt(got.achieved_g_mm)} "
            f"g·mm and leaves {_fmt(abs(got.achieved_g_mm - U))} g·mm, within the allowance of "
            f"{_fmt(allow)} g·mm: taken")
    return dataclasses.replace(
        got, thickness_label=options[-1].label, requested_g_mm=U, given_action=action,
        given_angle_deg=given, error_g_mm=abs(got.achieved_g_mm - U), density_source=dens.source,
        material=dens.material.name if dens.material else None,
        warnings=tuple(warnings) + got.warnings + (note,))


def _rounded_length(b_exact: float, st: float, room, smallest_taken: bool) -> float:
    """The plate's length [mm] on the ``st`` step, one step shorter if rounding up leaves the ``room``."""
    b = float(max(st, round(round(b_exact / st) * st, 9)))
    if smallest_taken:
        b = float(b_exact)  # already the shortest plate, on the step
    elif room is not None and b > room + 1e-9:
        b = round(b - st, 9)
    return b


@dataclass(frozen=True)
class _Seat:
    """What every plate on one seat shares: shape, surface, radius and width [mm], density [g/mm³], the
    weld's convexity, run and fillet leg (None: the minimum for the thickness), and whether the weld counts."""

    shape: str
    surface: str
    R: float
    w: float
    rho: float
    conv: float
    weld_run: str
    fillet_mm: float | None
    include_weld: bool

    def fillet(self, t: float) -> float:
        return self.fillet_mm if self.fillet_mm is not None else min(min_fillet_mm(t), t)

    def adds(self, t: float, z: float, b: float) -> float:
        """Unbalance [g·mm] of a plate t thick and b long with its weld (fillet leg z), if the weld counts."""
        m, r = _plate_kernel(self.shape, self.surface, self.R, t, self.w, b, self.rho)
        weld = _weld_kernel(self.shape, self.surface, self.R, self.w, b, z, self.conv, self.weld_run, self.rho)[1]
        return m * r + (weld if self.include_weld else 0.0)


def _first_fit(seat: _Seat, options, U: float, offset, room, limit: float, any_thickness: bool):
    """The first stock thickness whose plate fits (on one seat, then on two at ± ``offset``), within the
    room and, when the thickness is free, within ``limit`` (aspect × width), else the first that fits the
    room: ``((seats, (thickness, fillet, length, total, U per seat)) or None, plates found too short)``."""
    too_small: list = []

    def design(t_opt, seats):
        t = t_opt.thickness_mm
        if seat.shape == "rolled" and seat.surface == "inner" and t >= seat.R:
            return None
        z = seat.fillet(t)
        U1 = U if seats == 1 else U / (2 * math.cos(math.radians(offset)))
        b, total = _solve_length(seat.shape, seat.surface, seat.R, t, seat.w, U1, seat.rho,
                                 z if seat.include_weld else 0.0, seat.conv, seat.weld_run)
        if b is None:
            return None
        if b < max(MIN_LENGTH_MM, 2 * z):
            too_small.append((t_opt, z, total(max(MIN_LENGTH_MM, 2 * z))))
            return None
        return t_opt, z, b, total, U1

    for seats in (1, 2):
        if seats == 2 and offset is None:
            break
        for t_opt in options:
            got = design(t_opt, seats)
            if got is not None and (room is None or got[2] <= room) and got[2] <= limit:
                return (seats, got), too_small
        if any_thickness:  # no thickness within the aspect: take the first that fits
            for t_opt in options:
                got = design(t_opt, seats)
                if got is not None and (room is None or got[2] <= room):
                    return (seats, got), too_small
    return None, too_small


def _smallest_within(seat: _Seat, too_small, U: float, allow, room, st: float, warnings: list):
    """The shortest plate (on the size step), when the request is smaller than it adds and its residual is
    within the allowance (with a warning saying so); else None."""
    t_opt, z, _least = min(too_small, key=lambda x: x[2])
    b_min = math.ceil(max(MIN_LENGTH_MM, 2 * z) / st - 1e-9) * st
    u0 = seat.adds(t_opt.thickness_mm, z, b_min)
    if allow is None or abs(u0 - U) > allow + 1e-9 or (room is not None and b_min > room + 1e-9):
        return None
    warnings.append(f"{_fmt(U)} g·mm is less than the smallest {t_opt.label} plate {seat.w:g} mm wide adds "
                    f"({b_min:g} mm long with its weld: {_fmt(u0)} g·mm); it leaves {_fmt(abs(u0 - U))} "
                    f"g·mm, within the allowance of {_fmt(allow)} g·mm: taken")
    return 1, (t_opt, z, b_min, None, U)


def _too_small(too_small, U: float, w: float, allow) -> Infeasible:
    """The refusal of a request smaller than the smallest plate adds, with the nearest alternatives."""
    t_opt, z, least = min(too_small, key=lambda x: x[2])
    values = {"U": (U, "g*mm"), "least": (least, "g*mm"), "over": (least - U, "g*mm"),
              "length": (max(MIN_LENGTH_MM, 2 * z), "mm"), "fillet_leg": (z, "mm"), "w": (w, "mm")}
    if allow is not None:
        values["allow"] = (allow, "g*mm")
    return Infeasible(f"{{U}} is less than the smallest {t_opt.label} plate {{w}} wide adds with its weld "
                      "({length} long, {fillet_leg} fillets: {least})"
                      + ("" if allow is None else ", which leaves {over}, more than the allowance of {allow}")
                      + "; nearest: washers, a drilled hole at the heavy spot, or a narrower plate ({width})",
                      mentions=("width",), quantities=values)


def _plate_result(seat: _Seat, seats: int, t_opt, z: float, b: float, offset, U: float, add_angle: float,
                  action: str, given: float, st: float, dens, conv_src: str, warnings: list) -> PlateResult:
    """The chosen plate, b long on one or two seats, with what it adds and its warnings."""
    shape, surface, R, w, rho, conv, weld_run = (seat.shape, seat.surface, seat.R, seat.w, seat.rho, seat.conv,
                                                 seat.weld_run)
    t = t_opt.thickness_mm
    include_weld, fillet_mm = seat.include_weld, seat.fillet_mm
    if shape == "flat":
        gap = R - math.sqrt(max(R * R - (b / 2) ** 2, 0.0)) if surface == "outer" else 0.0
        if gap > 1.0:
            warnings.append(f"a flat {b:g} mm plate stands {gap:.1f} mm off the {R:g} mm surface at its ends; "
                            "consider a rolled plate [CP]")
    m, rbar = _plate_kernel(shape, surface, R, t, w, b, rho)
    mw, uw = _weld_kernel(shape, surface, R, w, b, z, conv, weld_run, rho) if include_weld else (0.0, 0.0)
    one = m * rbar + uw
    angles = (add_angle,) if seats == 1 else (norm_angle(add_angle - offset), norm_angle(add_angle + offset))
    achieved = one if seats == 1 else 2 * one * math.cos(math.radians(offset))
    if seats == 2:
        warnings.append(f"the plate does not fit one seat: split onto two seats at ±{offset:g}° "
                        f"({angles[0]:g}° and {angles[1]:g}°)")
    fillet_src = "given" if fillet_mm is not None else "AWS D1.1 minimum fillet for the plate thickness [H]"
    return PlateResult(shape, surface, R, t, t_opt.label, w, b, seats, angles, m, mw, z, fillet_src, conv,
                       conv_src, weld_run, rbar, U, add_angle, action, given, achieved, abs(achieved - U), st,
                       dens.kg_m3, dens.material.name if dens.material else None, dens.source, tuple(warnings))


def _most_plate(R, w, options, room, shape, surface, rho, fillet_mm, conv, run) -> float | None:
    """About the most [g·mm] the thickest plate adds on one seat (within ``room``, else 0.95 π R long), as
    :func:`_nearest` counts it; None when it cannot be said (a face plate without a room, no plate fits)."""
    if shape == "rolled" and surface == "inner" and all(o.thickness_mm >= R for o in options):
        return None
    t = options[-1].thickness_mm
    z = fillet_mm if fillet_mm is not None else min(min_fillet_mm(t), t)
    b = room if room is not None else (0.95 * math.pi * R if shape != "face" else None)
    if b is None:
        return None
    m, rbar = _plate_kernel(shape, surface, R, t, w, b, rho)
    return m * rbar + _weld_kernel(shape, surface, R, w, b, z, conv, run, rho)[1]


def _nearest(U, R, w, options, room, offset, shape, surface, rho, fillet_mm, conv, run) -> Infeasible:
    """Why no plate can be made, and the nearest feasible alternative (the error to raise)."""
    values = {"U": (U, "g*mm"), "R": (R, "mm"), "w": (w, "mm")}
    if shape == "rolled" and surface == "inner" and all(o.thickness_mm >= R for o in options):
        return Infeasible(f"no plate thinner than the {{R}} bore {{radius}} is available (thinnest "
                          f"{options[0].label}); nearest: drilled holes or washers, or a plate on the outer surface",
                          mentions=("radius",), quantities=values)
    t = options[-1].thickness_mm
    z = fillet_mm if fillet_mm is not None else min(min_fillet_mm(t), t)
    if room is not None:
        b = room
    else:
        b = 0.95 * math.pi * R if shape != "face" else None
    if b is None:
        return Infeasible("no plate found for {U}; check the inputs", quantities=values)
    m, rbar = _plate_kernel(shape, surface, R, t, w, b, rho)
    most = m * rbar + _weld_kernel(shape, surface, R, w, b, z, conv, run, rho)[1]
    values.update(most=(most, "g*mm"), room=(0.0 if room is None else room, "mm"))
    where = "within the {room} room ({max_length})" if room is not None else "on this radius"
    hint = "" if offset is not None else "; or give {seat_offset_deg} to split onto two seats"
    return Infeasible(f"{{U}} needs more than the thickest plate ({options[-1].label}, {{w}} wide) adds {where}: at "
                      f"most about {{most}}; nearest: a wider plate, a larger radius{hint}",
                      mentions=("max_length", "seat_offset_deg"), quantities=values)
