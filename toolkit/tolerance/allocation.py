"""U_per to the bearing planes by the bounded lever rule (ISO 21940-11:2016, 7.2; bounds Bloch & Geitner
ch. 6), and from the bearing planes to correction planes at any axial position by statics [D].
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from toolkit.errors import BadInput, Worded
from toolkit.tolerance.boundary import G_MM, LEVER_SOURCE, boundary_magnitude, require_positive, unit_of
from toolkit.units import Q_, magnitude, quantity

#: Lower bound of a bearing plane's share of U_per; the upper bound is 1 - this. Bloch & Geitner ch. 6
#: ("never more than 7 : 3") [S]; the 0.3/0.7 numbers in the standard's form are [M]. Overridable.
DEFAULT_MIN_SHARE = 0.3


def check_min_share(min_share) -> float:
    if isinstance(min_share, bool) or not isinstance(min_share, (int, float)) or not math.isfinite(min_share) \
            or not 0.0 <= min_share <= 0.5:
        raise BadInput.about("min_share", f"{min_share!r} must be a number from 0 to 0.5 (default 0.3, i.e. shares "
                       f"kept between 0.3 and 0.7)")
    return float(min_share)


def lever_shares(span, com, min_share):
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
    low = check_min_share(min_share)
    u = boundary_magnitude(u_per, "unbalance", G_MM, "u_per")
    span = boundary_magnitude(bearing_span, "length", "mm", "bearing_span")
    com = boundary_magnitude(com_from_a, "length", "mm", "com_from_a", positive=False)
    _raw, share_a = lever_shares(span, com, low)
    u_a = u * share_a
    require_positive(u, None, ("u_per", u, G_MM))
    require_positive(span, None, ("bearing_span", span, "mm"))
    if isinstance(com, np.ndarray) and not math.isfinite(np.sum(com)):
        raise BadInput.about("com_from_a", "every value must be a finite length")
    return Q_(u_a, unit_of(G_MM)), Q_(u - u_a, unit_of(G_MM))


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
        return {"u_a_g_mm": self.u_a.m_as(G_MM), "u_b_g_mm": self.u_b.m_as(G_MM),
                "share_a": self.share_a, "share_b": self.share_b, "lever_share_a": self.lever_share_a,
                "share_bounds": [self.min_share, 1.0 - self.min_share], "bounded": self.bounded,
                "method": self.method, "source": self.source, "warnings": list(self.warnings)}


def bounds_text(low: float) -> str:
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
    low = check_min_share(min_share)
    u = quantity(u_per, "unbalance", "u_per", positive=True)
    span = quantity(bearing_span, "length", "bearing_span", positive=True)
    com = quantity(com_from_a, "length", "com_from_a")
    check_axial(com.m_as("mm"), span.m_as("mm"), "com_from_a")
    raw, share = lever_shares(span.m_as("mm"), com.m_as("mm"), low)
    raw, share = float(raw), float(share)
    bounded = abs(raw - share) > 1e-12
    warnings = []
    if bounded:
        warnings.append(f"the lever rule gave shares {raw:.2f}/{1 - raw:.2f}; the bound {low:.2f}-"
                        f"{1 - low:.2f} was applied")
    if not 0.0 <= com.m_as("mm") <= span.m_as("mm"):
        warnings.append(Worded("the centre of mass lies outside the bearings (overhung rotor): the lever rule "
                               "is meant for inboard rotors; consider static and couple tolerances "
                               "({static_share})", ("static_share",)))
    u_g = u.m_as(G_MM)
    method = f"lever rule U_A = U_per*L_B/L, U_B = U_per*L_A/L, {bounds_text(low)}"
    return BearingAllocation(u, span, com, Q_(u_g * share, G_MM), Q_(u_g * (1 - share), G_MM), raw, share,
                             low, bounded, method, LEVER_SOURCE, tuple(warnings))


#: Correction planes or a centre of mass farther than this many bearing spans outside the bearings are
#: refused as a likely typing error (our sanity bound [CP]).
AXIAL_LIMIT_SPANS = 3.0


def check_axial(z_mm: float, span_mm: float, name: str) -> None:
    if not -AXIAL_LIMIT_SPANS * span_mm <= z_mm <= (1 + AXIAL_LIMIT_SPANS) * span_mm:
        raise BadInput.about(name, f"{z_mm:g} mm is more than {AXIAL_LIMIT_SPANS:g} bearing spans "
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
    ua = magnitude(u_a, "unbalance", G_MM, "u_a", positive=True)
    ub = magnitude(u_b, "unbalance", G_MM, "u_b", positive=True)
    d = magnitude(bearing_span, "length", "mm", "bearing_span", positive=True)
    z = [float(magnitude(p, "length", "mm", f"plane {i + 1} position")) for i, p in enumerate(positions)]
    return tuple(Q_(t, G_MM) for t in transfer_mm(ua, ub, d, z))


def planes_together(z1: float, z2: float, d: float) -> str:
    """Why two plane positions (mm) cannot be told apart on a bearing span d (mm): both printed exactly.

    >>> planes_together(260.0, 930.0, 1e20)
    'the correction planes at 260 mm and 930 mm are closer than a billionth of the bearing span (1e+20 mm); give positions further apart or check the span'
    """
    if z1 == z2:
        return f"both correction planes are at {z1:.12g} mm; give two different positions"
    return (f"the correction planes at {z1:.12g} mm and {z2:.12g} mm are closer than a billionth of the "
            f"bearing span ({d:.6g} mm); give positions further apart or check the span")


def transfer_mm(ua: float, ub: float, d: float, z: list[float]) -> list[float]:
    if len(z) not in (1, 2):
        raise BadInput.about("planes", f"{len(z)} correction planes given; a rigid rotor takes one or two")
    if len(z) == 2 and abs(z[0] - z[1]) <= 1e-9 * d:
        raise BadInput.about("planes", planes_together(z[0], z[1], d))
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
