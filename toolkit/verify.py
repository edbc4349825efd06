"""Residual unbalance from a test unbalance set in turn at several angles (a test-mass-around run).

Procedure: a known test unbalance U_test is fixed in turn at N >= 3 angles on one radius (six at 60 deg is
the usual practice, twelve at 30 deg for a machine-capability check) and the reading amplitude is recorded
at each. API Std 617, 7th ed., Annex B asks for six positions and a test unbalance of 1 to 2 times the
allowed residual [S].

Fit, derived here [D]: with sensitivity k, a residual U_r at angle phi and the test at theta_k,
r_k^2 = k^2 (U_r^2 + U_test^2 + 2 U_r U_test cos(theta_k - phi)) = a + b cos theta_k + c sin theta_k, fitted by
least squares. With q = sqrt(b^2 + c^2) / (2a) the ratio x = U_r/U_test solves x/(1 + x^2) = q, so
U_r = U_test (1 - sqrt(1 - 4 q^2)) / (2 q) (the root below 1: the residual is taken to be smaller than the
test unbalance, which is why the test is 1-2x the allowance), at angle atan2(c, b).

The worksheet shortcut U_test (max - min)/(max + min) is reported beside it for comparison [H]; it
underestimates with few positions.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from toolkit.errors import BadInput
from toolkit.units import Q_, magnitude
from toolkit.vectors import parse_angle, parse_vector

__all__ = ["Verification", "verify_residual", "MIN_CONSISTENCY", "TEST_RATIO_RANGE", "CAUTIONS"]

#: API Std 617, 7th ed., Annex B: test unbalance between 1 and 2 times the allowed residual [S].
TEST_RATIO_RANGE = (1.0, 2.0)

#: Below this coefficient of determination of the fit, the readings are reported as not lying near the
#: expected circle. Our threshold [CP]; overridable (``min_consistency``).
MIN_CONSISTENCY = 0.9

#: Short cautions for a run with a test mass on the rotor (docs/methods.md, section 4).
CAUTIONS = (
    "Secure the test mass before every run; check it is tight after each stop.",
    "Guards closed and people clear of the plane of rotation while the rotor spins.",
    "Follow the rotor maker's instructions, local codes and licensed practice.",
)

_G_MM = "g*mm"


@dataclass(frozen=True)
class Verification:
    """Result of a test-mass-around run."""

    test_unbalance: object            # Quantity [g*mm]
    angles_deg: tuple[float, ...]
    readings: tuple[float, ...]
    residual: object                  # Quantity [g*mm]
    residual_angle_deg: float
    ratio_q: float
    consistency: float
    sensitivity: float                # reading units per g*mm
    shortcut: object                  # Quantity [g*mm], (max - min)/(max + min) rule
    allowed: object | None            # Quantity [g*mm] or None
    passed: bool | None
    method: str
    source: str
    warnings: tuple[str, ...]
    cautions: tuple[str, ...] = CAUTIONS

    def to_dict(self) -> dict:
        return {
            "test_g_mm": self.test_unbalance.m_as(_G_MM), "test_oz_in": self.test_unbalance.m_as("oz*in"),
            "positions": [{"angle_deg": a, "reading": r} for a, r in zip(self.angles_deg, self.readings)],
            "residual_g_mm": self.residual.m_as(_G_MM), "residual_oz_in": self.residual.m_as("oz*in"),
            "residual_angle_deg": self.residual_angle_deg, "ratio_q": self.ratio_q,
            "consistency": self.consistency, "sensitivity_per_g_mm": self.sensitivity,
            "shortcut_g_mm": self.shortcut.m_as(_G_MM),
            "allowed_g_mm": None if self.allowed is None else self.allowed.m_as(_G_MM),
            "test_to_allowed": None if self.allowed is None else (self.test_unbalance / self.allowed).m_as(""),
            "passed": self.passed, "method": self.method, "source": self.source,
            "angle_reference": "residual angle in the frame of the test-mass positions (from the reference "
                               "mark, in the sense the positions were counted)",
            "warnings": list(self.warnings), "cautions": list(self.cautions),
        }


def _readings(readings, angles) -> tuple[np.ndarray, np.ndarray]:
    if isinstance(readings, str):
        raise BadInput.about("readings", f"{readings!r}: give one reading per test-mass position, AMOUNT@ANGLE each")
    items = list(readings)
    if angles is not None:
        angles = list(angles)
        if len(angles) != len(items):
            raise BadInput.about("readings", f"{len(items)} readings but {len(angles)} angles; give one angle per "
                           f"reading")
        pairs = []
        for i, (r, a) in enumerate(zip(items, angles)):
            if isinstance(r, bool) or not isinstance(r, (int, float)) or not math.isfinite(r) or r < 0:
                raise BadInput.about(f"readings {i + 1}", f"{r!r} must be a finite number, zero or more")
            pairs.append((float(r), parse_angle(a, f"readings {i + 1} angle")))
    else:
        pairs = []
        for i, r in enumerate(items):
            if isinstance(r, str):
                pairs.append(parse_vector(r, None, f"readings {i + 1}"))
                continue
            if not isinstance(r, (tuple, list)) or len(r) != 2 or isinstance(r[0], bool) \
                    or not isinstance(r[0], (int, float)) or not math.isfinite(r[0]) or r[0] < 0:
                raise BadInput.about(f"readings {i + 1}", f"{r!r} is not a reading; write AMOUNT@ANGLE, e.g. '61.35@0'")
            pairs.append((float(r[0]), parse_angle(r[1], f"readings {i + 1} angle")))
    distinct = {round(a, 6) % 360.0 for _r, a in pairs}
    if len(distinct) < 3:
        raise BadInput.about("readings", f"{len(pairs)} reading(s) at {len(distinct)} different angle(s); the fit "
                       f"needs the test mass at 3 or more different angles (six at 60 deg is usual)")
    r = np.array([p[0] for p in pairs])
    if not np.any(r > 0):
        raise BadInput.about("readings", "every reading is zero; check the instrument and the units")
    return r, np.array([p[1] for p in pairs])


def verify_residual(test_unbalance, readings, angles=None, *, allowed=None,
                    min_consistency: float = MIN_CONSISTENCY) -> Verification:
    """Residual unbalance of a rotor from a test unbalance set at N >= 3 angles.

    Fit of r_k^2 = a + b cos theta_k + c sin theta_k (least squares) and U_r = U_test (1 - sqrt(1 - 4q^2))/(2q),
    q = sqrt(b^2 + c^2)/(2a), at angle atan2(c, b) [D]; procedure per API Std 617, 7th ed., Annex B [S].

    Parameters: test_unbalance : Quantity [mass*length] (``"150 g*mm"``); readings : ``"61.35@0"`` strings
    (reading amplitude @ test-mass angle in degrees), or (amplitude, angle) pairs, or plain amplitudes with
    ``angles``; allowed : Quantity [mass*length], optional, for pass/fail; min_consistency : warning
    threshold of the fit's coefficient of determination (default 0.9 [CP]).

    Valid while the residual is smaller than the test unbalance (readings never near zero). Warns when the
    test unbalance is outside 1-2x the allowance, when the readings do not lie near the fitted circle, and
    when three positions leave no redundancy.

    >>> v = verify_residual("200 g*mm", ["44.8790@0", "53.6268@60", "58.6368@120", "56.0268@180",
    ...                                  "47.7210@240", "41.4108@300"], allowed="150 g*mm")
    >>> round(v.residual.m_as("g*mm"), 2), round(v.residual_angle_deg, 1), v.passed
    (35.0, 130.0, True)
    """
    test = float(magnitude(test_unbalance, "unbalance", _G_MM, "test_unbalance", positive=True))
    if isinstance(min_consistency, bool) or not isinstance(min_consistency, (int, float)) \
            or not 0 <= min_consistency <= 1:
        raise BadInput.about("min_consistency", f"{min_consistency!r} must be a number from 0 to 1")
    r, theta_deg = _readings(readings, angles)
    theta = np.radians(theta_deg)
    design = np.column_stack([np.ones_like(theta), np.cos(theta), np.sin(theta)])
    y = r ** 2
    coef, *_ = np.linalg.lstsq(design, y, rcond=None)
    a, b, c = (float(x) for x in coef)
    warnings = []
    if a <= 0:
        raise BadInput.about("readings", "the readings do not fit a test-mass-around pattern (mean square reading "
                       "comes out zero or negative); check the readings and their angles")
    amp = math.hypot(b, c)
    q = amp / (2 * a)
    fitted = design @ coef
    ss_res = float(np.sum((y - fitted) ** 2))
    ss_tot = float(np.sum((y - y.mean()) ** 2))
    consistency = 1.0 - ss_res / ss_tot if ss_tot > 0 else 1.0
    if q >= 0.5:
        if q > 0.5 * (1 + 1e-3):
            warnings.append(f"the readings vary more than any residual and test unbalance can explain "
                            f"(q = {q:.3f} > 0.5); the result is not reliable")
        q = 0.5
    # (1 - sqrt(1 - 4q^2))/(2q) rewritten as 2q/(1 + sqrt(1 - 4q^2)): the same root without the
    # cancellation that returns 0 for a residual below about 1e-8 of the test unbalance
    x = 2 * q / (1 + math.sqrt(max(0.0, 1 - 4 * q * q)))
    residual = test * x
    angle = math.degrees(math.atan2(c, b)) % 360.0 if amp > 0 else 0.0
    spread = 2 * test * residual  # 0 when the product underflows (absurdly small test unbalance)
    sensitivity = math.sqrt(amp / spread) if spread > 0 else math.sqrt(a) / test
    top, bottom = float(r.max()), float(r.min())  # Python floats: inf, not a numpy warning, at absurd sizes
    shortcut = test * ((top - bottom) / (top + bottom)) if top + bottom > 0 else 0.0
    n = len(r)
    if n == 3:
        warnings.append("three positions leave no redundancy: the fit is exact and the consistency cannot be "
                        "judged; six at 60 deg is usual")
    if consistency < min_consistency and n > 3:
        warnings.append(f"the readings do not lie near the expected circle (consistency {consistency:.3f} < "
                        f"{min_consistency:g}): check the test-mass positions, radius and readings, and "
                        f"repeat the run")
    if x > 0.8:
        warnings.append(f"the residual is close to the test unbalance ({x:.2f} of it): the fit cannot tell "
                        f"which is larger; repeat with a larger test unbalance")
    allowed_q, passed = None, None
    if allowed is not None:
        allowed_g = float(magnitude(allowed, "unbalance", _G_MM, "allowed", positive=True))
        allowed_q = Q_(allowed_g, _G_MM)
        ratio = test / allowed_g
        lo, hi = TEST_RATIO_RANGE
        if not lo <= ratio <= hi:
            warnings.append(f"the test unbalance is {ratio:.2f} x the allowed residual; API Std 617 Annex B asks "
                            f"for {lo:g} to {hi:g} x")
        passed = residual <= allowed_g
    method = (f"least-squares fit of reading^2 = a + b cos(theta) + c sin(theta) over {n} positions; "
              f"U_res = U_test*(1 - sqrt(1 - 4q^2))/(2q), q = sqrt(b^2 + c^2)/(2a) [D]")
    return Verification(Q_(test, _G_MM), tuple(float(t) for t in theta_deg), tuple(float(v) for v in r),
                        Q_(residual, _G_MM), angle, q, consistency, sensitivity, Q_(shortcut, _G_MM),
                        allowed_q, passed, method,
                        "procedure: API Std 617, 7th ed., Annex B; fit derived here [D]", tuple(warnings))
