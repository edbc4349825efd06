"""MIL-STD-167-1 (1974) residual unbalance per plane by speed range [H].
"""

from __future__ import annotations

import math

from toolkit.tolerance.api import journal_lb
from toolkit.tolerance.boundary import G_MM
from toolkit.units import Q_, speed_rpm

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
    w = journal_lb(rotor_weight, "rotor weight")
    n = speed_rpm(speed, "speed")
    for upper, text, formula in MIL_STD_167_RANGES:
        if n < upper:
            return Q_(formula(w, n), "oz*in").to(G_MM), text
    raise AssertionError("unreachable")  # pragma: no cover
