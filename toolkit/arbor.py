"""The arbor (mandrel) index method: separate a part's own unbalance from its arbor's.

A part balanced on an arbor reads the sum of its own unbalance and the arbor's (the arbor's unbalance and
its mounting eccentricity). Read, turn the part on the arbor by 180 degrees, read again: both readings are
in the arbor's (the machine's) angle frame, so the arbor's share stays put and the part's share turns with
the part. With index angles phi_k (the part's reference mark, in the arbor's frame, at reading k) the model
is [D]

    U_k = A + P * exp(i * phi_k)

A the arbor's share and P the part's share in the part's own frame (its angles measured from its own
reference mark). For two readings 180 degrees apart, A = (U_1 + U_2)/2 and P = (U_1 - U_2)/2; for N > 2
readings, least squares over all of them [D]. The procedure itself is common shop practice [CP]. The fit's
spread (RMS of the misfits over the readings, as a fraction of the mean reading) shows whether the readings
are consistent; above :data:`DEFAULT_MAX_SPREAD` [CP, overridable] a warning says so. Two readings fix both
shares exactly and cannot show their consistency.

Angles: readings and index angles in one sense (with or against rotation), degrees from the arbor's
reference mark; the part's share is given from the part's own mark.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from toolkit.errors import BadInput, Worded
from toolkit.units import Q_, magnitude
from toolkit.vectors import parse_angle, polar, to_complex

__all__ = ["DEFAULT_MAX_SPREAD", "IndexReading", "IndexResult", "index_separation"]

#: Largest spread of the fit (RMS misfit / mean reading) before a warning [CP]; overridable.
DEFAULT_MAX_SPREAD = 0.10

_SOURCE = "index (turn-on-arbor) procedure: common shop practice [CP]; separation by least squares, derived here [D]"


@dataclass(frozen=True)
class IndexReading:
    """One reading with the part at its index angle, and the misfit of the separation there."""

    index_deg: float
    amount_g_mm: float
    angle_deg: float
    misfit_g_mm: float

    def to_dict(self) -> dict:
        return dict(self.__dict__)


@dataclass(frozen=True)
class IndexResult:
    """The arbor's share (arbor frame) and the part's share (part frame) of index readings."""

    readings: tuple[IndexReading, ...]
    arbor_g_mm: float
    arbor_angle_deg: float
    part_g_mm: float
    part_angle_deg: float
    spread_g_mm: float | None
    spread_fraction: float | None
    max_spread: float
    max_spread_given: bool
    consistent: bool | None
    allowance_g_mm: float | None
    part_within: bool | None
    method: str
    source: str
    warnings: tuple[str, ...]

    @property
    def arbor(self):
        return Q_(self.arbor_g_mm, "g*mm"), self.arbor_angle_deg

    @property
    def part(self):
        return Q_(self.part_g_mm, "g*mm"), self.part_angle_deg

    def to_dict(self) -> dict:
        return {"readings": [r.to_dict() for r in self.readings],
                "arbor": {"amount_g_mm": self.arbor_g_mm, "angle_deg": self.arbor_angle_deg,
                          "frame": "arbor's reference mark"},
                "part": {"amount_g_mm": self.part_g_mm, "angle_deg": self.part_angle_deg,
                         "frame": "part's own reference mark"},
                "spread_g_mm": self.spread_g_mm, "spread_fraction": self.spread_fraction,
                "max_spread": self.max_spread, "max_spread_mark": "CP",
                "max_spread_source": "given" if self.max_spread_given else "default", "consistent": self.consistent,
                "allowance_g_mm": self.allowance_g_mm, "part_within": self.part_within, "method": self.method,
                "source": self.source, "warnings": list(self.warnings)}


def index_separation(readings, index_angles=None, *, radius=None, max_spread=None, allowance=None) -> IndexResult:
    """Separate the arbor's and the part's unbalance from readings with the part indexed on the arbor.

    Model [D]: U_k = A + P e^{i phi_k}; least squares over all readings (exact for two). For N equal steps
    (phi_k = k * 360/N) this is A = mean(U_k), P = mean(U_k e^{-i phi_k}).

    Parameters: readings, unbalance vectors in the arbor's frame (``"410 g*mm@30"``, or masses
    ``"2.7 g@30"`` with ``radius``), two or more; index_angles [deg], the part's reference mark in the
    arbor's frame at each reading (default equal steps 0, 360/N, ...); radius : Quantity [length] of mass
    readings; max_spread, the largest consistent spread as a fraction (default :data:`DEFAULT_MAX_SPREAD`
    [CP]); allowance : Quantity [mass*length], the part's permissible residual, for the part's verdict.

    >>> r = index_separation(["300 g*mm@40", "180 g*mm@130"])
    >>> round(r.arbor_g_mm, 2), round(r.arbor_angle_deg, 2), round(r.part_g_mm, 2), round(r.part_angle_deg, 2)
    (174.93, 70.96, 174.93, 9.04)
    """
    if isinstance(readings, (str, bytes)) or not hasattr(readings, "__iter__"):
        raise BadInput.about("readings", "give a list of two or more readings such as '410 g*mm@30'")
    readings = list(readings)
    n = len(readings)
    if n < 2:
        raise BadInput.about("readings", f"{n} given; the index method needs two or more (e.g. 0 and 180 degrees)")
    if n > 360:
        raise BadInput.about("readings", f"{n} given; at most 360")
    r_mm = None if radius is None else float(magnitude(radius, "length", "mm", "radius", positive=True))
    u = np.empty(n, dtype=complex)
    for k, text in enumerate(readings):
        u[k] = _reading(text, r_mm, k + 1)
    if index_angles is None:
        phi = np.array([k * 360.0 / n for k in range(n)])
    else:
        index_angles = list(index_angles)
        if len(index_angles) != n:
            raise BadInput.about("index_angles", f"{len(index_angles)} given for {n} readings; give one per reading")
        phi = np.array([parse_angle(a, f"index_angles {k + 1}") for k, a in enumerate(index_angles)])
    if len({round(float(p), 9) % 360.0 for p in phi}) < 2:
        raise BadInput.about("index_angles", "every reading is at the same index; turn the part on the arbor between "
                       "readings (e.g. 0 and 180 degrees)")
    limit = DEFAULT_MAX_SPREAD if max_spread is None else max_spread
    if isinstance(limit, bool) or not isinstance(limit, (int, float)) or not math.isfinite(limit) \
            or not 0.0 < limit <= 1.0:
        raise BadInput.about("max_spread", f"{max_spread!r} must be a fraction above 0 and at most 1, e.g. 0.1")
    allow = None if allowance is None else float(magnitude(allowance, "unbalance", "g*mm", "allowance",
                                                            positive=True))
    e = np.exp(1j * np.radians(phi))
    design = np.column_stack([np.ones(n, dtype=complex), e])
    peak = float(np.max(np.abs(u)))
    if not math.isfinite(peak) or peak > 1e150:
        raise BadInput.about("readings", "the readings are beyond the range this method handles; check their units")
    try:
        with np.errstate(all="ignore"):
            (a_c, p_c), *_ = np.linalg.lstsq(design, u, rcond=None)
    except np.linalg.LinAlgError:
        raise BadInput.about("readings", "the readings cannot be separated; check their values and units") from None
    if not (np.all(np.isfinite(u)) and np.isfinite(a_c) and np.isfinite(p_c)):
        raise BadInput.about("readings", "the readings are beyond the floating-point range; check their units")
    misfit = u - (a_c + p_c * e)
    scale = float(np.max(np.abs(u))) if n else 0.0
    misfit = np.where(np.abs(misfit) <= 1e-12 * max(scale, 1e-300), 0.0, misfit)
    warnings = []
    cond = np.linalg.cond(design)
    if not math.isfinite(cond) or cond > 1e6:
        raise BadInput.about("index_angles", "the index positions cannot separate the two shares; use positions spread "
                       "round the part (e.g. 0 and 180, or 0, 120 and 240 degrees)")
    if n == 2 and abs(abs(phi[1] - phi[0]) % 360.0 - 180.0) > 1e-9:
        warnings.append(Worded(f"{{index_angles}}: two readings {abs(phi[1] - phi[0]) % 360:g} degrees apart, not "
                               f"180: the separation is exact but more sensitive to reading errors",
                               ("index_angles",)))
    spread = frac = consistent = None
    if n > 2:
        spread = float(math.sqrt(np.mean(np.abs(misfit) ** 2)))
        mean_reading = float(np.mean(np.abs(u)))
        frac = spread / mean_reading if mean_reading > 0 else 0.0
        consistent = frac <= limit
        if not consistent:
            warnings.append(Worded(f"{{readings}}: the fit's spread is {frac:.1%} of the mean reading, above "
                                   f"{limit:.0%} ({'given' if max_spread is not None else 'default, common practice'}"
                                   f"): the readings are not consistent; check the part's seating on the arbor and "
                                   f"repeat them", ("readings",)))
    else:
        warnings.append(Worded("{readings}: two readings fix both shares exactly and cannot show their consistency; "
                               "a third index position (e.g. 0, 120 and 240 degrees) or a repeat reading checks "
                               "them", ("readings",)))
    a_amt, a_ang = polar(complex(a_c))
    p_amt, p_ang = polar(complex(p_c))
    within = None if allow is None else p_amt <= allow
    method = ("U_k = A + P exp(i phi_k), " + ("A = (U1 + U2)/2, P = (U1 - U2)/2 for 0 and 180 degrees"
                                              if n == 2 and abs(abs(phi[1] - phi[0]) - 180.0) < 1e-9 and phi[0] == 0
                                              else f"least squares over {n} readings") + " [D]")
    rows = tuple(IndexReading(float(p), *polar(complex(x)), float(abs(m))) for p, x, m in zip(phi, u, misfit))
    return IndexResult(rows, a_amt, a_ang, p_amt, p_ang, spread, frac, float(limit), max_spread is not None,
                       consistent, allow, within, method, _SOURCE, tuple(warnings))


def _reading(text, r_mm, k: int) -> complex:
    name = f"reading {k}"
    amount = text[0] if isinstance(text, tuple) else str(text).split("@")[0]
    if r_mm is not None and _is_mass(amount):
        return to_complex(text, "mass", name) * 1000.0 * r_mm  # kg -> g, times the radius in mm
    z = to_complex(text, "unbalance", name)
    return z


def _is_mass(amount) -> bool:
    from toolkit.units import quantity

    try:
        quantity(amount, "mass")
    except BadInput:
        return False
    return True
