"""Unbalance and vibration vectors written as ``AMOUNT@ANGLE``.

A vector is an amount with its unit and an angle in degrees measured on the rotor from its reference mark:
``"38 g@210"``, ``"4.2 mm/s@75"``, ``"12 um@300"``, ``"2400 g*mm @ 131°"``. Internally a vector is a
complex number ``amount * exp(i * angle)`` in the kind's kernel unit (see :mod:`toolkit.units`).

Helpers here (docs/methods.md §2, "Helpers", all [D]: plain vector algebra, checked numerically):
adding and scaling vectors, the same unbalance at another radius (m2 = m1 * r1 / r2), splitting one
correction onto fixed positions (law of sines), combining several weights into one (vector sum of
m * r * e^{i angle}), and the static/couple decomposition of a two-plane correction.

All angles of one call are in one sense (with or against rotation); these helpers never change the sense.
Removing mass at an angle equals adding the same mass at that angle + 180 degrees.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

from toolkit.errors import BadInput

__all__ = ["parse_vector", "parse_angle", "to_complex", "polar", "parse_reading", "add_vectors",
           "scale_vector", "change_radius", "split_vector", "Split", "combine", "static_couple",
           "StaticCoupleParts", "READING_KINDS", "neighbours", "sine_split"]

_SEPARATOR = re.compile(r"\s*(?:@|∠)\s*")
_ANGLE = re.compile(r"^([-+]?(?:[0-9]+\.?[0-9]*|\.[0-9]+)(?:[eE][-+]?[0-9]+)?)\s*(?:°|deg|degrees?)?$")
#: A plain amount (a reading in the instrument's own units): ASCII digits, an optional exponent, nothing else.
_PLAIN_AMOUNT = re.compile(r"[+]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE][-+]?[0-9]+)?")
#: Bounds of our own [CP] on a plain amount other than zero: readings of any instrument lie far inside.
PLAIN_AMOUNT_BOUNDS = (1e-9, 1e12)


def parse_angle(text, name: str = "angle") -> float:
    """An angle in degrees, normalised to [0, 360). Accepts ``210``, ``"210"``, ``"210°"``, ``"210 deg"``,
    ``"-30"`` (= 330).

    >>> parse_angle("210°"), parse_angle("-30"), parse_angle(720.5)
    (210.0, 330.0, 0.5)
    """
    if isinstance(text, bool):
        raise BadInput.about(name, f"{text!r} is not an angle in degrees")
    if isinstance(text, (int, float)):
        value = float(text)
    else:
        match = _ANGLE.match(str(text).strip())
        if not match:
            raise BadInput.about(name, f"{text!r} is not an angle; give degrees such as '210' or '210 deg'")
        value = float(match.group(1))
    if not math.isfinite(value):
        raise BadInput.about(name, f"{text!r} is not a finite angle")
    value = math.fmod(value, 360.0)
    if value < 0:
        value += 360.0
    return 0.0 if value >= 360.0 else value + 0.0


def parse_vector(text, kind: str | None = None, name: str = "vector"):
    """Split ``AMOUNT@ANGLE`` into ``(amount, angle_deg)``.

    With ``kind`` (a name from :data:`toolkit.units.KINDS`, e.g. ``"mass"``, ``"unbalance"``,
    ``"vibration velocity"``) the amount must carry a unit of that kind and is returned as a pint quantity.
    With ``kind=None`` the amount is a plain non-negative number (a reading in the instrument's own units).

    >>> parse_vector("61.35@0")
    (61.35, 0.0)
    >>> amount, angle = parse_vector("38 g@210", "mass"); (str(amount), angle)
    ('38 gram', 210.0)
    >>> parse_vector("38 g", "mass", "--residual")
    Traceback (most recent call last):
    ...
    toolkit.errors.BadInput: --residual: '38 g' is not a vector; write AMOUNT@ANGLE, e.g. '38 g@210'
    """
    if not isinstance(text, str):
        raise BadInput.about(name, f"{text!r} is not a vector; write AMOUNT@ANGLE, e.g. '38 g@210'")
    parts = _SEPARATOR.split(text.strip())
    if len(parts) != 2 or not parts[0] or not parts[1]:
        example = "'61.35@0'" if kind is None else "'38 g@210'"
        raise BadInput.about(name, f"{text!r} is not a vector; write AMOUNT@ANGLE, e.g. {example}")
    angle = parse_angle(parts[1], name=f"{name} angle" if name else "angle")
    if kind is None:
        return _plain_amount(parts[0], name), angle
    from toolkit.units import quantity

    amount = quantity(parts[0], kind, name, nonnegative=True)
    return amount, angle


def _plain_amount(text: str, name: str) -> float:
    """A plain non-negative amount, read exactly as written (no separators, no arithmetic) and bounded."""
    text = text.strip()
    if not _PLAIN_AMOUNT.fullmatch(text):
        try:
            value = float(text)
        except ValueError:
            raise BadInput.about(name, f"amount {text!r} is not a number; write digits such as 61.35") from None
        if not math.isfinite(value) or value < 0:
            raise BadInput.about(name, f"amount {text!r} must be a finite number, zero or more")
        raise BadInput.about(name, f"amount {text!r} is not written as plain digits; write it such as 61.35")
    amount = float(text)
    low, high = PLAIN_AMOUNT_BOUNDS
    if not math.isfinite(amount) or amount > high or (amount == 0 and any(c in "123456789" for c in
                                                                            re.split("[eE]", text)[0])):
        side = "above the largest" if amount != 0 else "below the smallest"
        raise BadInput.about(name, f"amount {text!r} is {side} amount read (from {low:g} to {high:g}, or 0; "
                       "bounds of our own [CP])")
    if 0 < amount < low:
        raise BadInput.about(name, f"amount {text!r} is below the smallest amount read (from {low:g} to {high:g}, "
                       "or 0; bounds of our own [CP])")
    return amount


#: Kinds a vibration reading may have, tried in this order by :func:`parse_reading`.
READING_KINDS = ("vibration velocity", "displacement", "acceleration")


def polar(z: complex) -> tuple[float, float]:
    """``(amount, angle_deg)`` of a complex vector, the angle in [0, 360).

    >>> polar(complex(0, -2))
    (2.0, 270.0)
    """
    amount = abs(z)
    if amount == 0.0:
        return 0.0, 0.0
    return float(amount), parse_angle(math.degrees(math.atan2(z.imag, z.real)))


def to_complex(vector, kind: str, name: str = "vector") -> complex:
    """A vector (``"38 g@210"`` or a pair ``(quantity, angle)``) as a complex number in the kernel unit of
    ``kind`` (grams for ``"mass"`` are *not* the kernel unit: kg is; see :data:`toolkit.units.KINDS`).

    >>> z = to_complex("10 g@90", "mass"); round(z.imag, 6), round(z.real, 9)
    (0.01, 0.0)
    """
    from toolkit.units import magnitude

    if isinstance(vector, tuple) and len(vector) == 2:
        amount = magnitude(vector[0], kind, name=name, nonnegative=True)
        angle = parse_angle(vector[1], name=f"{name} angle" if name else "angle")
    else:
        quantity_, angle = parse_vector(vector, kind, name)
        amount = magnitude(quantity_, kind, name=name)
    rad = math.radians(angle)
    return complex(amount * math.cos(rad), amount * math.sin(rad))


def _grams(vector, name: str) -> complex:
    from toolkit.units import magnitude

    if isinstance(vector, tuple) and len(vector) == 2:
        amount = magnitude(vector[0], "mass", "g", name=name, nonnegative=True)
        angle = parse_angle(vector[1], name=f"{name} angle" if name else "angle")
    else:
        quantity_, angle = parse_vector(vector, "mass", name)
        amount = quantity_.m_as("g")
    rad = math.radians(angle)
    return complex(amount * math.cos(rad), amount * math.sin(rad))


def parse_reading(text, name: str = "reading") -> tuple[complex, str, str]:
    """A vibration reading ``"4.2 mm/s@75"``, ``"12 um@300"`` or ``"3 m/s^2@10"`` as
    ``(complex, kind, unit)``: the complex value in the kind's unit (mm/s, µm or m/s²).

    Angles are taken as written (their sense is declared by the caller, see
    :func:`toolkit.influence.conjugate_needed`). A reading without a unit is refused.

    >>> z, kind, unit = parse_reading("4.2 mm/s@90"); round(z.imag, 9), kind, unit
    (4.2, 'vibration velocity', 'mm/s')
    >>> parse_reading("4.2@90", "run 'original' readings[1]")
    Traceback (most recent call last):
    ...
    toolkit.errors.BadInput: run 'original' readings[1]: '4.2' has no unit; give a reading such as '4.2 mm/s@75' or '12 um@300'
    """
    from toolkit.units import KINDS, quantity, registry

    if not isinstance(text, str):
        raise BadInput.about(name, f"{text!r} is not a reading; write AMOUNT@ANGLE, e.g. '4.2 mm/s@75'")
    parts = _SEPARATOR.split(text.strip())
    if len(parts) != 2 or not parts[0] or not parts[1]:
        raise BadInput.about(name, f"{text!r} is not a reading; write AMOUNT@ANGLE, e.g. '4.2 mm/s@75'")
    angle = parse_angle(parts[1], name=f"{name} angle" if name else "angle")
    amount_text = parts[0].strip()
    try:
        float(amount_text)
    except ValueError:
        pass
    else:
        raise BadInput.about(name, f"{amount_text!r} has no unit; give a reading such as '4.2 mm/s@75' or "
                       f"'12 um@300'")
    for kind in READING_KINDS:
        try:
            q = quantity(amount_text, kind, name, nonnegative=True)
        except BadInput as exc:
            if "not a" in str(exc) and "given" in str(exc):
                continue  # wrong dimension: try the next kind
            raise
        unit = KINDS[kind].kernel_unit
        amount = q.m_as(unit)
        rad = math.radians(angle)
        return complex(amount * math.cos(rad), amount * math.sin(rad)), kind, unit.replace("**", "^")
    registry()
    raise BadInput.about(name, f"{amount_text!r} is not a vibration velocity, displacement or acceleration; "
                   f"give e.g. '4.2 mm/s@75', '12 um@300' or '3 m/s^2@10'")


def add_vectors(*vectors, kind: str = "mass"):
    """The vector sum of several ``AMOUNT@ANGLE`` vectors of one kind, as ``(quantity, angle_deg)``.

    Source: plain vector addition (docs/methods.md §2, helpers) [D].

    >>> amount, angle = add_vectors("10 g@0", "15 g@90", "5 g@200"); f"{amount.m_as('g'):.3f} g@{angle:.2f}"
    '14.308 g@68.25'
    """
    from toolkit.units import KINDS, Q_

    if not vectors:
        raise BadInput.about("vectors", "none given; give at least one AMOUNT@ANGLE")
    total = sum((to_complex(v, kind, f"vector {i + 1}") for i, v in enumerate(vectors)), 0j)
    amount, angle = polar(total)
    return Q_(amount, KINDS[kind].kernel_unit).to(_display_unit(kind)), angle


def _display_unit(kind: str) -> str:
    return {"mass": "g", "unbalance": "g*mm"}.get(kind, __import__("toolkit.units", fromlist=["KINDS"])
                                                       .KINDS[kind].kernel_unit)


def scale_vector(vector, factor: float, kind: str = "mass"):
    """A vector multiplied by a plain factor; a negative factor turns it by 180 degrees.

    >>> amount, angle = scale_vector("12 g@30", -0.5); f"{amount.m_as('g'):g} g@{angle:g}"
    '6 g@210'
    """
    from toolkit.units import KINDS, Q_

    if isinstance(factor, bool) or not isinstance(factor, (int, float)) or not math.isfinite(factor):
        raise BadInput.about("factor", f"{factor!r} is not a finite number")
    amount, angle = polar(to_complex(vector, kind) * factor)
    return Q_(amount, KINDS[kind].kernel_unit).to(_display_unit(kind)), angle


def change_radius(mass, radius_from, radius_to):
    """The mass that gives the same unbalance at another radius: m2 = m1 * r1 / r2 [D].

    Parameters: mass [mass], radius_from [length] where ``mass`` sits, radius_to [length] where it will sit.

    >>> f"{change_radius('30 g', '120 mm', '200 mm').m_as('g'):.6f}"
    '18.000000'
    """
    from toolkit.units import Q_, magnitude

    m = magnitude(mass, "mass", "g", name="mass", nonnegative=True)
    r1 = magnitude(radius_from, "length", "mm", name="radius_from", positive=True)
    r2 = magnitude(radius_to, "length", "mm", name="radius_to", positive=True)
    return Q_(m * r1 / r2, "g")


@dataclass(frozen=True)
class Split:
    """One correction split onto fixed positions: ``parts`` is a tuple of ``(angle_deg, mass in g)``."""

    mass_g: float
    angle_deg: float
    positions_deg: tuple[float, ...]
    parts: tuple[tuple[float, float], ...]
    method: str = "law of sines onto the two neighbouring positions [D]"

    def to_dict(self) -> dict:
        return {"input": {"mass_g": self.mass_g, "angle_deg": self.angle_deg},
                "positions_deg": list(self.positions_deg),
                "parts": [{"angle_deg": a, "mass_g": m} for a, m in self.parts],
                "method": self.method}


def split_vector(vector, positions: int | None = None, offset=0.0, at=None) -> Split:
    """Split a mass ``AMOUNT@ANGLE`` onto fixed positions (holes, bolts, blade roots).

    Source: law of sines [D] (docs/methods.md §2): for positions θa < θ < θb less than 180 degrees apart,
    m_a = m sin(θb − θ)/sin(θb − θa) and m_b = m sin(θ − θa)/sin(θb − θa). The vector sum of the parts
    equals the input.

    Parameters: vector, a mass vector such as ``"25 g@100"``; ``positions``, a count of equally spaced
    positions (3 or more) starting at ``offset`` [deg]; or ``at``, a list of position angles [deg]. The two
    positions either side of the angle are used; they must be less than 180 degrees apart, otherwise
    :class:`~toolkit.errors.Infeasible`.

    >>> [(a, round(m, 3)) for a, m in split_vector("25 g@100", at=[90, 135]).parts]
    [(90.0, 20.279), (135.0, 6.139)]
    >>> [(a, round(m, 3)) for a, m in split_vector("10 g@45", positions=8).parts]
    [(45.0, 10.0)]
    """
    from toolkit.errors import Infeasible

    z = _grams(vector, "vector")
    mass, theta = polar(z)
    if (positions is None) == (at is None):
        raise BadInput.about("positions", "give either a number of equally spaced positions or a list of angles "
                                          "({at})", mentions=("at",))
    if positions is not None:
        if isinstance(positions, bool) or not isinstance(positions, int) or positions < 3 or positions > 360:
            raise BadInput.about("positions", f"{positions!r} is not allowed; give a whole number from 3 to 360")
        start = parse_angle(offset, "offset")
        angles = sorted({parse_angle(start + k * 360.0 / positions) for k in range(positions)})
    else:
        if isinstance(at, str):
            at = [a for a in at.split(",") if a.strip()]
        angles = sorted({parse_angle(a, "at") for a in at})
        if not angles:
            raise BadInput.about("at", "no angles given; give at least two, e.g. '90,135'")
    if mass == 0.0:
        return Split(0.0, 0.0, tuple(angles), ())
    for a in angles:
        if _gap(a, theta) < 1e-9:
            return Split(mass, theta, tuple(angles), ((a, mass),))
    below, above = neighbours(theta, angles)
    span = _ccw(below, above)
    if len(angles) < 2 or span >= 180.0 - 1e-9:
        raise Infeasible.about("positions" if at is None else "at",
                               f"{mass:.4g} g@{theta:.4g} does not lie between two positions less than 180 "
                               f"degrees apart (nearest {below:g} and {above:g}); add a position nearer "
                               f"{theta:.4g} degrees")
    m_a, m_b = sine_split(mass, theta, below, above)
    return Split(mass, theta, tuple(angles), ((below, m_a), (above, m_b)))


def neighbours(theta: float, angles) -> tuple[float, float]:
    """The positions either side of ``theta`` [deg], walking round the circle: (the nearest at or below it,
    the nearest above it), both from ``angles`` [deg in [0, 360)].

    >>> neighbours(100.0, [0.0, 90.0, 135.0]), neighbours(350.0, [0.0, 90.0, 270.0])
    ((90.0, 135.0), (270.0, 0.0))
    """
    return max(angles, key=lambda a: -_ccw(a, theta)), min(angles, key=lambda a: _ccw(theta, a))


def sine_split(amount: float, theta: float, below: float, above: float) -> tuple[float, float]:
    """Law of sines [D] (docs/methods.md §2): ``amount`` at ``theta`` onto the positions ``below`` and
    ``above`` [deg] either side of it, less than 180° apart: a = U sin(θb − θ)/sin(θb − θa),
    b = U sin(θ − θa)/sin(θb − θa). The parts' vector sum equals the input.

    >>> [round(x, 3) for x in sine_split(25.0, 100.0, 90.0, 135.0)]
    [20.279, 6.139]
    """
    s = math.sin(math.radians(_ccw(below, above)))
    return (amount * math.sin(math.radians(_ccw(theta, above))) / s,
            amount * math.sin(math.radians(_ccw(below, theta))) / s)


def _ccw(a: float, b: float) -> float:
    """Angle from a to b walking in the positive sense, in [0, 360)."""
    return (b - a) % 360.0


def _gap(a: float, b: float) -> float:
    d = abs(a - b) % 360.0
    return min(d, 360.0 - d)


def combine(*weights, radius=None):
    """Several weights combined into one resultant unbalance, as ``(unbalance quantity, angle_deg)``.

    Source: vector sum of m * r * e^{i angle} [D]. Each weight is ``"10 g@0"`` (at ``radius``) or a pair
    ``("10 g@0", "150 mm")`` with its own radius; an unbalance ``"1500 g*mm@0"`` is taken as it is.

    >>> u, angle = combine("10 g@0", "15 g@90", "5 g@200", radius="100 mm"); f"{u.m_as('g*mm'):.1f}@{angle:.2f}"
    '1430.8@68.25'
    """
    from toolkit.units import Q_, magnitude

    total = 0j
    for i, w in enumerate(weights):
        name = f"weight {i + 1}"
        r_given = radius
        if isinstance(w, tuple):
            w, r_given = w
        if isinstance(w, str) and "*" in w.split("@")[0] or (isinstance(w, str) and "·" in w):
            total += to_complex(w, "unbalance", name)  # kernel unit g*mm
            continue
        if r_given is None:
            raise BadInput.about(name, f"{w!r} is a mass; give its radius (radius='150 mm') or an unbalance "
                           f"such as '1500 g*mm@0'")
        r = magnitude(r_given, "length", "mm", name=f"{name} radius" if name else "radius", positive=True)
        total += _grams(w, name) * r
    if not weights:
        raise BadInput.about("weights", "none given; give at least one AMOUNT@ANGLE")
    amount, angle = polar(total)
    return Q_(amount, "g*mm"), angle


@dataclass(frozen=True)
class StaticCoupleParts:
    """Static (resultant) and couple (moment) parts of a two-plane unbalance, in g·mm and g·mm² (not a
    tolerance: static and couple *tolerances* are :class:`toolkit.tolerance.StaticCouple`)."""

    static_g_mm: float
    static_angle_deg: float
    moment_g_mm2: float
    moment_angle_deg: float
    couple_g_mm: float
    couple_angle_deg: float
    plane_distance_mm: float
    method: str = "resultant U1 + U2; moment U1 z1 + U2 z2 [D]"

    def to_dict(self) -> dict:
        return dict(self.__dict__)


def static_couple(u1, u2, z1, z2) -> StaticCoupleParts:
    """Static/couple decomposition of two plane unbalances ``u1`` at axial position ``z1`` and ``u2`` at
    ``z2``.

    Source: rigid-body statics [D]: static part (resultant) S = U1 + U2; moment M = U1 z1 + U2 z2; about the
    mid-plane z_m = (z1 + z2)/2 the couple is ±C in the two planes with C = (U1 − U2)/2, so that
    U1 = S/2 + C and U2 = S/2 − C.

    Parameters: u1, u2 unbalance vectors [mass*length] such as ``"2400 g*mm@30"``; z1, z2 [length].

    >>> sc = static_couple("1000 g*mm@0", "1000 g*mm@180", "0 mm", "500 mm")
    >>> round(sc.static_g_mm, 9), round(sc.couple_g_mm, 3), sc.couple_angle_deg
    (0.0, 1000.0, 0.0)
    """
    from toolkit.units import magnitude

    a = to_complex(u1, "unbalance", "u1")
    b = to_complex(u2, "unbalance", "u2")
    p1 = magnitude(z1, "length", "mm", name="z1")
    p2 = magnitude(z2, "length", "mm", name="z2")
    if p1 == p2:
        raise BadInput(f"z2: {z2!r} equals z1; two correction planes need distinct axial positions")
    s_amt, s_ang = polar(a + b)
    m_amt, m_ang = polar(a * p1 + b * p2)
    c_amt, c_ang = polar((a - b) / 2)
    return StaticCoupleParts(s_amt, s_ang, m_amt, m_ang, c_amt, c_ang, abs(p2 - p1))
