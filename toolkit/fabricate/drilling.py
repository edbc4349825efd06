"""Drilled holes that remove a required unbalance: geometry, depth for a target, drill choice and limits.

Sources (docs/methods.md §3): the drill point is a cone of included angle θ (118° general twist drills,
135° for hard material, 180° a flat-bottom tool), height h = (d/2)/tan(θ/2) [S: drill makers' technical
data; D]; a cone's centroid lies h/4 from its base [S: solid geometry]. Depth is to the shoulder (end of
the full diameter) from first contact; the tip lies h deeper [CP].

Axial hole (in a face, parallel to the axis, centred on pitch radius R_c): V = π r² (L + h/3), U = ρ V R_c
exactly [D]. Radial hole (into a cylinder of radius R, hole axis through the rotor axis, y_s = R − L):
first moment S = (π r²/2)(R² − y_s²) − π r⁴/8 + (π r² h/3)(y_s − h/4), U = ρ S [D, checked by numerical
integration in the tests]. The removed volume of a radial hole is integrated numerically
(Gauss–Legendre over the hole's cross-section, exact to rounding).

Limits are common practice [CP] and every one can be overridden (:class:`Limits`); results list the values
used. Removal is at the heavy spot: a correction written "add U at θ" is drilled at θ + 180°.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass, asdict

import numpy as np

from toolkit.errors import BadInput, Infeasible
from toolkit.fabricate import stock as _stock
from toolkit.fabricate.shared import correction_g_mm, describe_placement, norm_angle, offset_angle, solve_bracketed
from toolkit.fabricate.materials import resolve_density
from toolkit.units import format_number as _fmt, magnitude
from toolkit.vectors import neighbours, parse_angle, sine_split

__all__ = ["Limits", "Hole", "DrillResult", "point_height", "axial_hole", "radial_hole", "solve_bracketed",
           "correction_g_mm", "drill_correction", "CAUTIONS", "ORIENTATIONS"]

ORIENTATIONS = ("axial", "radial")

#: Short cautions printed with every drilling result (docs/methods.md §4).
CAUTIONS = (
    "Lock the rotor and isolate its drive (lock-out/tag-out, OSHA 29 CFR 1910.147) before drilling.",
    "Clamp the work; no gloves near a turning spindle.",
    "Holes are stress raisers: keep them out of highly stressed zones, at least 1 d from edges and with the "
    "wall under the tip shown here; the rotor maker's drawing and instructions take precedence.",
    "Re-check the balance after drilling; follow the rotor maker, local codes and licensed practice.",
)


#: Bounds of each limit: (smallest other than zero, largest, whether zero is allowed). The ranges are our
#: own [CP], far beyond shop practice; they keep the hole arithmetic clear of subnormal and huge numbers.
LIMIT_BOUNDS = {
    "warn_depth_ratio": (1e-3, 100.0, False),
    "max_depth_ratio": (1e-3, 100.0, False),
    "spacing_ratio": (1e-3, 100.0, False),
    "preferred_depth_ratio": (1e-3, 100.0, False),
    "depth_step_mm": (1e-9, 100.0, False),  # a tiny step solves the depth exactly (tests do so)
    "min_wall_mm": (1e-3, 1e6, True),
    "min_wall_ratio": (1e-3, 100.0, True),
    "max_depth_mm": (1e-3, 1e6, False),
}


def limit_problem(name: str, value) -> str | None:
    """What is wrong with a drilling limit's value (None if nothing): the one wording that the command
    line and job files share.

    >>> limit_problem("max_depth_ratio", -0.0)
    'must be a number greater than zero (from 0.001 to 100; bounds of our own [CP])'
    >>> limit_problem("min_wall_mm", 0) is None
    True
    """
    low, high, zero = LIMIT_BOUNDS[name]
    what = "a number, zero or more" if zero else "a number greater than zero"
    span = f"(from {low:g} to {high:g}{', or 0' if zero else ''}; bounds of our own [CP])"
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value):
        return f"must be {what} {span}"
    if value == 0 and zero:
        return None
    if not low <= value <= high:
        return f"must be {what} {span}"
    return None


@dataclass(frozen=True)
class Limits:
    """Drilling rules of thumb, all common practice [CP] and all overridable.

    warn_depth_ratio: warn when the tip depth exceeds this many diameters (3).
    max_depth_ratio: refuse beyond this many diameters (5).
    max_depth_mm: an absolute cap on the tip depth (none).
    min_wall_mm, min_wall_ratio: wall left under the tip at least max(min_wall_mm, ratio·d) (2 mm, 0.5).
    spacing_ratio: hole centres at least this many diameters apart (2).
    depth_step_mm: depths are rounded to this step (0.1 mm, a machine's depth-stop resolution).
    preferred_depth_ratio: when choosing a drill, prefer one whose tip depth stays within this many
      diameters (2; our choice, a balance between few holes and fine control).
    max_holes: most holes in one pattern (7).
    """

    warn_depth_ratio: float = 3.0
    max_depth_ratio: float = 5.0
    max_depth_mm: float | None = None
    min_wall_mm: float = 2.0
    min_wall_ratio: float = 0.5
    spacing_ratio: float = 2.0
    depth_step_mm: float = 0.1
    preferred_depth_ratio: float = 2.0
    max_holes: int = 7

    def __post_init__(self):
        for name, (low, high, zero) in LIMIT_BOUNDS.items():
            v = getattr(self, name)
            if name == "max_depth_mm" and v is None:
                continue
            problem = limit_problem(name, v)
            if problem:
                raise BadInput.about(name, f"{v!r} {problem}")
        if not (isinstance(self.max_holes, int) and 1 <= self.max_holes <= 36):
            raise BadInput.about("max_holes", f"{self.max_holes!r} must be a whole number from 1 to 36")

    def tip_limit_mm(self, d: float) -> float:
        """Deepest allowed tip for drill diameter d [mm] (refusal limit)."""
        lim = self.max_depth_ratio * d
        return min(lim, self.max_depth_mm) if self.max_depth_mm is not None else lim

    def to_dict(self) -> dict:
        out = asdict(self)
        out["mark"] = "common practice [CP], overridable"
        return out


def point_height(diameter, point_angle_deg: float = 118.0):
    """Height of the drill point cone, h = (d/2)/tan(θ/2) (drill makers' data [S]; D).

    diameter : Quantity [length]; point_angle_deg : included angle [deg], 60 to 180 (180 = flat bottom).

    >>> round(point_height("10 mm").m_as("mm"), 5), point_height("10 mm", 180).m_as("mm")
    (3.0043, 0.0)
    """
    from toolkit.units import Q_

    d = magnitude(diameter, "length", "mm", "diameter", positive=True)
    return Q_(_h(d, _angle(point_angle_deg)), "mm")


def _angle(point_angle_deg) -> float:
    if isinstance(point_angle_deg, bool) or not isinstance(point_angle_deg, (int, float)):
        raise BadInput.about("point_angle_deg", f"{point_angle_deg!r} is not an angle in degrees; e.g. 118")
    a = float(point_angle_deg)
    if not (math.isfinite(a) and 60.0 <= a <= 180.0):
        raise BadInput.about("point_angle_deg", f"{point_angle_deg!r} is outside 60 to 180 degrees (118 general, "
                       "135 hard material, 180 flat bottom)")
    return a


def _h(d: float, angle: float) -> float:
    return 0.0 if angle >= 180.0 else (d / 2.0) / math.tan(math.radians(angle) / 2.0)


# -- kernels (mm, g/mm³) --------------------------------------------------------------------------------

def _axial_volume(r: float, L: float, h: float) -> float:
    return math.pi * r * r * (L + h / 3.0)


def _radial_moment(R: float, r: float, L: float, h: float) -> float:
    ys = R - L
    return (math.pi * r * r / 2.0) * (R * R - ys * ys) - math.pi * r ** 4 / 8.0 \
        + (math.pi * r * r * h / 3.0) * (ys - h / 4.0)


@functools.cache
def _gauss_legendre() -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """64-point Gauss-Legendre nodes t and weights w scaled to [−π/2, π/2], with sin t and cos t.

    Computed on the first radial hole, not at import: the nodes cost a few milliseconds (numpy.polynomial and
    an eigenvalue problem) that an axial hole, or the command line's start-up, never needs."""
    x, w = np.polynomial.legendre.leggauss(64)
    t = x * (math.pi / 2.0)
    return t, w * (math.pi / 2.0), np.sin(t), np.cos(t)


def _radial_volume(R: float, r: float, L: float, h: float) -> float:
    # cylinder part: ∫ over the hole's cross-section of (surface height − y_s); x = r sin t makes it smooth
    t, w, sin_t, cos_t = _gauss_legendre()
    x = r * sin_t
    chord = 2.0 * r * cos_t * r * cos_t
    cyl = float(np.sum(w * chord * (np.sqrt(R * R - x * x) - (R - L))))
    return cyl + math.pi * r * r * h / 3.0


def _radial_min_depth(R: float, r: float) -> float:
    """Shoulder depth at which the full diameter first lies wholly below the surface."""
    return R - math.sqrt(R * R - r * r)


@dataclass(frozen=True)
class HoleGeometry:
    """One hole: diameter, shoulder and tip depth [mm], volume [mm³], mass [g], unbalance [g·mm], and the
    radius of its centroid [mm]."""

    orientation: str
    diameter_mm: float
    depth_mm: float
    tip_depth_mm: float
    volume_mm3: float
    mass_g: float
    unbalance_g_mm: float
    centroid_radius_mm: float


def _geometry(orientation: str, d: float, L: float, radius: float, rho: float, angle: float) -> HoleGeometry:
    r, h = d / 2.0, _h(d, angle)
    if orientation == "axial":
        V = _axial_volume(r, L, h)
        U = rho * V * radius
        rc = radius
    else:
        V = _radial_volume(radius, r, L, h)
        U = rho * _radial_moment(radius, r, L, h)
        rc = U / (rho * V)
    return HoleGeometry(orientation, d, L, L + h, V, rho * V, U, rc)


def _check_geometry(orientation: str, d: float, L: float, radius: float, angle: float) -> None:
    if L < 0:
        raise BadInput.about("depth", f"{L} mm must not be negative")
    if orientation == "radial":
        if d >= 2 * radius:
            raise BadInput.about("diameter", f"{d} mm is not smaller than the cylinder's diameter {2 * radius} mm")
        lmin = _radial_min_depth(radius, d / 2)
        if L < lmin - 1e-9:
            raise BadInput.about("depth", f"{L:.3f} mm is shallower than {lmin:.3f} mm, where the full diameter "
                                          f"of a {d} mm hole first lies below a {radius} mm radius surface; the "
                                          "formula needs at least that")
        if radius - L - _h(d, angle) < 0:
            raise BadInput.about("depth", f"the tip at {L + _h(d, angle):.2f} mm passes the rotor axis "
                                          f"(radius {radius} mm)")


def axial_hole(diameter, depth, pitch_radius, density, point_angle_deg: float = 118.0) -> HoleGeometry:
    """Axial hole in a face: V = π r² (L + h/3), U = ρ V R_c (D; docs/methods.md §3).

    diameter, depth (to the shoulder), pitch_radius : Quantity [length]; density : Quantity [mass/length³].

    >>> g = axial_hole("10 mm", "10 mm", "100 mm", "7850 kg/m^3"); round(g.unbalance_g_mm, 2), round(g.mass_g, 4)
    (678.28, 6.7828)
    """
    return _hole("axial", diameter, depth, pitch_radius, density, point_angle_deg)


def radial_hole(diameter, depth, surface_radius, density, point_angle_deg: float = 118.0) -> HoleGeometry:
    """Radial hole into a cylinder, exact first moment (D; docs/methods.md §3):
    S = (π r²/2)(R² − y_s²) − π r⁴/8 + (π r² h/3)(y_s − h/4), y_s = R − L, U = ρ S.

    Valid for shoulder depth L ≥ R − √(R² − r²) (full diameter below the surface) and a tip short of the
    axis; outside that BadInput is raised.

    >>> g = radial_hole("10 mm", "10 mm", "100 mm", "7850 kg/m^3"); round(g.unbalance_g_mm, 2)
    638.89
    """
    return _hole("radial", diameter, depth, surface_radius, density, point_angle_deg)


def _hole(orientation: str, diameter, depth, radius, density, point_angle_deg) -> HoleGeometry:
    """Convert a hole's inputs once, check them and compute its geometry (axial or radial)."""
    d = magnitude(diameter, "length", "mm", "diameter", positive=True)
    L = magnitude(depth, "length", "mm", "depth", nonnegative=True)
    R = magnitude(radius, "length", "mm", "radius", positive=True)
    rho = resolve_density(density=density).g_mm3
    a = _angle(point_angle_deg)
    _check_geometry(orientation, d, L, R, a)
    return _geometry(orientation, d, L, R, rho, a)


# -- design ----------------------------------------------------------------------------------------------

@dataclass(frozen=True)
class Hole:
    """One hole to drill: its angle on the rotor [deg], offset from the pattern centre [deg], shoulder and
    tip depth [mm], removed mass [g] and removed unbalance [g·mm]."""

    angle_deg: float
    offset_deg: float
    diameter_mm: float
    depth_mm: float
    tip_depth_mm: float
    mass_g: float
    unbalance_g_mm: float

    def to_dict(self) -> dict:
        return asdict(self)


@dataclass(frozen=True)
class DrillResult:
    """Holes that remove a required unbalance, with what they achieve after depth rounding.

    ``requested_g_mm`` at ``remove_angle_deg`` is the unbalance to remove (the heavy spot);
    ``achieved_g_mm`` at ``achieved_angle_deg`` is the vector sum the rounded holes remove.
    """

    orientation: str
    radius_mm: float
    drill: str
    diameter_mm: float
    point_angle_deg: float
    holes: tuple[Hole, ...]
    requested_g_mm: float
    remove_angle_deg: float
    given_action: str
    given_angle_deg: float
    achieved_g_mm: float
    achieved_angle_deg: float
    error_g_mm: float
    density_kg_m3: float
    material: str | None
    density_source: str
    limits: Limits
    pitch_deg: float | None
    fixed_positions: tuple[float, ...] | None
    warnings: tuple[str, ...] = ()
    method: str = "exact hole geometry (derived here [D]: axial V = π r² (L + h/3); radial first moment)"
    cautions: tuple[str, ...] = CAUTIONS
    wall_mm: float | None = None

    @property
    def depth_mm(self) -> float:
        return max(h.depth_mm for h in self.holes)

    @property
    def tip_depth_mm(self) -> float:
        return max(h.tip_depth_mm for h in self.holes)

    @property
    def removed_mass_g(self) -> float:
        return sum(h.mass_g for h in self.holes)

    @property
    def wall_left_mm(self) -> float | None:
        """Material left under the deepest tip, when the wall thickness was given."""
        return None if self.wall_mm is None else self.wall_mm - self.tip_depth_mm

    def wall_note(self) -> str:
        """The wall left under the tip against the rule of thumb, in words (empty without a wall)."""
        if self.wall_mm is None:
            return ""
        need = max(self.limits.min_wall_mm, self.limits.min_wall_ratio * self.diameter_mm)
        return (f"{self.wall_left_mm:.1f} mm of the {self.wall_mm:g} mm wall left under the tip "
                f"(at least {need:.1f} mm required [CP])")

    def pattern(self, length=None) -> str:
        """The hole pattern in words (empty for one hole); ``length`` formats a length in mm (default
        metric)."""
        if self.pitch_deg is None:
            return ""
        length = length or (lambda x: f"{x:.1f} mm")
        surface = self.radius_mm
        chord = 2 * surface * math.sin(math.radians(self.pitch_deg) / 2)
        return (f"{len(self.holes)} holes at {self.pitch_deg:g}° pitch, symmetric about {self.remove_angle_deg:g}°; "
                f"centres {length(chord)} apart on the {length(surface)} radius (at least "
                f"{self.limits.spacing_ratio:g}·d = {length(self.limits.spacing_ratio * self.diameter_mm)})")

    def placement(self, unb=None) -> str:
        """Where the correction goes, in words; ``unb`` formats an unbalance in g·mm (default metric)."""
        return describe_placement("remove", self.given_action, self.requested_g_mm, self.given_angle_deg,
                                  self.remove_angle_deg, "remove it at the heavy spot,", "the heavy spot, ",
                                  unb)

    def to_dict(self) -> dict:
        return {
            "orientation": self.orientation, "radius_mm": self.radius_mm, "drill": self.drill,
            "holes": len(self.holes), "hole_list": [h.to_dict() for h in self.holes],
            "diameter_mm": self.diameter_mm, "depth_mm": self.depth_mm, "tip_depth_mm": self.tip_depth_mm,
            "point_angle_deg": self.point_angle_deg, "removed_mass_g": self.removed_mass_g,
            "requested_g_mm": self.requested_g_mm, "remove_angle_deg": self.remove_angle_deg,
            "given_action": self.given_action, "given_angle_deg": self.given_angle_deg,
            "placement": self.placement(),
            "achieved_g_mm": self.achieved_g_mm, "achieved_angle_deg": self.achieved_angle_deg,
            "error_g_mm": self.error_g_mm,
            "angle_offsets_deg": [h.offset_deg for h in self.holes],
            "pitch_deg": self.pitch_deg, "pattern": self.pattern(),
            "wall_mm": self.wall_mm, "wall_left_mm": self.wall_left_mm,
            "fixed_positions_deg": list(self.fixed_positions) if self.fixed_positions else None,
            "density_kg_m3": self.density_kg_m3, "material": self.material,
            "density_source": self.density_source, "limits_used": self.limits.to_dict(),
            "warnings": list(self.warnings), "method": self.method, "cautions": list(self.cautions),
        }


def _depth_for(orientation: str, U1: float, d: float, R: float, rho: float, angle: float,
               top: float) -> float | None:
    """Exact shoulder depth L for one hole removing U1, or None when out of [minimum, top]."""
    r, h = d / 2.0, _h(d, angle)
    if orientation == "axial":
        per_mm = rho * math.pi * r * r * R  # unbalance per mm of depth; 0 or inf for absurd sizes
        if not (per_mm > 0 and math.isfinite(per_mm)):
            return None
        L = U1 / per_mm - h / 3.0
        return L if 0.0 <= L <= top + 1e-12 else None
    lo = _radial_min_depth(R, r)
    hi = min(top, R - h)
    if hi <= lo:
        return None
    f = lambda L: rho * _radial_moment(R, r, L, h) - U1  # noqa: E731
    if not f(lo) <= 0 <= f(hi):  # also None when a size out of the float range gives NaN
        return None
    return solve_bracketed(f, lo, hi, 1e-12)


def _round_depth(L: float, step: float, orientation: str, d: float, R: float) -> float:
    Lr = round(round(L / step) * step, 9)
    if orientation == "radial":
        lmin = _radial_min_depth(R, d / 2)
        while Lr < lmin:
            Lr += step
    return max(Lr, 0.0)


def _pitch_deg(d: float, R: float, limits: Limits) -> float | None:
    s = limits.spacing_ratio * d
    if s >= 2 * R:
        return None
    p = math.degrees(2 * math.asin(s / (2 * R)))
    return math.ceil(p * 2 - 1e-9) / 2.0  # marked out to the next half degree


def _top(d: float, angle: float, limits: Limits, wall: float | None, ratio: float) -> float:
    """Deepest shoulder depth allowed for drill d by the tip ratio, absolute cap and wall."""
    h = _h(d, angle)
    tip = min(ratio * d, limits.tip_limit_mm(d))
    if wall is not None:
        tip = min(tip, wall - max(limits.min_wall_mm, limits.min_wall_ratio * d))
    return tip - h


def _design(orientation, U, d, R, rho, angle, limits, wall, ratio, fixed, remove_angle):
    """(per-hole depths, angles, offsets, pitch) for drill d, or None if not possible within ``ratio``."""
    top = _top(d, angle, limits, wall, ratio)
    if top < 0:
        return None
    if fixed:
        parts = _split_fixed(U, remove_angle, fixed)
        least = _least(orientation, d, R, rho, angle)
        if len(parts) == 2 and min(u for _, u in parts) < 0.5 * least:
            # a share smaller than half of what the point alone removes is better left undrilled
            parts = [max(parts, key=lambda p: p[1])]
        depths = []
        for ang, u in parts:
            L = _depth_for(orientation, u, d, R, rho, angle, top)
            if L is None:
                return None
            depths.append((ang, offset_angle(ang, remove_angle), L))
        return depths, None
    pitch = _pitch_deg(d, R, limits)
    for n in range(1, limits.max_holes + 1):
        if n > 1:
            if pitch is None or (n - 1) * pitch > 180.0:
                return None
            half = math.sin(math.radians(pitch / 2))
            if not half > 0:  # the pitch rounds to nothing on this radius: holes would coincide
                return None
            factor = math.sin(math.radians(n * pitch / 2)) / half
        else:
            factor = 1.0
        L = _depth_for(orientation, U / factor, d, R, rho, angle, top)
        if L is not None:
            offs = [(k - (n - 1) / 2.0) * (pitch or 0.0) for k in range(n)]
            return [(norm_angle(remove_angle + o), o, L) for o in offs], (pitch if n > 1 else None)
    return None


def _least(orientation: str, d: float, R: float, rho: float, angle: float) -> float:
    """Unbalance [g·mm] removed by the shallowest hole the formulas allow (the point alone, axial; the full
    diameter just below the surface, radial)."""
    h = _h(d, angle)
    if orientation == "axial":
        return rho * _axial_volume(d / 2, 0.0, h) * R
    return rho * _radial_moment(R, d / 2, _radial_min_depth(R, d / 2), h)


def _split_fixed(U: float, theta: float, positions: tuple[float, ...]) -> list[tuple[float, float]]:
    """Split U at theta onto the two neighbouring fixed positions (law of sines; docs/methods.md §2, D)."""
    pos = sorted(set(norm_angle(p) for p in positions))
    for p in pos:
        if abs(offset_angle(p, theta)) < 1e-9:
            return [(p, U)]
    if len(pos) < 2:
        raise Infeasible(f"fixed positions: one position ({pos[0]:g}°) cannot take a correction at "
                         f"{theta:g}°; give two or more positions around it")
    below, above = neighbours(theta, pos)
    span = (above - below) % 360.0
    if span >= 180.0:
        raise Infeasible(f"fixed positions: the neighbours of {theta:g}° ({below:g}° and {above:g}°) are "
                         f"{span:g}° apart; a split needs them less than 180° apart")
    u_below, u_above = sine_split(U, theta, below, above)
    return [(below, u_below), (above, u_above)]


def drill_correction(correction, *, radius, orientation: str = "axial", angle_deg=0.0, action: str = "remove",
                     material=None, density=None, diameter=None, drills="metric", point_angle_deg: float = 118.0,
                     limits: Limits | None = None, wall=None, fixed_positions=None,
                     materials_table: str = "materials", allowance=None) -> DrillResult:
    """Holes that remove a required unbalance, drilled with the shop's drills, depths rounded to the step.

    correction : Quantity [mass·length] (``"2400 g*mm"``) or [mass] with ``radius`` (``"38 g"``).
    radius : Quantity [length], the pitch radius (axial holes) or the surface radius (radial holes).
    orientation : ``"axial"`` or ``"radial"``. angle_deg : angle of the correction [deg]; ``action``
    ``"remove"`` (heavy spot, drilled there) or ``"add"`` (drilled at angle + 180°).
    material / density : rotor material name or density. diameter : a drill to use (else chosen from
    ``drills``: ``"metric"``, ``"inch"`` or a shop CSV path). wall : Quantity [length], material thickness
    along the hole from first contact (for the wall under the tip). fixed_positions : angles [deg] of a
    drilled pattern to split onto. limits : :class:`Limits` (common practice, overridable).

    Drill choice: the smallest drill of the set whose holes stay within the preferred depth ratio, with as
    few holes as possible; failing that, within the refusal limit (with a warning beyond 3·d).

    allowance : Quantity [mass·length] or None, the residual allowed for this correction. A request
    smaller than the smallest drill's point alone removes is refused, unless the point alone (one hole
    drilled to the shoulder and no deeper) leaves a residual within the allowance: then that hole is
    taken and a warning gives its residual.

    >>> r = drill_correction("2400 g*mm", radius="150 mm", orientation="axial", diameter="10 mm",
    ...                      material="steel")
    >>> len(r.holes), round(r.depth_mm, 1), round(r.achieved_g_mm, 1)
    (1, 24.9, 2395.4)
    """
    if orientation not in ORIENTATIONS:
        raise BadInput.about("orientation", f"{orientation!r} is not allowed; use 'axial' or 'radial'")
    if action not in ("add", "remove"):
        raise BadInput.about("action", f"{action!r} is not allowed; use 'add' or 'remove'")
    limits = limits or Limits()
    R = float(magnitude(radius, "length", "mm", "radius", positive=True))
    U = correction_g_mm(correction, radius)
    dens = resolve_density(material, density, materials_table)
    rho = dens.g_mm3
    angle = _angle(point_angle_deg)
    given = parse_angle(angle_deg, "angle")
    remove_angle = norm_angle(given + 180.0) if action == "add" else given
    wall_mm = None if wall is None else magnitude(wall, "length", "mm", "wall", positive=True)
    fixed = None
    if fixed_positions:
        fixed = tuple(parse_angle(p, "fixed position") for p in fixed_positions)
    if diameter is not None:
        d = magnitude(diameter, "length", "mm", "diameter", positive=True)
        if orientation == "radial" and d >= R:
            raise BadInput.about("diameter", "{d} is too large for a {R} {radius}", mentions=("radius",),
                                 quantities={"d": (d, "mm"), "R": (R, "mm")})
        candidates = [_stock.Drill(f"{d:g} mm", d, "given")]
    else:
        candidates = [c for c in _stock.drills(drills) if orientation == "axial" or c.diameter_mm < R]
        if not candidates:
            raise Infeasible.about("drills", "no drill in the set is smaller than the {R} {radius}, as a radial "
                                   "hole needs; drill axial holes in a face, or use a plate or washers",
                                   mentions=("radius",), quantities={"R": (R, "mm")})
    chosen = None
    ratios = [limits.warn_depth_ratio, limits.max_depth_ratio]
    if diameter is None:
        ratios.insert(0, limits.preferred_depth_ratio)
    for ratio in sorted(set(r for r in ratios if r <= limits.max_depth_ratio)) or [limits.max_depth_ratio]:
        for c in candidates:
            got = _design(orientation, U, c.diameter_mm, R, rho, angle, limits, wall_mm, ratio, fixed,
                          remove_angle)
            # fewest holes first, then the smallest drill (finer control of the removed amount)
            if got is not None and (chosen is None or len(got[0]) < len(chosen[1][0])):
                chosen = (c, got)
                if len(got[0]) == 1:
                    break
        if chosen:
            break
    allow = None if allowance is None else float(magnitude(allowance, "unbalance", "g*mm", "allowance",
                                                             nonnegative=True))
    point_only = None
    if chosen is None and allow is not None and not fixed:
        point_only = _point_only(orientation, U, R, rho, angle, limits, wall_mm, candidates[0], remove_angle,
                                 allow)
        if point_only is not None:
            chosen = point_only
    if chosen is None:
        reason = _nearest(orientation, U, R, rho, angle, limits, wall_mm, candidates, fixed, remove_angle, allow)
        most = None if allow is None else _most_removed(orientation, U, R, rho, angle, limits, wall_mm,
                                                          candidates, fixed, remove_angle)
        if most is not None and U > most and U - most <= allow:
            # the most the drills can remove leaves a residual within the allowance: take it
            try:
                got = drill_correction(
                    f"{most * (1 - 1e-6)!r} g*mm", radius=f"{R!r} mm", orientation=orientation,
                    angle_deg=remove_angle, action="remove", density=f"{dens.kg_m3!r} kg/m^3",
                    diameter=diameter, drills=drills, point_angle_deg=point_angle_deg, limits=limits,
                    wall=None if wall_mm is None else f"{wall_mm!r} mm", fixed_positions=fixed)
            except Infeasible:
                got = None
            if got is not None:
                want = U * complex(math.cos(math.radians(remove_angle)), math.sin(math.radians(remove_angle)))
                ach = got.achieved_g_mm * complex(math.cos(math.radians(got.achieved_angle_deg)),
                                                  math.sin(math.radians(got.achieved_angle_deg)))
                err = abs(ach - want)
                if err <= allow + 1e-9:
                    import dataclasses

                    note = (f"{_fmt(U)} g·mm is more than the holes can remove within the limits; the most they "
                            f"remove ({_fmt(got.achieved_g_mm)} g·mm) leaves {_fmt(err)} g·mm, within the "
                            f"allowance of {_fmt(allow)} g·mm: taken")
                    return dataclasses.replace(
                        got, requested_g_mm=U, given_action=action, given_angle_deg=given, error_g_mm=err,
                        density_source=dens.source, material=dens.material.name if dens.material else None,
                        warnings=got.warnings + (note,))
        raise reason
    drill, (plan, pitch) = chosen
    d = drill.diameter_mm
    holes = []
    total = 0j
    warnings = []
    for ang, off, L in plan:
        Lr = _round_depth(L, limits.depth_step_mm, orientation, d, R)
        g = _geometry(orientation, d, Lr, R, rho, angle)
        if Lr > _top(d, angle, limits, wall_mm, limits.max_depth_ratio) + 1e-9:  # never round past a limit
            Lr = round(Lr - limits.depth_step_mm, 9)
            g = _geometry(orientation, d, Lr, R, rho, angle)
        holes.append(Hole(ang, round(off, 6) + 0.0, d, Lr, g.tip_depth_mm, g.mass_g, g.unbalance_g_mm))
        total += g.unbalance_g_mm * complex(math.cos(math.radians(ang)), math.sin(math.radians(ang)))
    tip = max(h.tip_depth_mm for h in holes)
    if point_only is not None:
        warnings.append(f"{_fmt(U)} g·mm is less than one {d:g} mm hole removes with its point alone "
                        f"({_fmt(holes[0].unbalance_g_mm)} g·mm); it leaves "
                        f"{_fmt(abs(holes[0].unbalance_g_mm - U))} g·mm, within the allowance of {_fmt(allow)} "
                        "g·mm: taken (drill to the shoulder only)")
    if tip > limits.warn_depth_ratio * d:
        warnings.append(f"tip depth {tip:.1f} mm is beyond {limits.warn_depth_ratio:g}·d "
                        f"({limits.warn_depth_ratio * d:.1f} mm): drill in pecks and check for drift [CP]")
    if fixed and len(holes) == 1 and abs(holes[0].offset_deg) > 1e-9:
        warnings.append(f"the share for the other fixed position is below half of what one {d:g} mm hole's point "
                        f"removes; drilled at {holes[0].angle_deg:g}° only (see the achieved angle)")
    if fixed and len(holes) == 2:
        gap = abs(offset_angle(holes[0].angle_deg, holes[1].angle_deg))
        chord = 2 * R * math.sin(math.radians(gap) / 2)
        if chord < limits.spacing_ratio * d:
            warnings.append(f"fixed positions {holes[0].angle_deg:g}° and {holes[1].angle_deg:g}° are "
                            f"{chord:.1f} mm apart, under {limits.spacing_ratio:g}·d [CP]")
    achieved = abs(total)
    ach_angle = norm_angle(math.degrees(math.atan2(total.imag, total.real))) if achieved > 0 else remove_angle
    want = U * complex(math.cos(math.radians(remove_angle)), math.sin(math.radians(remove_angle)))
    return DrillResult(orientation, R, drill.size, d, angle, tuple(holes), U, remove_angle, action, given,
                       achieved, ach_angle, abs(total - want), dens.kg_m3,
                       dens.material.name if dens.material else None, dens.source, limits, pitch, fixed,
                       tuple(warnings), wall_mm=wall_mm)


def _point_only(orientation, U, R, rho, angle, limits, wall, drill, remove_angle, allow):
    """The shallowest hole of the smallest drill, as a chosen design, when the request is smaller than it
    removes and its residual is within ``allow`` [g·mm]; else None."""
    d = drill.diameter_mm
    if orientation == "radial" and d >= R:
        return None
    least = _least(orientation, d, R, rho, angle)
    if not (math.isfinite(least) and U < least):  # the request is not below what the point removes
        return None
    depth = _round_depth(0.0 if orientation == "axial" else _radial_min_depth(R, d / 2), limits.depth_step_mm,
                         orientation, d, R)
    least = _geometry(orientation, d, depth, R, rho, angle).unbalance_g_mm
    if not (U < least and least - U <= allow + 1e-9):
        return None
    if _top(d, angle, limits, wall, limits.max_depth_ratio) < depth - 1e-9:
        return None
    return drill, ([(remove_angle, 0.0, depth)], None)


def _most_removed(orientation, U, R, rho, angle, limits, wall, candidates, fixed, remove_angle):
    """About the most [g·mm] the largest drill removes within the limits (as :func:`_nearest` counts it),
    or None when it has no room."""
    big = candidates[-1].diameter_mm
    top_big = _top(big, angle, limits, wall, limits.max_depth_ratio)
    if top_big < 0:
        return None
    if orientation == "axial":
        one = rho * _axial_volume(big / 2, top_big, _h(big, angle)) * R
    else:
        one = rho * _radial_moment(R, big / 2, min(top_big, R - _h(big, angle)), _h(big, angle))
    pitch = _pitch_deg(big, R, limits)
    if fixed:
        share = max(u for _, u in _split_fixed(U, remove_angle, fixed))
        return one * U / share if share > 0 else one
    if pitch is not None and math.sin(math.radians(pitch / 2)) > 0:
        n = max(1, min(limits.max_holes, int(180.0 // pitch) + 1))
        return one * math.sin(math.radians(n * pitch / 2)) / math.sin(math.radians(pitch / 2))
    return one


def _nearest(orientation, U, R, rho, angle, limits, wall, candidates, fixed, remove_angle=0.0,
             allow=None) -> Infeasible:
    """The reason a request cannot be drilled and the nearest feasible alternative (the error to raise)."""
    big = candidates[-1].diameter_mm
    small = candidates[0].diameter_mm
    top_big = _top(big, angle, limits, wall, limits.max_depth_ratio)
    if top_big < 0:
        return Infeasible(f"no room for a {big:g} mm hole: the wall and depth limits leave no depth for its point; "
                          "give a thicker {wall}, a flat-bottom tool ({point_angle_deg} 180) or another method "
                          "(plate, washers)", mentions=("wall", "point_angle_deg"))
    # largest removal per hole at the refusal limit
    if orientation == "axial":
        one = rho * _axial_volume(big / 2, top_big, _h(big, angle)) * R
    else:
        one = rho * _radial_moment(R, big / 2, min(top_big, R - _h(big, angle)), _h(big, angle))
    pitch = _pitch_deg(big, R, limits)
    n = limits.max_holes
    if fixed:  # each fixed position takes its own share: the larger share decides
        share = max(u for _, u in _split_fixed(U, remove_angle, fixed))
        most = one * U / share if share > 0 else one
    elif pitch is not None and math.sin(math.radians(pitch / 2)) > 0:
        n = max(1, min(n, int(180.0 // pitch) + 1))
        most = one * math.sin(math.radians(n * pitch / 2)) / math.sin(math.radians(pitch / 2))
    else:
        most = one
    values = {"U": (U, "g*mm"), "R": (R, "mm")}
    if allow is not None:
        values["allow"] = (allow, "g*mm")
    if U > most:
        values.update(most=(most, "g*mm"), rest=(U - most, "g*mm"))
        holes = f"{n} ×" if not fixed else "the"
        return Infeasible(
            f"{{U}} is more than {holes} {big:g} mm holes can remove within the limits (at most about {{most}} "
            f"at {limits.max_depth_ratio:g}·d" + ("" if allow is None else ", which leaves about {rest}, more than "
                                                   "the allowance of {allow}")
            + "); nearest: remove {most} here and the rest in another plane or by another method, or raise "
            "{max_depth_ratio} if the rotor maker allows", mentions=("max_depth_ratio",), quantities=values)
    least = _least(orientation, small, R, rho, angle)
    values.update(least=(least, "g*mm"), over=(least - U, "g*mm"))
    return Infeasible(
        f"{{U}} is less than the smallest {small:g} mm drill removes with its point alone ({{least}} at {{R}}"
        + ("" if allow is None else ", which leaves {over}, more than the allowance of {allow}")
        + "); nearest: drill at a smaller radius, use a smaller drill, or leave it if within tolerance",
        quantities=values)
