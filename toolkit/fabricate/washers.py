"""Stacks of standard plain washers on a bolt at a radius that add a required unbalance.

Washer mass m = ρ (π/4)(d2² − d1²) h (D), with the dimensions of ISO 7089 (normal series, as reproduced
[H]), ISO 7093-1 (large series, from memory [M]) and inch plain washers (ASME B18.22.1 type A narrow, from
memory [M]); steel 7850 kg/m³ (EN 1993-1-1, 3.2.6 [H]). On an axial bolt every washer sits at the bolt's
radius R: U = n m R. On a radial bolt the stack starts on a seat at radius R and grows outward (outer
surface) or inward (inner surface): washer k's centre lies at R ± (k − ½) h, so the stack's centroid is at
R ± n h/2 and U = n m (R ± n h/2) (D). Thickness tolerances make single washers vary by about ±10 %:
weigh them [CP].
"""

from __future__ import annotations

import math
from dataclasses import dataclass, asdict

from toolkit.errors import BadInput, Infeasible
from toolkit.fabricate import stock as _stock
from toolkit.fabricate.shared import correction_g_mm, describe_placement, norm_angle
from toolkit.fabricate.materials import resolve_density
from toolkit.units import format_number as _fmt, magnitude
from toolkit.vectors import parse_angle

__all__ = ["WasherStack", "washer_mass", "washer_stack", "CAUTIONS", "DEFAULT_MAX_COUNT", "DEFAULT_SERIES"]

#: The washer series used unless another is given (the normal series).
DEFAULT_SERIES = "ISO 7089"

#: Most washers in one stack (thread engagement and bolt length limit it; common practice [CP], overridable).
DEFAULT_MAX_COUNT = 6

CAUTIONS = (
    "Secure every correction mass before any run: bolt torqued to the rotor maker's value and locked "
    "(thread locker, lock wire or a locking nut); keep full thread engagement.",
    "Weigh the washers: thickness tolerances change single masses by about ±10 % [CP].",
    "Guards closed and people clear of the plane of rotation during spin tests; follow the rotor maker, "
    "local codes and licensed practice.",
)


def washer_mass(d1, d2, h, density="7850 kg/m^3"):
    """Mass of a plain washer, m = ρ (π/4)(d2² − d1²) h (D). Returns a Quantity [g].

    >>> round(washer_mass("10.5 mm", "20 mm", "2 mm").m_as("g"), 3)
    3.573
    """
    from toolkit.units import Q_

    a = magnitude(d1, "length", "mm", "d1", positive=True)
    b = magnitude(d2, "length", "mm", "d2", positive=True)
    t = magnitude(h, "length", "mm", "h", positive=True)
    if b <= a:
        raise BadInput(f"d2: {d2!s} must be larger than the bore d1 = {d1!s}")
    rho = resolve_density(density=density).g_mm3
    return Q_(_mass(a, b, t, rho), "g")


def _mass(d1: float, d2: float, h: float, rho: float) -> float:
    return rho * math.pi / 4.0 * (d2 * d2 - d1 * d1) * h


def _stack_u(n: int, m: float, h: float, R: float, orientation: str, surface: str) -> tuple[float, float]:
    """(unbalance [g·mm], centroid radius [mm]) of n washers."""
    if orientation == "axial":
        return n * m * R, R
    rc = R + n * h / 2.0 if surface == "outer" else R - n * h / 2.0
    return n * m * rc, rc


@dataclass(frozen=True)
class WasherStack:
    """A stack of ``count`` washers of one size at a radius, with the unbalance it adds."""

    size: str
    series: str
    count: int
    unit_mass_g: float
    mass_g: float
    d1_mm: float
    d2_mm: float
    h_mm: float
    stack_height_mm: float
    orientation: str
    surface: str
    radius_mm: float
    centroid_radius_mm: float
    requested_g_mm: float
    add_angle_deg: float
    given_action: str
    given_angle_deg: float
    achieved_g_mm: float
    error_g_mm: float
    max_count: int
    density_kg_m3: float
    density_source: str
    washer_source: str
    warnings: tuple[str, ...] = ()
    method: str = "washer mass from standard dimensions; stack centroid (D)"
    cautions: tuple[str, ...] = CAUTIONS

    def placement(self, unb=None) -> str:
        """Where the correction goes, in words; ``unb`` formats an unbalance in g·mm (default metric)."""
        return describe_placement("add", self.given_action, self.requested_g_mm, self.given_angle_deg,
                                  self.add_angle_deg, "add the washers opposite, at", unb=unb)

    def to_dict(self) -> dict:
        out = asdict(self)
        out["placement"] = self.placement()
        out["warnings"], out["cautions"] = list(self.warnings), list(self.cautions)
        return out


def washer_stack(correction, *, radius, orientation: str = "axial", surface: str = "outer", size=None,
                 series=None, angle_deg=0.0, action: str = "add", material=None, density=None,
                 max_count: int = DEFAULT_MAX_COUNT, table: str = "washers",
                 materials_table: str = "materials", allowance=None) -> WasherStack:
    """The washer size and count whose stack comes nearest to ``correction``.

    correction : Quantity [mass·length] or [mass] with ``radius``; radius : Quantity [length] (bolt pitch
    radius, or the seat radius of a radial bolt); orientation ``"axial"`` or ``"radial"``; surface
    ``"outer"`` (radial stack grows outward) or ``"inner"``. size / series: restrict the choice (``"M12"``,
    ``"ISO 7089"``). The series is ISO 7089 unless one is given; a size that ISO 7089 does not have (an
    inch size) is taken from the one series that has it, and a warning says which. Density: steel
    7850 kg/m³ unless ``material`` or ``density`` is given. Ties go to fewer washers.

    allowance : Quantity [mass·length] or None, the residual allowed for this correction. A stack whose
    residual |achieved − requested| is within it is taken even when the request lies outside the range
    the series covers (less than half the lightest washer, more than the heaviest full stack); without an
    allowance, or when the nearest stack misses it, such a request is refused naming the nearest stack.

    >>> s = washer_stack("120 g*mm", radius="20 mm", size="M10", series="ISO 7089")
    >>> s.count, round(s.achieved_g_mm, 1)
    (2, 142.9)
    """
    if orientation not in ("axial", "radial"):
        raise BadInput.about("orientation", f"{orientation!r} is not allowed; use 'axial' or 'radial'")
    if surface not in ("outer", "inner"):
        raise BadInput.about("surface", f"{surface!r} is not allowed; use 'outer' or 'inner'")
    if action not in ("add", "remove"):
        raise BadInput.about("action", f"{action!r} is not allowed; use 'add' or 'remove'")
    if isinstance(max_count, bool) or not isinstance(max_count, int) or not 1 <= max_count <= 50:
        raise BadInput.about("max_count", f"{max_count!r} must be a whole number from 1 to 50")
    R = float(magnitude(radius, "length", "mm", "radius", positive=True))
    U = correction_g_mm(correction, radius)
    if material is None and density is None:
        dens = resolve_density(density="7850 kg/m^3")
        dens_src = "steel 7850 kg/m³ (EN 1993-1-1, 3.2.6 [H])"
    else:
        dens = resolve_density(material, density, materials_table)
        dens_src = dens.source
    rho = dens.g_mm3
    given = parse_angle(angle_deg, "angle")
    add_angle = norm_angle(given + 180.0) if action == "remove" else given
    allow = None if allowance is None else float(magnitude(allowance, "unbalance", "g*mm", "allowance",
                                                             nonnegative=True))
    all_w = _stock.washers(table)
    warnings = []
    want_size = None if size is None else str(size).strip().lower()
    if series is None:
        series = DEFAULT_SERIES
        if want_size is not None and not any(w.size.lower() == want_size and w.series == DEFAULT_SERIES
                                             for w in all_w):
            others = sorted({w.series for w in all_w if w.size.lower() == want_size})
            if len(others) == 1:
                series = others[0]
                warnings.append(f"size {size} is not in the {DEFAULT_SERIES} series (the default); the "
                                f"{series} series was used")
    pool = [w for w in all_w
            if (want_size is None or w.size.lower() == want_size)
            and w.series.lower() == str(series).strip().lower()]
    if not pool:
        known = ", ".join(sorted({w.size + " (" + w.series + ")" for w in all_w}))
        raise BadInput.about("size", f"no washer {size or ''} {series or ''} in the table ({{size}} and "
                                     f"{{series}}); known: {known}", mentions=("series",))
    best = None
    for w in pool:
        m = _mass(w.d1_mm, w.d2_mm, w.h_mm, rho)
        for n in range(1, max_count + 1):
            if orientation == "radial" and surface == "inner" and n * w.h_mm >= R:
                break
            u, rc = _stack_u(n, m, w.h_mm, R, orientation, surface)
            key = (round(abs(u - U), 9), n)
            if best is None or key < best[0]:
                best = (key, w, n, m, u, rc)
    _, w, n, m, u, rc = best
    within = allow is not None and abs(u - U) <= allow + 1e-9
    biggest = max(pool, key=lambda x: _mass(x.d1_mm, x.d2_mm, x.h_mm, rho))
    u_max, _ = _stack_u(max_count, _mass(biggest.d1_mm, biggest.d2_mm, biggest.h_mm, rho), biggest.h_mm, R,
                        orientation, surface)
    if U > u_max * (1 + 0.5 / max_count) and within:
        warnings.append(f"{_fmt(U)} g·mm is more than {max_count} {biggest.size} washers add; the full stack "
                        f"leaves {_fmt(abs(u - U))} g·mm, within the allowance of {_fmt(allow)} g·mm: taken")
    elif U > u_max * (1 + 0.5 / max_count):
        raise Infeasible(f"{{U}} needs more than {max_count} {biggest.size} washers add at {{R}} ({{most}})"
                         f"{_against(allow)}; nearest: {max_count} × {biggest.size} and the rest by another "
                         "method (plate), a larger radius, or raise {max_count} if the bolt allows",
                         mentions=("max_count",), quantities=_values(U, R, u_max, U - u_max, allow))
    smallest = min(pool, key=lambda x: _mass(x.d1_mm, x.d2_mm, x.h_mm, rho))
    u_min, _ = _stack_u(1, _mass(smallest.d1_mm, smallest.d2_mm, smallest.h_mm, rho), smallest.h_mm, R,
                        orientation, surface)
    if U < 0.5 * u_min and within:
        warnings.append(f"{_fmt(U)} g·mm is less than half of one {smallest.size} washer; one washer leaves "
                        f"{_fmt(abs(u - U))} g·mm, within the allowance of {_fmt(allow)} g·mm: taken")
    elif U < 0.5 * u_min:
        raise Infeasible(f"{{U}} is less than half of one {smallest.size} washer at {{R}} ({{most}})"
                         f"{_against(allow)}; nearest: a smaller washer or radius, or leave it if within "
                         "tolerance", quantities=_values(U, R, u_min, u_min - U, allow))
    if abs(u - U) > 0.1 * U and not within:
        warnings.append(f"the nearest stack is {100 * (u - U) / U:+.0f} % off the request; consider another "
                        "size or method")
    return WasherStack(w.size, w.series, n, m, n * m, w.d1_mm, w.d2_mm, w.h_mm, n * w.h_mm, orientation,
                       surface, R, rc, U, add_angle, action, given, u, abs(u - U), max_count, dens.kg_m3,
                       dens_src, w.source, tuple(warnings))


def _against(allow: float | None) -> str:
    """``", which leaves {left}, more than the allowance of {allow}"`` when an allowance was given."""
    if allow is None:
        return ""
    return ", which leaves {left}, more than the allowance of {allow}"


def _values(U: float, R: float, stack: float, residual: float, allow: float | None) -> dict:
    """The quantities of a refusal: the request, the radius, the stack's unbalance, what is left, the
    allowance."""
    values = {"U": (U, "g*mm"), "R": (R, "mm"), "most": (stack, "g*mm"), "left": (abs(residual), "g*mm")}
    if allow is not None:
        values["allow"] = (allow, "g*mm")
    return values
