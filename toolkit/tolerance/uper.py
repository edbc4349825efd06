"""e_per and U_per of a rigid rotor (ISO 21940-11:2016, 6.3 and 6.3.3), for scalars and quantity arrays.
"""

from __future__ import annotations

import math

import numpy as np

from toolkit.tolerance.boundary import G_MM, boundary_magnitude, require_positive, unit_of
from toolkit.tolerance.grades import parse_grade
from toolkit.units import Q_

#: U_per [g*mm] = SHOP_CONSTANT * G [mm/s] * m [kg] / n [r/min]; 60000/(2*pi) because Omega = 2*pi*n/60
#: and 1 kg = 1000 g. [D] (ISO 21940-11:2016, 6.3.3 gives the shop form with 9549)
SHOP_CONSTANT = 60000.0 / (2.0 * math.pi)


def specific_unbalance(grade, speed, *, custom_grade: bool = False):
    """Permissible residual specific unbalance e_per of a rigid rotor.

    ISO 21940-11:2016, 6.3: G = e_per * Omega, so e_per [um] = 1000 * G [mm/s] / Omega [rad/s]
    = 9549.297 * G / n [r/min]. (e_per in um equals U_per/m in g*mm/kg.)

    Parameters: grade (see :func:`parse_grade`); speed : Quantity [1/time], maximum service speed, scalar
    or array. Returns a Quantity [um] of the same shape. Valid for rigid rotors; speed must be > 0.

    >>> specific_unbalance("G6.3", "3000 rpm")
    <Quantity(20.0535..., 'micrometer')>
    """
    g = parse_grade(grade, custom=custom_grade).mm_s
    n = boundary_magnitude(speed, "speed", "rpm", "speed")
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        e = (SHOP_CONSTANT * g) / n
    require_positive(e, None, ("speed", n, "rpm"))
    return Q_(e, unit_of("um"))


def permissible_unbalance(grade, mass, speed, *, custom_grade: bool = False):
    """Permissible residual unbalance U_per of a rigid rotor.

    ISO 21940-11:2016, 6.3.3: U_per = 1000 * G * m / Omega, U_per [g*mm], G [mm/s], m [kg], Omega [rad/s];
    shop form U_per = 9549.297 * G * m / n with n in r/min.

    Parameters: grade (``"G6.3"``, see :func:`parse_grade`); mass : Quantity [mass], rotor mass; speed :
    Quantity [1/time], maximum service speed. mass and speed may be quantity arrays (broadcast together):
    they are converted once and computed on floats. Returns a Quantity [g*mm]. Mass and speed must be > 0.

    >>> permissible_unbalance("G6.3", "100 kg", "3000 rpm")
    <Quantity(2005.35..., 'gram * millimeter')>
    >>> permissible_unbalance("G6.3", Q_(np.array([100.0, 200.0]), "kg"), "3000 rpm").m_as("g*mm").round(1)
    array([2005.4, 4010.7])
    """
    g = parse_grade(grade, custom=custom_grade).mm_s
    m = boundary_magnitude(mass, "mass", "kg", "mass")
    n = boundary_magnitude(speed, "speed", "rpm", "speed")
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        u = (SHOP_CONSTANT * g) * m / n
    require_positive(u, n, ("speed", n, "rpm"), ("mass", m, "kg"))
    return Q_(u, unit_of(G_MM))
