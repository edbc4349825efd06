"""Unbalance and vibration vectors written as ``AMOUNT@ANGLE``.

A vector is an amount with its unit and an angle in degrees measured on the rotor from its reference mark:
``"38 g@210"``, ``"4.2 mm/s@75"``, ``"12 um@300"``, ``"2400 g*mm @ 131°"``. Internally a vector is a
complex number ``amount * exp(i * angle)`` in the kind's kernel unit (see :mod:`toolkit.units`).
"""

from __future__ import annotations

import math
import re

from toolkit.errors import BadInput

__all__ = ["parse_vector", "parse_angle"]

_SEPARATOR = re.compile(r"\s*(?:@|∠)\s*")
_ANGLE = re.compile(r"^([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*(?:°|deg|degrees?)?$")


def parse_angle(text, name: str = "angle") -> float:
    """An angle in degrees, normalised to [0, 360). Accepts ``210``, ``"210"``, ``"210°"``, ``"210 deg"``,
    ``"-30"`` (= 330).

    >>> parse_angle("210°"), parse_angle("-30"), parse_angle(720.5)
    (210.0, 330.0, 0.5)
    """
    if isinstance(text, bool):
        raise BadInput(f"{name}: {text!r} is not an angle in degrees")
    if isinstance(text, (int, float)):
        value = float(text)
    else:
        match = _ANGLE.match(str(text).strip())
        if not match:
            raise BadInput(f"{name}: {text!r} is not an angle; give degrees such as '210' or '210 deg'")
        value = float(match.group(1))
    if not math.isfinite(value):
        raise BadInput(f"{name}: {text!r} is not a finite angle")
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
        raise BadInput(f"{name}: {text!r} is not a vector; write AMOUNT@ANGLE, e.g. '38 g@210'")
    parts = _SEPARATOR.split(text.strip())
    if len(parts) != 2 or not parts[0] or not parts[1]:
        example = "'61.35@0'" if kind is None else "'38 g@210'"
        raise BadInput(f"{name}: {text!r} is not a vector; write AMOUNT@ANGLE, e.g. {example}")
    angle = parse_angle(parts[1], name=f"{name} angle")
    if kind is None:
        try:
            amount = float(parts[0])
        except ValueError:
            raise BadInput(f"{name}: amount {parts[0]!r} is not a number") from None
        if not math.isfinite(amount) or amount < 0:
            raise BadInput(f"{name}: amount {parts[0]!r} must be a finite number, zero or more")
        return amount, angle
    from toolkit.units import quantity

    amount = quantity(parts[0], kind, name, nonnegative=True)
    return amount, angle
