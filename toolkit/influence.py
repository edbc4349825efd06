"""Corrections from trial-mass runs: influence-coefficient solvers.

Sources (docs/methods.md §2):

* one plane, one trial run: influence coefficient α = (OT − O)/T, correction W = −O/α (add W); with the
  trial left on, add W − T. The standard trial-mass procedure credited to Thearle, Trans. ASME 1934
  (citation details from memory) [S, M].
* any sequence of runs, any number of planes and sensors: the readings of run k are V_k = O + A·U_k with U_k
  the trial masses on the rotor during that run, which is linear in [O A]; solved by least squares
  (X. Yu, Int. J. Rotating Machinery 10:85–90, 2004, general formulation) [S; algebra D].
* correction for many sensors and speeds: minimise ‖w ∘ (O + A·W)‖ with per-point weights w (Goodman,
  ASME J. Eng. Ind. 86:273–277, 1964) [S], solved with numpy's SVD-based ``lstsq`` (never the normal
  equations); a min-max option minimises the largest weighted residual (Lawson's iteratively reweighted
  least squares, D); per-plane mass limits add the penalty λ‖S⁻¹W‖ with the smallest λ that keeps every
  plane within its limit (D). Min-max with plane mass limits is a convex problem (minimise t with
  |w_i (O + A·W)_i| <= t and |W_j| <= S_j): solved as a linear programme with each circle written as a
  polygon (``scipy.optimize.linprog``, HiGHS; the mass limits by inscribed polygons so they always hold),
  then polished on the exact circles (``scipy.optimize.minimize``, SLSQP) [D].
* amplitude only, original plus three or more trial positions: A_k² − A0² = p + 2c cos θ_k + 2s sin θ_k,
  correction m_t·A0/√p at 180° + atan2(s, c), consistency κ = √(c² + s²)/(A0 √p) [D; graphical form in
  McMillan, *Rotating Machinery: Practical Solutions to Unbalance and Misalignment*, ch. 6].
* trial-mass size: centrifugal force of the trial about 10 % of the static load on the nearer bearing
  [CP, M]; the fraction is a parameter.

**Angle senses.** Weight angles are measured with or against the direction of rotation; the instrument
reports phase as lag or lead. Phase lag grows in the same sense as angles measured against rotation, so
(against, lag) and (with, lead) agree; for the other two pairs the readings are conjugated before solving,
otherwise the right mass lands at the mirror-image angle [D]. Both senses are always declared, never
assumed: :func:`conjugate_needed`.

Units: trial and correction masses in grams at the plane's correction radius; readings in one kind
(mm/s, µm or m/s²); influence coefficients in reading unit per gram.

Safety: trial masses spin with the rotor. Secure them, keep guards closed and people clear of the plane
of rotation, and follow the rotor maker's instructions, local codes and licensed practice
(:data:`CAUTIONS`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from toolkit.errors import BadInput
# the runs-file schema lives in toolkit.runs; its names stay importable from here
from toolkit.runs import (METHODS, MAX_RUNS_BYTES, Run, RunSet, conjugate_needed, load_runs,  # noqa: F401
                          runs_from_dict)
from toolkit.vectors import parse_angle, polar

__all__ = [
    "CAUTIONS", "Settings", "Run", "RunSet", "Correction", "Solution", "AmplitudeSolution",
    "TrialSuggestion", "conjugate_needed", "runs_from_dict", "load_runs", "solve_runs", "solve_one_plane",
    "fit_influence", "correct", "finish_solution", "four_run", "suggest_trial_mass", "METHODS",
]

#: Cautions every output of this module carries (docs/methods.md §4).
CAUTIONS = (
    "Secure trial and correction masses before every run; a loose mass leaves the rotor at speed.",
    "Keep guards closed and people clear of the plane of rotation during runs.",
    "Follow the rotor maker's instructions, local codes and licensed practice; these figures do not "
    "replace them.",
)

@dataclass(frozen=True)
class Settings:
    """Thresholds for the warnings, each overridable, with where its default comes from.

    trial_change_pct, trial_change_deg: a trial run should change the reading by at least this much in
    amplitude or phase at one sensor or more (about 30 % or 30°) [CP, docs/methods.md §2].
    max_condition: condition number of the weighted coefficient matrix above which the planes are said to
    fight (chosen here, no source). max_effort: ratio of the sum of the planes' separate effects to their
    net effect above which the corrections are said to be much larger than what they achieve (chosen here,
    no source). max_misfit_pct: rms misfit of the linear model as a percentage of the rms reading above
    which the readings are called inconsistent with a linear rotor (chosen here, no source).
    """

    trial_change_pct: float = 30.0
    trial_change_deg: float = 30.0
    max_condition: float = 10.0
    max_effort: float = 3.0
    max_misfit_pct: float = 10.0

    SOURCES = {"trial_change_pct": "common practice [CP]", "trial_change_deg": "common practice [CP]",
               "max_condition": "chosen here, no source", "max_effort": "chosen here, no source",
               "max_misfit_pct": "chosen here, no source"}

    def __post_init__(self):
        for name in ("trial_change_pct", "trial_change_deg", "max_condition", "max_effort", "max_misfit_pct"):
            value = getattr(self, name)
            if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value) \
                    or value <= 0:
                raise BadInput(f"{name}: {value!r} must be a number greater than zero")

    def to_dict(self) -> dict:
        defaults = Settings.__dataclass_fields__
        return {name: {"value": getattr(self, name),
                       "source": self.SOURCES[name] if getattr(self, name) == defaults[name].default
                       else "given by the user"}
                for name in self.SOURCES}



@dataclass(frozen=True)
class Correction:
    """One plane's correction: ``mass`` (pint Quantity, grams) at ``angle_deg`` in the weight-angle sense,
    to ``action`` ("add" or "remove"); ``unbalance_g_mm`` when the plane's radius is known."""

    plane: str
    mass: object
    angle_deg: float
    action: str
    unbalance_g_mm: float | None = None

    def to_dict(self) -> dict:
        d = {"plane": self.plane, "mass_g": float(self.mass.m_as("g")), "angle_deg": self.angle_deg,
             "action": self.action}
        if self.unbalance_g_mm is not None:
            d["unbalance_g_mm"] = self.unbalance_g_mm
        return d


@dataclass(frozen=True)
class Solution:
    """Corrections from a set of runs, with the coefficients, the predicted residual and warnings.

    ``influence[i][j]`` is the effect of 1 g at 0° in plane j on sensor i (reading unit per gram, in the
    weight-angle frame); ``original`` the rotor's own readings as fitted (same frame);
    ``predicted_residual`` one record per sensor after the corrections, in the instrument's own phase sense.
    """

    runset: RunSet
    corrections: tuple[Correction, ...]
    total_correction_g: tuple[complex, ...]
    influence: tuple[tuple[complex, ...], ...]
    original: tuple[complex, ...]
    condition_number: float
    predicted_residual: tuple[dict, ...]
    warnings: tuple[str, ...]
    method: str
    settings: Settings
    penalty: float = 0.0
    fit_misfit_pct: float | None = None
    source: str = ("influence-coefficient method: trial-mass procedure (Thearle 1934), general least-squares "
                   "formulation of [O A] (Yu 2004), weighted least squares (Goodman 1964)")
    cautions: tuple[str, ...] = CAUTIONS

    def to_dict(self) -> dict:
        rs = self.runset
        unit = f"{rs.reading_unit} per g"
        return {
            "corrections": [c.to_dict() for c in self.corrections],
            "influence": [{"sensor": rs.sensors[i], "plane": rs.planes[j], "amount": polar(z)[0],
                           "angle_deg": polar(z)[1], "unit": unit}
                          for i, row in enumerate(self.influence) for j, z in enumerate(row)],
            "condition_number": self.condition_number,
            "predicted_residual": list(self.predicted_residual),
            "warnings": list(self.warnings),
            "method": self.method,
            "penalty": self.penalty,
            "fit_misfit_pct": self.fit_misfit_pct,
            "weight_angles": rs.weight_angles,
            "phase": rs.phase,
            "readings_conjugated": conjugate_needed(rs.weight_angles, rs.phase),
            "trials_left_on": rs.trials_left_on,
            "reading_unit": rs.reading_unit,
            "settings": self.settings.to_dict(),
            "source": self.source,
            "cautions": list(self.cautions),
            "inputs": {"origin": rs.origin, "sensors": list(rs.sensors), "planes": list(rs.planes),
                       "runs": [r.name for r in rs.runs], "weights": list(rs.weights),
                       "speed_rpm": rs.speed_rpm},
        }


# --------------------------------------------------------------------------------------------- parsing


# --------------------------------------------------------------------------------------------- kernels

def fit_influence(u: np.ndarray, v: np.ndarray):
    """Least-squares fit of V = 1·Oᵀ + U·Aᵀ: returns (O, A, misfit) for trial matrix ``u`` (runs × planes)
    and readings ``v`` (runs × sensors), complex; ``misfit`` is the fit residual (runs × sensors).

    Source: general formulation of [O A] (Yu 2004) [S]; solved by ``numpy.linalg.lstsq`` (SVD) [D].
    Raises :class:`BadInput` when the runs cannot determine every coefficient.

    >>> o, a, _ = fit_influence(np.array([[0], [10]]), np.array([[1 + 1j], [3 + 1j]]))
    >>> bool(abs(o[0] - (1 + 1j)) < 1e-12), bool(abs(a[0, 0] - 0.2) < 1e-12)
    (True, True)
    """
    runs, planes = u.shape
    x = np.hstack([np.ones((runs, 1), dtype=complex), u.astype(complex)])
    if runs < planes + 1:
        raise BadInput(f"run: {runs} runs for {planes} plane(s); need at least {planes + 1} (the original "
                       f"run and one trial run per plane)")
    if np.linalg.matrix_rank(x, tol=1e-9 * max(1.0, np.abs(x).max())) < planes + 1:
        raise BadInput("run: the trials do not tell the planes apart (the same trial pattern twice, or a "
                       "plane never changed); give each plane a trial run of its own")
    b, *_ = np.linalg.lstsq(x, v, rcond=None)
    misfit = v - x @ b
    return b[0], b[1:].T, misfit


def _weighted_lsq(o, a, w, rows=None):
    """min ‖w∘(o + a·x)‖ (+ extra rows) by SVD-based lstsq."""
    aw = a * w[:, None]
    ow = -o * w
    if rows is not None:
        aw = np.vstack([aw, rows])
        ow = np.concatenate([ow, np.zeros(rows.shape[0], dtype=complex)])
    x, *_ = np.linalg.lstsq(aw, ow, rcond=None)
    return x


def _minmax(o, a, w, iterations: int = 5000):
    """min over x of max_i |w_i (o + a x)_i| by Lawson's iteratively reweighted least squares [D]."""
    x = _weighted_lsq(o, a, w)
    r = np.abs(w * (o + a @ x))
    scale = max(float(np.abs(w * o).max()), 1e-300)
    if r.max() <= 1e-12 * scale:
        return x
    u = np.full(len(o), 1.0 / len(o))
    best_x, best = x, r.max()
    for _ in range(iterations):
        x = _weighted_lsq(o, a, w * np.sqrt(u))
        r = np.abs(w * (o + a @ x))
        if r.max() < best:
            best_x, best = x, r.max()
        new = u * r
        total = new.sum()
        if total <= 0:
            break
        new /= total
        if np.abs(new - u).max() < 1e-13:
            break
        u = new
    return best_x


#: Facets of the polygons that stand for the circles |r| <= t and |x| <= S in the min-max linear programme
#: (relative error 1 - cos(pi/K) = 1.5e-4 before the exact polish) [D].
MINMAX_FACETS = 180


def _worst(o, a, w, x) -> float:
    return float(np.abs(w * (o + a @ x)).max())


def minmax_limited(o: np.ndarray, a: np.ndarray, w: np.ndarray, limits: np.ndarray,
                   facets: int = MINMAX_FACETS) -> np.ndarray:
    """min over x of max_i |w_i (o + a x)_i| subject to |x_j| <= limits_j (``inf`` for no limit) [D].

    A convex problem (second-order cone). Step 1, a linear programme in (Re x, Im x, t) with each circle
    replaced by a regular polygon of ``facets`` sides: Re(e^{-i phi_k} r_i) <= t for the residuals (the
    circumscribed polygon) and Re(e^{-i phi_k} x_j) <= S_j cos(pi/K) for the mass limits (the inscribed one,
    so the limits hold exactly), solved by ``scipy.optimize.linprog`` (HiGHS). Step 2, a polish on the
    exact circles by ``scipy.optimize.minimize`` (SLSQP) from that point; kept only if it is feasible and
    better. Returns x (complex grams per plane).

    >>> x = minmax_limited(np.array([4.2j]), np.array([[0.35 + 0j]]), np.array([1.0]), np.array([6.0]))
    >>> round(float(abs(x[0])), 6), round(float(abs(4.2j + 0.35 * x[0])), 4)
    (6.0, 2.1)
    """
    from scipy.optimize import linprog, minimize

    free = _minmax(o, a, w)
    if np.all(np.abs(free) <= limits):  # the limits do not bind: the free min-max is the answer
        return free
    m, p = a.shape
    aw = a * w[:, None]
    ow = o * w
    phi = 2 * np.pi * np.arange(facets) / facets
    c, s_ = np.cos(phi), np.sin(phi)
    # residual r_i = ow_i + aw_i . x with x = xr + i xi; Re(e^{-i phi} r) = c Re r + s Im r
    ar, ai = aw.real, aw.imag
    rows, rhs = [], []
    for i in range(m):
        # Re r = ow.re + ar xr - ai xi ; Im r = ow.im + ai xr + ar xi
        coef_xr = c[:, None] * ar[i] + s_[:, None] * ai[i]
        coef_xi = -c[:, None] * ai[i] + s_[:, None] * ar[i]
        rows.append(np.hstack([coef_xr, coef_xi, -np.ones((facets, 1))]))
        rhs.append(-(c * ow[i].real + s_ * ow[i].imag))
    cos_half = math.cos(math.pi / facets)
    for j in range(p):
        if not math.isfinite(limits[j]):
            continue
        block = np.zeros((facets, 2 * p + 1))
        block[:, j], block[:, p + j] = c, s_
        rows.append(block)
        rhs.append(np.full(facets, limits[j] * cos_half))
    scale = max(float(np.abs(ow).max()), 1e-300)
    cost = np.zeros(2 * p + 1)
    cost[-1] = 1.0
    bounds = [(None, None)] * (2 * p) + [(0, None)]
    res = linprog(cost, A_ub=np.vstack(rows) / scale, b_ub=np.concatenate(rhs) / scale, bounds=bounds,
                  method="highs")
    if res.status != 0:
        raise BadInput.about("limits", f"the constrained min-max found no solution ({res.message})")
    x_lp = res.x[:p] + 1j * res.x[p:2 * p]
    best, best_val = x_lp, _worst(o, a, w, x_lp)
    clipped = np.where(np.abs(free) > limits, free / np.where(free == 0, 1, np.abs(free)) * limits, free)
    if _worst(o, a, w, clipped) < best_val:  # the free answer pulled onto the limits, should it be better
        best, best_val = clipped, _worst(o, a, w, clipped)
    finite = [j for j in range(p) if math.isfinite(limits[j])]

    def unpack(v):
        return v[:p] + 1j * v[p:2 * p]

    cons = [{"type": "ineq", "fun": lambda v: (v[-1] ** 2 - np.abs(ow + aw @ unpack(v)) ** 2) / scale ** 2}]
    if finite:
        cons.append({"type": "ineq",
                     "fun": lambda v: (limits[finite] ** 2 - np.abs(unpack(v)[finite]) ** 2) / scale ** 2})
    start = np.concatenate([x_lp.real, x_lp.imag, [best_val]])
    try:
        pol = minimize(lambda v: v[-1] / scale, start, jac=lambda v: np.eye(2 * p + 1)[-1] / scale,
                       constraints=cons, method="SLSQP", options={"maxiter": 200, "ftol": 1e-14})
        x_pol = unpack(pol.x)
        if np.all(np.isfinite(x_pol)) and np.all(np.abs(x_pol)[finite] <= limits[finite] * (1 + 1e-12)):
            val = _worst(o, a, w, x_pol)
            if val < best_val:
                best, best_val = x_pol, val
    except (ValueError, ArithmeticError):  # the polish is optional: keep the linear programme's answer
        pass
    over = np.abs(best) > limits
    if np.any(over):  # rounding at the last digit: pull back onto the circle
        best = np.where(over, best / np.abs(best) * limits, best)
    return best


def correct(o: np.ndarray, a: np.ndarray, w: np.ndarray, method: str = "least squares",
            limits: np.ndarray | None = None):
    """The correction x (complex grams per plane, add) minimising the weighted residual o + a·x.

    ``method`` "least squares" (Goodman 1964, SVD solver) or "min-max" (largest weighted residual, Lawson's
    algorithm). ``limits`` (grams per plane, ``inf`` for none): with least squares, the penalty λ‖S⁻¹x‖
    with the smallest λ that keeps every plane within its limit, found by bisection [D]; with min-max, the
    constrained min-max of :func:`minmax_limited` (λ reported as 0). Returns (x, λ).

    >>> x, lam = correct(np.array([4.2j]), np.array([[0.35 + 0j]]), np.array([1.0])); complex(x[0]), lam
    (-12j, 0.0)
    """
    if method not in METHODS:
        raise BadInput.about("method", f"{method!r} is not known; use {' or '.join(map(repr, METHODS))}")
    sv = np.linalg.svd(a * w[:, None], compute_uv=False)
    if sv[-1] <= 1e-12 * sv[0] or a.shape[0] < a.shape[1]:
        raise BadInput("run: singular data: the planes' effects cannot be told apart at the sensors (two planes "
                       "act alike, or fewer sensors than planes); use fewer planes, or more sensors or speeds")
    x = _minmax(o, a, w) if method == "min-max" else _weighted_lsq(o, a, w)
    if limits is None or np.all(np.abs(x) / (1 + 1e-9) <= limits):  # divided: no overflow near the float maximum
        return x, 0.0
    if method == "min-max":
        return minmax_limited(o, a, w, np.asarray(limits, dtype=float)), 0.0
    s_inv = np.diag(1.0 / limits).astype(complex)
    scale = float(np.linalg.norm(a * w[:, None], 2))
    lo, hi = 0.0, scale
    while True:
        xh = _weighted_lsq(o, a, w, hi * s_inv)
        if np.all(np.abs(xh) <= limits * (1 + 1e-9)):
            break
        hi *= 4.0
        if hi > scale * 1e12:
            break
    for _ in range(100):
        mid = 0.5 * (lo + hi)
        xm = _weighted_lsq(o, a, w, mid * s_inv)
        if np.all(np.abs(xm) <= limits * (1 + 1e-9)):
            hi = mid
        else:
            lo = mid
        if hi - lo <= 1e-12 * hi:
            break
    return _weighted_lsq(o, a, w, hi * s_inv), hi


# --------------------------------------------------------------------------------------------- solving

def _phase_diff(a: complex, b: complex) -> float:
    if a == 0 or b == 0:
        return 180.0
    d = abs(math.degrees(np.angle(b / a)))
    return d


def _trial_source(settings: Settings) -> str:
    sources = settings.to_dict()
    return " and ".join(sorted({sources[k]["source"] for k in ("trial_change_pct", "trial_change_deg")}))


def solve_runs(runset: RunSet, *, method: str | None = None, settings: Settings | None = None,
               limits=None) -> Solution:
    """Corrections for the rotor described by ``runset``.

    Fits [O A] to all runs by least squares (:func:`fit_influence`), then the correction minimising the
    weighted residual (:func:`correct`). The corrections are the total masses to add (or remove at the
    opposite angle) per plane, less the trials left on the rotor when ``trials_left_on`` is set.
    ``method`` and ``limits`` (plane → mass, e.g. ``{"near": "60 g"}``) override the runset's.

    Warnings: trial effect too small, a trial that changed nothing (refused), ill-conditioned planes,
    corrections much larger than their net effect, readings inconsistent with a linear model, and the
    predicted residual at every sensor.

    >>> rs = runs_from_dict({"sensors": ["brg"], "planes": ["p"], "weight_angles": "against rotation",
    ...     "phase": "lag", "run": [{"name": "original", "readings": ["4.2 mm/s@285"]},
    ...     {"name": "trial", "trial": {"p": "10 g@0"}, "readings": ["6.1237 mm/s@251.49"]}]}, "invented")
    >>> c = solve_runs(rs).corrections[0]; f"{c.action} {c.mass.m_as('g'):.2f} g@{c.angle_deg:.1f}"
    'add 12.00 g@255.0'
    """
    from toolkit.units import magnitude

    settings = settings or Settings()
    method = method or runset.method
    if method not in METHODS:
        raise BadInput.about("method", f"{method!r} is not known; use {' or '.join(map(repr, METHODS))}")
    u = runset.trial_matrix()
    v = runset.reading_matrix()
    origin = runset.origin
    warnings: list[str] = []

    # every trial run must change something; small changes are warned
    for k, run in enumerate(runset.runs):
        if not run.trials:
            continue
        # compare with the earlier run that differs from this one in the fewest planes (the latest of
        # those): the original run when trials are removed, the previous run when they are left on
        prev, fewest = None, None
        for j in range(k):
            changed = int(np.count_nonzero(np.abs(u[k] - u[j]) > 1e-12))
            if changed and (fewest is None or changed <= fewest):
                prev, fewest = j, changed
        if prev is None:
            continue
        ref, now = v[prev], v[k]
        scale = max(float(np.abs(ref).max()), float(np.abs(now).max()), 1e-300)
        if np.abs(now - ref).max() <= 1e-9 * scale:
            raise BadInput(f"{origin}: run {run.name!r}: readings: identical to run "
                           f"{runset.runs[prev].name!r}; the trial changed nothing (check it was fitted, "
                           f"or use a larger trial)")
        enough = False
        for i in range(len(runset.sensors)):
            was, is_ = float(abs(ref[i])), float(abs(now[i]))  # Python floats: inf, not a numpy warning
            amp_change = abs(is_ - was) / was * 100 if was > 0 else math.inf
            if amp_change >= settings.trial_change_pct or _phase_diff(ref[i], now[i]) >= settings.trial_change_deg:
                enough = True
        if not enough:
            warnings.append(f"trial effect too small in run {run.name!r}: no sensor changed by "
                            f"{settings.trial_change_pct:g} % in amplitude or {settings.trial_change_deg:g}° in "
                            f"phase against run {runset.runs[prev].name!r} (thresholds: {_trial_source(settings)}); "
                            f"the coefficients may be dominated by reading errors: use a larger trial")

    try:
        o, a, misfit = fit_influence(u, v)
    except BadInput as exc:
        unused = [p for j, p in enumerate(runset.planes) if not np.any(u[:, j])]
        if unused and "runs for" not in str(exc):
            raise BadInput(f"{origin}: run: no run has a trial in plane {unused[0]!r}; add a trial run for "
                           f"it") from None
        raise BadInput(f"{origin}: {exc}") from None

    misfit_pct = None
    if len(runset.runs) > len(runset.planes) + 1:
        rms_v = float(np.sqrt(np.mean(np.abs(v) ** 2)))
        misfit_pct = float(np.sqrt(np.mean(np.abs(misfit) ** 2)) / rms_v * 100) if rms_v > 0 else 0.0
        if misfit_pct > settings.max_misfit_pct:
            worst = int(np.argmax(np.sqrt(np.mean(np.abs(misfit) ** 2, axis=1))))
            warnings.append(f"readings inconsistent with a linear model: the runs disagree by {misfit_pct:.1f} % "
                            f"rms (limit {settings.max_misfit_pct:g} %, chosen here); worst run "
                            f"{runset.runs[worst].name!r}: check the readings, the trial masses and their angles")

    w = np.array(runset.weights)
    limit_map = dict(runset.limits_g)
    if limits is not None:
        if not isinstance(limits, dict):
            raise BadInput.about("limits", f"{limits!r} must be a table by plane, e.g. {{'near': '60 g'}}")
        for p, value in limits.items():
            if p not in runset.planes:
                raise BadInput.about("limits", f"unknown plane {p!r}; planes are {', '.join(runset.planes)}")
            limit_map[p] = magnitude(value, "mass", "g", name=f"limits {p}", positive=True)
    lim = None
    if limit_map:
        lim = np.array([limit_map.get(p, np.inf) for p in runset.planes], dtype=float)
    try:
        x, penalty = correct(o, a, w, method, lim)
    except BadInput as exc:
        raise BadInput(f"{origin}: {exc}") from None
    if penalty > 0:
        capped = [p for j, p in enumerate(runset.planes)
                  if math.isfinite(lim[j]) and abs(abs(x[j]) - lim[j]) <= 1e-6 * lim[j]]
        warnings.append(f"corrections held within the plane mass limits ({', '.join(capped) or 'all planes'} "
                        f"at its limit; penalty {penalty:.3g}): the predicted residual is larger than without "
                        f"limits")
    elif method == "min-max" and lim is not None:
        capped = [p for j, p in enumerate(runset.planes)
                  if math.isfinite(lim[j]) and abs(abs(x[j]) - lim[j]) <= 1e-6 * lim[j]]
        if capped:
            warnings.append(f"corrections held within the plane mass limits ({', '.join(capped)} at its limit; "
                            f"min-max with the limits as constraints): the largest predicted residual is larger "
                            f"than without limits")

    left = u[-1] if runset.trials_left_on else np.zeros(len(runset.planes), dtype=complex)
    return finish_solution(runset, o, a, x, w, left=left, method=method, settings=settings, warnings=warnings,
                           penalty=penalty, misfit_pct=misfit_pct)


def finish_solution(runset: RunSet, o, a, x, w, *, left, method: str, settings: Settings, warnings: list,
                    penalty: float = 0.0, misfit_pct: float | None = None, source: str | None = None) -> Solution:
    """Package a correction ``x`` (complex grams per plane, in the weight-angle frame) for the rotor with
    original readings ``o`` and coefficients ``a`` as a :class:`Solution`: condition number and the
    ill-conditioning warnings, predicted residual at every point, corrections net of the masses ``left``
    on the rotor, in words (add/remove) with their angles. Used by :func:`solve_runs` and by the stored
    coefficients of :mod:`toolkit.coefficients`."""
    from toolkit.units import Q_

    warnings = list(warnings)
    aw = a * w[:, None]
    sv = np.linalg.svd(aw, compute_uv=False)
    cond = float(sv[0] / sv[-1]) if sv[-1] > 0 else math.inf
    if len(runset.planes) > 1 and cond > settings.max_condition:
        warnings.append(f"ill-conditioned planes: condition number {cond:.3g} (limit {settings.max_condition:g}, "
                        f"chosen here): the planes fight each other and small reading errors move the "
                        f"corrections a lot; move the planes apart, add sensors or speeds, or set plane limits")
    if len(runset.planes) > 1:
        effects = np.abs(a * x[None, :]).sum(axis=1)
        net = np.abs(a @ x)
        ratio = float((effects / np.maximum(net, 1e-300)).max()) if np.any(effects > 0) else 1.0
        if ratio > settings.max_effort:
            warnings.append(f"corrections much larger than their net effect: the planes' separate effects add "
                            f"up to {ratio:.3g} times their net effect at one sensor (limit "
                            f"{settings.max_effort:g}, chosen here)")

    conj = conjugate_needed(runset.weight_angles, runset.phase)
    residual = o + a @ x
    # what is left below 1e-12 of the largest original reading is rounding noise: report it as zero
    noise = 1e-12 * float(np.abs(o).max())
    residual = np.where(np.abs(residual) <= noise, 0, residual)
    records = []
    for i, s in enumerate(runset.sensors):
        z = np.conj(residual[i]) if conj else residual[i]
        before = np.conj(o[i]) if conj else o[i]
        amt, ang = polar(complex(z))
        records.append({"sensor": s, "amount": amt, "angle_deg": ang, "unit": runset.reading_unit,
                        "original_amount": polar(complex(before))[0]})
    worst = max(records, key=lambda r: r["amount"])
    warnings.append(f"predicted residual after the corrections: {worst['amount']:.3g} {runset.reading_unit} at "
                    f"{worst['sensor']!r} (largest of {len(records)} point(s)); confirm with a check run")

    actions = dict(runset.actions) or {p: "add" for p in runset.planes}
    radius = dict(runset.radius_mm)
    corrections = []
    for j, plane in enumerate(runset.planes):
        net = x[j] - left[j]
        mass, angle = polar(complex(net))
        action = actions.get(plane, "add")
        if action == "remove":
            angle = parse_angle(angle + 180.0)
        corrections.append(Correction(plane, Q_(mass, "g"), angle, action,
                                      mass * radius[plane] if plane in radius else None))
    return Solution(runset=runset, corrections=tuple(corrections), total_correction_g=tuple(map(complex, x)),
                    influence=tuple(tuple(map(complex, row)) for row in a), original=tuple(map(complex, o)),
                    condition_number=cond, predicted_residual=tuple(records), warnings=tuple(warnings),
                    method=method, settings=settings, penalty=float(penalty), fit_misfit_pct=misfit_pct,
                    **({"source": source} if source else {}))


def solve_one_plane(original, trial, with_trial, *, keep_trial: bool = False, radius=None,
                    weight_angles: str = "against rotation", phase: str = "lag",
                    settings: Settings | None = None) -> Solution:
    """One plane, one sensor, one trial run: W = −O/α with α = (OT − O)/T; trial left on: add W − T.

    Source: trial-mass procedure (Thearle 1934) [S, M for the citation]. Parameters: original and
    with_trial readings such as ``"4.20 mm/s@285"``; trial a mass vector ``"10 g@0"`` (or an unbalance
    ``"1500 g*mm@0"`` with ``radius``) [mass]; radius [length], optional, to report the unbalance; the
    two senses (defaults: weight angles against rotation, phase lag, which agree).

    >>> s = solve_one_plane("4.20 mm/s@285", "10 g@0", "6.1237 mm/s@251.49", keep_trial=True)
    >>> c = s.corrections[0]; f"{c.action} {c.mass.m_as('g'):.3f} g@{c.angle_deg:.2f}"
    'add 17.496 g@221.49'
    """
    data = {"sensors": ["sensor"], "planes": ["plane"], "weight_angles": weight_angles, "phase": phase,
            "trials_left_on": bool(keep_trial),
            "run": [{"name": "original", "readings": [original]},
                    {"name": "with trial", "trial": {"plane": trial}, "readings": [with_trial]}]}
    if radius is not None:
        data["radius"] = {"plane": radius}
    return solve_runs(runs_from_dict(data, "solve"), settings=settings)


# --------------------------------------------------------------------------------------------- amplitude

@dataclass(frozen=True)
class AmplitudeSolution:
    """Four-run (amplitude-only) result: correction to add, consistency index and warnings."""

    mass: object
    angle_deg: float
    consistency: float
    original_amplitude: float
    trial_mass: object
    trial_angles_deg: tuple[float, ...]
    amplitudes: tuple[float, ...]
    warnings: tuple[str, ...]
    action: str = "add"
    source: str = ("amplitude-only method, A_k^2 - A0^2 = p + 2c cos(t_k) + 2s sin(t_k) (docs/methods.md §2) "
                   "[D]; graphical form in McMillan, Rotating Machinery, ch. 6")
    cautions: tuple[str, ...] = CAUTIONS

    def to_dict(self) -> dict:
        return {"corrections": [{"plane": "plane", "mass_g": float(self.mass.m_as("g")),
                                 "angle_deg": self.angle_deg, "action": self.action}],
                "consistency": self.consistency, "original_amplitude": self.original_amplitude,
                "trial_mass_g": float(self.trial_mass.m_as("g")),
                "trial_angles_deg": list(self.trial_angles_deg), "amplitudes": list(self.amplitudes),
                "warnings": list(self.warnings), "source": self.source, "cautions": list(self.cautions)}


def four_run(original, trial_mass, runs, *, consistency_band: tuple[float, float] = (0.8, 1.25)
             ) -> AmplitudeSolution:
    """Correction from amplitudes only: the original run and one trial mass at three or more angles.

    Source: A_k² − A0² = p + 2c cos θ_k + 2s sin θ_k, linear in (p, c, s), least squares over the runs;
    correction m_t·A0/√p at 180° + atan2(s, c) in the trial positions' frame; consistency
    κ = √(c² + s²)/(A0 √p), near 1 for a linear rotor [D; graphical form McMillan ch. 6]. The band for κ
    (default 0.8–1.25) is chosen here, no source.

    Parameters: original, an amplitude with unit (``"6.0 mm/s"``); trial_mass [mass]; runs, a list of
    ``(angle_deg, amplitude)`` with amplitudes in the same kind as ``original``.

    >>> s = four_run("6.0 mm/s", "40 g", [(0, "4.2496 mm/s"), (120, "6.2910 mm/s"), (240, "9.9179 mm/s")])
    >>> f"add {s.mass.m_as('g'):.2f} g@{s.angle_deg:.2f}, consistency {s.consistency:.3f}"
    'add 60.00 g@45.00, consistency 1.000'
    """
    from toolkit.units import Q_, magnitude, quantity

    kind = None
    for k in ("vibration velocity", "displacement", "acceleration"):
        try:
            quantity(original, k, "original")
            kind = k
            break
        except BadInput as exc:
            if "has no unit" in str(exc) or "cannot read" in str(exc) or "empty" in str(exc):
                raise
    if kind is None:
        raise BadInput.about("original", f"{original!r} is not a vibration amplitude; give e.g. '6.0 mm/s' or "
                                         "'12 um'")
    a0 = magnitude(original, kind, name="original", positive=True)
    mt = magnitude(trial_mass, "mass", "g", name="trial_mass", positive=True)
    if not isinstance(runs, (list, tuple)) or len(runs) < 3:
        raise BadInput("runs: give the trial at three or more angles, as (angle_deg, amplitude) pairs")
    angles, amps = [], []
    for i, item in enumerate(runs, start=1):
        if not isinstance(item, (list, tuple)) or len(item) != 2:
            raise BadInput(f"runs[{i}]: {item!r} must be a pair (angle_deg, amplitude)")
        angles.append(parse_angle(item[0], f"runs[{i}] angle"))
        amps.append(magnitude(item[1], kind, name=f"runs[{i}] amplitude", nonnegative=True))
    th = np.radians(angles)
    m = np.column_stack([np.ones_like(th), 2 * np.cos(th), 2 * np.sin(th)])
    if np.linalg.matrix_rank(m) < 3:
        raise BadInput("runs: the trial angles must include at least three different positions")
    with np.errstate(all="ignore"):
        rhs = np.square(np.array(amps, dtype=float)) - np.square(a0)
    if not np.all(np.isfinite(rhs)):
        raise BadInput("original, runs: amplitudes out of the range the four-run method can compute; check the "
                       "values and their units")
    (p, c, s), *_ = np.linalg.lstsq(m, rhs, rcond=None)
    if p <= 0:
        raise BadInput("runs: the amplitudes do not fit a linear rotor (trial effect p <= 0); check the readings")
    mass = mt * a0 / math.sqrt(p)
    angle = parse_angle(180.0 + math.degrees(math.atan2(s, c)))
    kappa = math.hypot(c, s) / (a0 * math.sqrt(p))
    warnings = []
    lo, hi = consistency_band
    if not lo <= kappa <= hi:
        warnings.append(f"consistency index {kappa:.3f} outside {lo:g}–{hi:g} (band chosen here): the readings "
                        f"do not fit a linear rotor well; repeat the runs or use a larger trial")
    if math.sqrt(p) < 0.3 * a0:
        warnings.append(f"trial effect too small: {math.sqrt(p):.3g} against an original {a0:.3g} (30 %, common "
                        f"practice [CP]); use a larger trial")
    return AmplitudeSolution(Q_(mass, "g"), angle, kappa, a0, Q_(mt, "g"), tuple(angles), tuple(amps),
                             tuple(warnings))


# --------------------------------------------------------------------------------------------- trial size

@dataclass(frozen=True)
class TrialSuggestion:
    """A suggested trial mass and the rule behind it."""

    mass: object
    fraction: float
    bearing_mass_kg: float
    radius_mm: float
    speed_rpm: float
    rule: str
    mark: str
    cautions: tuple[str, ...] = CAUTIONS

    def to_dict(self) -> dict:
        return {"trial_mass_g": float(self.mass.m_as("g")), "fraction": self.fraction,
                "fraction_source": self.mark, "bearing_mass_kg": self.bearing_mass_kg,
                "radius_mm": self.radius_mm, "speed_rpm": self.speed_rpm, "rule": self.rule,
                "cautions": list(self.cautions)}


def suggest_trial_mass(bearing_mass, radius, speed, fraction: float | None = None) -> TrialSuggestion:
    """A trial mass whose centrifugal force is ``fraction`` of the static load on the nearer bearing.

    Source: common shop practice, fraction about 10 % [CP, M] (docs/methods.md §2):
    m_t = fraction · M_bearing · g / (r · Ω²), about 8.95·10⁷ · M [kg] / (r [mm] · n² [r/min]) grams at 10 %.
    Parameters: bearing_mass [mass] carried by the nearer bearing; radius [length] of the trial; speed
    [1/time] of the trial run; fraction, default 0.10, overridable (0 < fraction ≤ 0.5).

    >>> s = suggest_trial_mass("200 kg", "150 mm", "1480 rpm"); f"{s.mass.m_as('g'):.1f} g ({s.mark})"
    '54.4 g (common practice [CP, M], default 0.1)'
    """
    from toolkit.units import Q_, magnitude, speed_rpm

    m = magnitude(bearing_mass, "mass", "kg", name="bearing_mass", positive=True)
    r = magnitude(radius, "length", "m", name="radius", positive=True)
    n = speed_rpm(speed, "speed")
    if fraction is None:
        used, mark = 0.10, "common practice [CP, M], default 0.1"
    else:
        if isinstance(fraction, bool) or not isinstance(fraction, (int, float)) or not 0 < fraction <= 0.5:
            raise BadInput(f"fraction: {fraction!r} must be a number above 0 and at most 0.5")
        used, mark = float(fraction), "given by the user"
    omega = n * 2 * math.pi / 60
    grams = used * m * 9.80665 / (r * omega) / omega * 1000  # divided twice: omega ** 2 overflows first
    if not (grams > 0 and math.isfinite(grams)):
        raise BadInput(f"speed, radius, bearing_mass: {n:g} r/min at {r * 1000:g} mm for {m:g} kg gives a trial "
                       f"mass out of the computable range; check the values and their units")
    return TrialSuggestion(Q_(grams, "g"), used, m, r * 1000, n,
                           "centrifugal force of the trial = fraction x static load on the nearer bearing", mark)
