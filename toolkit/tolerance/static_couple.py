"""Static and couple tolerances for narrow or overhung rotors: when to use them Bloch & Geitner ch. 6 [S];
the split by statics [D].
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from toolkit.errors import BadInput, Infeasible
from toolkit.tolerance.allocation import planes_together
from toolkit.tolerance.boundary import G_MM, STATICS
from toolkit.units import Q_, magnitude

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
        return {"static_share": self.static_share, "static_g_mm": self.static.m_as(G_MM),
                "couple_per_plane_g_mm": self.couple_per_plane.m_as(G_MM),
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
        raise BadInput.about("static_share", f"{static_share!r} must be a fraction between 0 and 1 (exclusive), "
                       f"e.g. 0.5")
    ua = magnitude(u_a, "unbalance", G_MM, "u_a", positive=True)
    ub = magnitude(u_b, "unbalance", G_MM, "u_b", positive=True)
    d = magnitude(bearing_span, "length", "mm", "bearing_span", positive=True)
    zs = magnitude(com_from_a, "length", "mm", "com_from_a")
    if len(positions) != 2:
        raise BadInput.about("planes", f"static and couple tolerances need two correction planes, {len(positions)} "
                       f"given")
    z1, z2 = (magnitude(p, "length", "mm", f"plane {i + 1} position") for i, p in enumerate(positions))
    b = abs(z2 - z1)
    if b <= 1e-9 * d:
        raise BadInput.about("planes", planes_together(z1, z2, d))
    total = ua + ub
    limits = [ua * d / abs(d - zs) if abs(d - zs) > 0 else math.inf, ub * d / abs(zs) if abs(zs) > 0 else math.inf]
    max_share = min(min(limits) / total, 1.0)
    s = static_share * total
    uc = (d / b) * min(ua - s * abs(d - zs) / d, ub - s * abs(zs) / d)
    if uc <= 0:
        raise Infeasible.about("static_share", f"{static_share:g} leaves no couple allowance for this geometry; "
                         f"choose a static share below {max_share:.3f}")
    method = (f"static part {static_share:g} x (U_A + U_B) at the centre-of-mass plane; couple part the largest "
              f"that keeps both bearing planes within their allowances ({STATICS})")
    return StaticCouple(float(static_share), Q_(s, G_MM), Q_(uc, G_MM), Q_(uc * b, "g*mm**2"), max_share,
                        tuple(names), method, "Bloch & Geitner ch. 6 (when to use the static/couple form); "
                        "split by statics [D]")
