"""API residual unbalance per plane, 4W/N (API Std 617, 7th ed., Annex B [S]), and reading a journal load.
"""

from __future__ import annotations

from toolkit.errors import BadInput
from toolkit.tolerance.boundary import G_MM
from toolkit.units import Q_, magnitude, speed_rpm

#: API residual unbalance per plane: 4 oz*in per lb of journal load, times r/min. API Std 617, 7th ed.,
#: Annex B [S]. In SI 4 oz*in/lb = 6350 g*mm/kg exactly (1 lb = 16 oz, 1 in = 25.4 mm) [D].
API_OZ_IN_PER_LB = 4.0


def api_allowance(journal_load, speed):
    """API residual unbalance per plane, U_max = 4 W / N [oz*in] (W journal static load [lb], N maximum
    continuous speed [r/min]); SI 6350 W/N g*mm with W in kg.

    API Std 617, 7th ed., Annex B [S]; SI form [H, D]. journal_load is a mass (or a force, read as weight
    under standard gravity); speed : Quantity [1/time]. Returns a Quantity [g*mm].

    >>> round(api_allowance("1 lb", "1 rpm").m_as("oz*in"), 6)
    4.0
    """
    w = journal_lb(journal_load, "journal_load")
    n = speed_rpm(speed, "speed")
    return Q_(API_OZ_IN_PER_LB * w / n, "oz*in").to(G_MM)


def journal_lb(value, name: str) -> float:
    try:
        return float(magnitude(value, "mass", "lb", name, positive=True))
    except BadInput:
        try:
            force = magnitude(value, "force", "N", name, positive=True)
        except BadInput:
            raise BadInput(f"{name}: {value!r} is not a journal load; give a mass such as '206 kg' or "
                           f"'450 lb' (a force such as '2 kN' is read as weight)") from None
        return float(Q_(force / 9.80665, "kg").m_as("lb"))
