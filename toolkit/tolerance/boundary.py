"""Shared pieces of the tolerance modules: the unit and source texts, and the boundary helpers that convert
scalars and quantity arrays once and validate arrays by reductions.
"""

from __future__ import annotations

import functools
import math

import numpy as np

from toolkit.errors import BadInput
from toolkit.units import KINDS, magnitude, quantity, registry, speed_rpm

G_MM = "g*mm"
ISO_SOURCE = "ISO 21940-11:2016, 6.3.3"
LEVER_SOURCE = ("ISO 21940-11:2016, 7.2 (clause wording from memory [M]); share bounds: Bloch & Geitner, "
                 "Machinery Component Maintenance and Repair, ch. 6")
STATICS = "rigid-body statics, derived here [D], not a clause of the standard"


@functools.lru_cache(maxsize=None)
def unit_of(name: str):
    """A parsed pint Unit, cached: building quantities from unit strings re-parses them every time."""
    return registry().Unit(name)


def is_array_quantity(value) -> bool:
    return isinstance(value, registry().Quantity) and isinstance(value.magnitude, np.ndarray)


def boundary_magnitude(value, kind: str, unit: str, name: str, *, positive: bool = True):
    """Magnitude of a scalar (fully checked) or of an array quantity (dimension checked here, values
    checked later by :func:`require_positive` with reductions, which keeps arrays fast)."""
    if is_array_quantity(value):
        if not value.check(KINDS[kind].dimensionality):
            quantity(value, kind, name)  # raises the standard message
        if kind == "speed":
            _factor, root = registry().get_root_units(value.units)
            return value.m_as(unit_of("rpm" if "radian" in root._units else "1/min"))
        return value.m_as(unit_of(unit))
    if kind == "speed":
        return speed_rpm(value, name, positive=positive)
    return magnitude(value, kind, unit, name, positive=positive)


def require_positive(result, signed, *inputs) -> None:
    """Raise BadInput naming the first input with a value that is not finite and greater than zero.

    Cheap check first, by reductions: ``result`` (a product or quotient of the inputs) must lie in
    (0, inf) and ``signed`` (the one input whose sign the result does not fix, or None) must be > 0; NaN
    fails both comparisons. Only on failure are the inputs searched, to name the field and element.
    ``inputs`` are ``(name, magnitudes, unit)``; scalars were already checked at the boundary.
    """
    if not any(isinstance(arr, np.ndarray) for _n, arr, _u in inputs):
        return
    if np.min(result) > 0 and np.max(result) < math.inf and (signed is None or np.min(signed) > 0):
        return
    for name, arr, unit in inputs:
        a = np.asarray(arr, dtype=float)
        bad = ~(np.isfinite(a) & (a > 0))
        if bad.any():
            i = int(np.flatnonzero(bad)[0])
            raise BadInput(f"{name}: element {i} is {a.flat[i]!r} {unit}; every value must be a finite "
                           f"number greater than zero")
    raise BadInput(f"the inputs give a result out of the floating-point range ({np.min(result)!r} to "
                   f"{np.max(result)!r}); check the units")

