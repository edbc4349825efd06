"""The one formatter: every number a user reads (terminal, JSON labels, PDF, spreadsheet) as text, in the
unit system of the job or the command.

Amounts arrive either as floats in the fixed units the library computes in (g·mm, g, mm, kg) or as pint
quantities; :class:`Formatter` converts them once to the printed unit of its :class:`~toolkit.units.
UnitSystem` (``metric``: g·mm, g, mm, kg; ``imperial``: oz·in, oz, in, lb; ``inch-gram``: g·in, g, in,
lb, for shops whose balancing machine and scale read grams on inch rotors). The imperial factors are exact
(1 oz = 28.349523125 g, 1 in = 25.4 mm, 1 lb = 0.45359237 kg: the international yard and pound, 1959).

Three widths of a number are used, and each kind of text keeps to one of them:

- ``unbalance``, ``mass``, ``length``, ``rotor_mass``: results, with significant figures (4, 3 for masses
  on a work order); values of 10^sig and more print as whole numbers, never with an exponent;
- ``dimension``: a size the machinist sets or reads off a rule (a radius, a plate's width, a washer's
  bore): metric to 0.01 mm without trailing zeros, inch to four significant figures;
- ``depth``: a drilling depth, to a fixed number of decimals (0.1 mm, 0.001 in by default).
"""

from __future__ import annotations

import math

from toolkit.units import IMPERIAL, INCH_GRAM, METRIC, UnitSystem, format_number, registry, unit_system

__all__ = ["Formatter", "unit_labels", "SYSTEMS"]

SYSTEMS = (METRIC, IMPERIAL, INCH_GRAM)

#: the stored unit of each kind of amount (what the library computes in)
STORED = {"unbalance": "g*mm", "mass": "g", "length": "mm", "rotor_mass": "kg"}

_EXACT = {"g*mm": 1.0, "g": 1.0, "mm": 1.0, "kg": 1.0,
          "oz*in": 1 / (28.349523125 * 25.4), "oz": 1 / 28.349523125, "in": 1 / 25.4, "lb": 1 / 0.45359237,
          "g*in": 1 / 25.4}


def unit_labels(units) -> dict[str, tuple[str, float]]:
    """Printed unit symbol and factor from the stored unit, for the chosen system.

    Keys: ``unbalance`` (from g·mm), ``mass`` (from g), ``length`` (from mm), ``rotor_mass`` (from kg).

    >>> unit_labels("imperial")["unbalance"]
    ('oz·in', 0.001388...)
    >>> unit_labels("inch-gram")["unbalance"], unit_labels("inch-gram")["mass"]
    (('g·in', 0.03937...), ('g', 1.0))
    """
    system = units if isinstance(units, UnitSystem) else unit_system(units)
    shown = {"unbalance": system.unbalance, "mass": system.mass, "length": system.length,
             "rotor_mass": system.rotor_mass}
    return {kind: (system.symbol(unit), _EXACT[unit]) for kind, unit in shown.items()}


class Formatter:
    """Numbers and angles as printed text, in one unit system (the one place every face formats through).

    ``units`` is a system name (``"metric"``, ``"imperial"``, ``"inch-gram"``) or a
    :class:`~toolkit.units.UnitSystem`; ``reference`` and ``sense`` are the angle reference and sense that
    :meth:`where` prints beside an angle. Each amount method takes a float in the stored unit (g·mm, g, mm,
    kg) or a pint quantity.

    >>> f = Formatter("metric", "keyway", "against rotation")
    >>> f.unbalance(2005.35), f.mass(12.345), f.angle(215.04), f.where(215.04)
    ('2005 g·mm', '12.3 g', '215°', '215° from keyway, against rotation')
    >>> i = Formatter("imperial")
    >>> i.unbalance(720.08), i.dimension(228.6), i.depth(21.2), i.mass(22.35, sig=4)
    ('1.000 oz·in', '9.000 in', '0.835 in', '0.7884 oz')
    """

    def __init__(self, units="metric", reference: str = "", sense: str = ""):
        self.system = units if isinstance(units, UnitSystem) else unit_system(units)
        self.labels = unit_labels(self.system)
        self.reference = reference
        self.sense = sense

    @property
    def units(self) -> str:
        return self.system.name

    def value(self, kind: str, stored) -> float:
        """A stored value (g·mm, g, mm, kg) or a quantity in the printed unit."""
        if isinstance(stored, registry().Quantity):
            stored = stored.m_as(STORED[kind])
        return float(stored) * self.labels[kind][1]

    def symbol(self, kind: str) -> str:
        return self.labels[kind][0]

    @staticmethod
    def number(x: float, sig: int = 4) -> str:
        """``sig`` significant figures; whole numbers from 10^sig up (no exponent for shop-sized values)."""
        if x and math.isfinite(x) and abs(x) >= 10 ** sig:
            return f"{x:.0f}"
        if x and math.isfinite(x):
            x = float(f"{x:.{sig}g}")  # 0.99999999 (a conversion's last bit) is 1.000, not 1.0000
        return format_number(x, sig) if x else "0"

    @staticmethod
    def quantity(value, unit: str, sig: int = 4) -> str:
        """A quantity (or a magnitude already in ``unit``) in ``unit`` with its symbol, whatever the unit
        system: for the values an error quotes, which may be absurd (plain notation, an exponent only
        outside 1e-6 to 1e7, see :func:`toolkit.units.format_number`).

        >>> from toolkit.units import Q_
        >>> Formatter.quantity(Q_(1, "oz*in"), "g*mm"), Formatter.quantity(2.5e300, "kg")
        ('720.1 g·mm', '2.500e+300 kg')
        """
        mag = value.m_as(unit) if isinstance(value, registry().Quantity) else float(value)
        return f"{format_number(mag, sig)} {METRIC.symbol(unit)}"

    def amount(self, kind: str, stored, sig: int = 4) -> str:
        return f"{self.number(self.value(kind, stored), sig)} {self.symbol(kind)}"

    def unbalance(self, g_mm, sig: int = 4) -> str:
        return self.amount("unbalance", g_mm, sig)

    def mass(self, g, sig: int = 3) -> str:
        return self.amount("mass", g, sig)

    def length(self, mm, sig: int = 4) -> str:
        return self.amount("length", mm, sig)

    def rotor_mass(self, kg, sig: int = 4) -> str:
        return self.amount("rotor_mass", kg, sig)

    def dimension(self, mm) -> str:
        """A size the machinist sets: metric to 0.01 mm without trailing zeros, inch to 4 figures."""
        x = self.value("length", mm)
        if self.system.length == "mm":
            return f"{round(x, 2):g} mm"
        return f"{format_number(x, 4)} in"

    def depth(self, mm, decimals: int = 1) -> str:
        """A depth to a fixed step: ``decimals`` places in mm, two more in inches (0.1 mm, 0.001 in)."""
        x = self.value("length", mm)
        if self.system.length == "mm":
            return f"{x:.{decimals}f} mm"
        return f"{x:.{decimals + 2}f} in"

    @staticmethod
    def angle(deg: float) -> str:
        value = round(deg) % 360 if abs(deg - round(deg)) < 0.05 else round(deg, 1) % 360
        return f"{value:g}°"

    def where(self, deg: float) -> str:
        """An angle with its reference and sense, as every operation prints it."""
        return f"{self.angle(deg)} from {self.reference}, {self.sense}"

    def convention(self) -> str:
        """The sentence that states the angle convention of the whole order."""
        return (f"Angles in degrees from the reference mark ({self.reference}), counted {self.sense}. "
                f"An unbalance is the heavy spot.")
