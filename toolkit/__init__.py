"""Counterpoise: rotor balancing for the shop floor.

Tolerances from balance quality grades (ISO 21940-11), corrections from measurements (influence
coefficients), corrections turned into drilled holes, weld-on plates or washers, and work orders.

This module stays light on purpose: importing ``toolkit`` must not import numpy, pint or the exporters, so
that the command line starts fast. Import the submodules you need (``toolkit.tolerance``,
``toolkit.units`` ...).
"""

from toolkit.errors import BadInput, CounterpoiseError, Infeasible, OutputError

__all__ = ["CounterpoiseError", "BadInput", "Infeasible", "OutputError", "__version__"]

__version__ = "0.1.0"
