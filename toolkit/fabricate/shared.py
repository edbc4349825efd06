"""What the fabrication modules share: a correction read as an unbalance, angles normalised and compared,
where a correction goes in words, and the bracketed root finder the depth and length solvers use.

Used by :mod:`~toolkit.fabricate.drilling`, :mod:`~toolkit.fabricate.plates`, :mod:`~toolkit.fabricate.washers`
and :mod:`~toolkit.fabricate.plan`.
"""

from __future__ import annotations

import math

from toolkit.errors import BadInput
from toolkit.units import format_number as _fmt, magnitude

__all__ = ["correction_g_mm", "describe_placement", "norm_angle", "offset_angle", "solve_bracketed"]


def correction_g_mm(amount, radius=None, name: str = "correction") -> float:
    """A correction as unbalance [g·mm]: an unbalance (``"2400 g*mm"``, ``"3.3 oz*in"``) or a mass with its
    radius (``"38 g"`` at ``"620 mm"``).

    >>> correction_g_mm("38 g", "620 mm"), round(correction_g_mm("1 oz*in"), 3)
    (23560.0, 720.078)
    """
    from toolkit.units import quantity

    if isinstance(amount, bool) or isinstance(amount, (int, float)) or (isinstance(amount, str)
                                                                       and _is_number(amount)):
        raise BadInput.about(name, f"{amount!r} has no unit; give an unbalance (e.g. '2400 g*mm', '3.3 oz*in') "
                                   "or a mass with its {radius} (e.g. '38 g')", mentions=("radius",))
    try:
        return float(quantity(amount, "unbalance", name, positive=True).m_as("g*mm"))
    except BadInput as exc:
        if "greater than zero" in str(exc):
            raise
    try:
        m = magnitude(amount, "mass", "g", name, positive=True)
    except BadInput as exc:
        if "greater than zero" in str(exc):
            raise
        raise BadInput.about(name, f"{amount!r} is neither an unbalance (e.g. '2400 g*mm', '3.3 oz*in') nor "
                                   "a mass with its {radius} (e.g. '38 g')", mentions=("radius",)) from None
    if radius is None:
        raise BadInput.about(name, f"{amount!s} is a mass; give its radius too ({{radius}}, e.g. '620 mm') or "
                                   "give an unbalance such as '2400 g*mm'", mentions=("radius",))
    return float(m * magnitude(radius, "length", "mm", "radius", positive=True))


def _is_number(text: str) -> bool:
    try:
        float(text)
    except ValueError:
        return False
    return True


def describe_placement(method_action: str, given_action: str, requested_g_mm: float, given_angle_deg: float,
                       target_angle_deg: float, opposite: str, where: str = "", unb=None) -> str:
    """Where a correction goes, in words, saying so when the method works opposite to how the correction was
    given (holes remove at the heavy spot; plates and washers add opposite it).

    ``where`` names the place after the word "at" when the correction is carried out as given (e.g.
    ``"the heavy spot, "``); it must not repeat "at".

    >>> describe_placement("remove", "add", 2400.0, 131.0, 311.0, "remove it at the heavy spot,")
    'correction given as add 2400 g·mm at 131°: remove it at the heavy spot, 311° (= 131° + 180°)'
    >>> describe_placement("add", "add", 2400.0, 131.0, 131.0, "weld the plate opposite, at")
    'add 2400 g·mm at 131°'
    >>> describe_placement("remove", "remove", 2400.0, 131.0, 131.0, "remove it at the heavy spot,", "the heavy spot, ")
    'remove 2400 g·mm at the heavy spot, 131°'
    """
    unb = unb or (lambda x: f"{_fmt(x)} g·mm")
    if given_action != method_action:
        return (f"correction given as {given_action} {unb(requested_g_mm)} at {given_angle_deg:g}°: "
                f"{opposite} {target_angle_deg:g}° (= {given_angle_deg:g}° + 180°)")
    return f"{method_action} {unb(requested_g_mm)} at {where}{target_angle_deg:g}°"


def norm_angle(a: float) -> float:
    """An angle [deg] in [0, 360), rounded to 1e-9 degree.

    >>> norm_angle(-30.0), norm_angle(720.5), norm_angle(359.9999999999999)
    (330.0, 0.5, 0.0)
    """
    a = math.fmod(a, 360.0)
    a = a + 360.0 if a < 0 else a
    a = 0.0 if a >= 360.0 - 1e-12 else a
    return round(a, 9) + 0.0


def offset_angle(angle: float, centre: float) -> float:
    """The signed difference angle - centre [deg] in [-180, 180).

    >>> offset_angle(10.0, 350.0), offset_angle(350.0, 10.0)
    (20.0, -20.0)
    """
    return (angle - centre + 180.0) % 360.0 - 180.0


def solve_bracketed(f, lo: float, hi: float, tol: float = 1e-10, max_iter: int = 200) -> float:
    """Root of a continuous ``f`` on [lo, hi] where f(lo) and f(hi) differ in sign (Illinois regula falsi,
    falling back to bisection; D). Raises ValueError if the root is not bracketed.

    >>> round(solve_bracketed(lambda x: x * x - 2.0, 0.0, 2.0), 9)
    1.414213562
    """
    flo, fhi = f(lo), f(hi)
    if flo == 0:
        return lo
    if fhi == 0:
        return hi
    if (flo > 0) == (fhi > 0):
        raise ValueError("root not bracketed")
    side = 0
    for _ in range(max_iter):
        x = (lo * fhi - hi * flo) / (fhi - flo)
        if not lo < x < hi:
            x = 0.5 * (lo + hi)
        fx = f(x)
        if fx == 0 or (hi - lo) < tol * max(1.0, abs(x)):
            return x
        if (fx > 0) == (fhi > 0):
            hi, fhi = x, fx
            if side == 1:
                flo *= 0.5
            side = 1
        else:
            lo, flo = x, fx
            if side == -1:
                fhi *= 0.5
            side = -1
    return 0.5 * (lo + hi)
