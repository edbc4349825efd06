"""The chain from a job to a work order: tolerance, initial unbalance, corrections, operations, predicted
residual, pass or fail.

Steps (each a call into the module that owns the method; nothing is recomputed here):

1. Tolerance per correction plane: :func:`toolkit.tolerance.tolerance_report` (ISO 21940-11 U_per, the
   bounded lever rule, transfer to the correction planes by statics, or the API/MIL criteria).
2. Initial unbalance per plane: read from the balancing machine (the job's readings), or solved from
   trial-mass runs (:func:`toolkit.influence.solve_runs`) or from stored coefficients and an original run
   (:func:`toolkit.coefficients.solve_with_coefficients`). The solver's "add W at θ" is the heavy spot
   U = W·r at θ + 180°.
3. Operations per plane: :func:`toolkit.fabricate.plan.plan_correction` for the job's allowed methods in
   order of preference; the first whose predicted residual is within the allowance is used, else the one
   that leaves the least (a warning says so). A method that cannot be carried out (a hole too deep, a plate
   that does not fit) is skipped with its reason. Washers on a plane with fixed positions (tapped holes)
   are split onto the two neighbouring positions (:func:`toolkit.vectors.split_vector`).
4. Angles rounded to the shop's marking step (``[shop] angle_step``, 1° by default [CP]).
5. Predicted residual per plane = initial unbalance + the effect of every operation at its rounded angle
   (adding mass puts unbalance at its angle, removing takes it away there) [D]; checked against the
   allowance with :func:`toolkit.tolerance.check_residuals` (ΔU from the job, default 0 [M]).

The result is one immutable :class:`~toolkit.workorder.model.WorkOrder`.
"""

from __future__ import annotations

import math

import re
from pathlib import Path

from toolkit.errors import BadInput, Infeasible, quantity_words, worded
from toolkit.units import unit_system
from toolkit.workorder.job import DEFAULTS, Job, job_key_names, load_job, parse_job
from toolkit.workorder.model import (Coefficient, FieldRecord, FieldRun, Formatter, Identification, Operation,
                                     PlaneOrder, SensorCheck, Setting, Tolerance, WorkOrder, default_paper,
                                     effect, paper_setting, polar, vector)

__all__ = ["build_order", "order_from_file", "demo_job", "demo_order", "write_examples", "GENERAL_CAUTIONS"]

#: Cautions every work order carries (docs/methods.md §4); the fabrication and solver modules add their own
#: for the operations used.
GENERAL_CAUTIONS = (
    "Secure every trial and correction mass before any run (welds finished and inspected, bolts torqued "
    "and locked); a loose mass leaves the rotor at speed.",
    "Keep guards closed and people clear of the plane of rotation during every run.",
    "Lock the rotor and isolate its drive (lock-out/tag-out, OSHA 29 CFR 1910.147) before drilling, welding "
    "or fitting masses.",
    "Follow the rotor maker's instructions, local codes and licensed practice: they take precedence over "
    "this work order.",
)

_METHOD_KIND = {"drill": "hole", "plate": "plate", "washers": "washers"}


def _q(value: float, unit: str):
    from toolkit.units import Q_

    return Q_(value, unit)


def _round_angle(angle: float, step: float) -> float:
    value = round(angle / step) * step % 360.0
    return 0.0 if value >= 360.0 - 1e-9 else round(value, 6)


def _tolerances(job: Job):
    """The tolerance report of the job, each plane's :class:`Tolerance` and the notes to print. An error of
    the report names the job keys it is about, with their lines (``geometry.centre_of_mass (line 27)``)."""
    from toolkit.tolerance import DEFAULT_MIN_SHARE, tolerance_report

    one = job.planes[0] if len(job.planes) == 1 else None
    names = job_key_names(job, 0 if one is not None else None)
    try:
        report = tolerance_report(
            job.grade, job.mass, _q(job.service_speed_rpm, "rpm"), bearing_span=job.bearing_span,
            com_from_a=job.centre_of_mass, planes={p.name: p.position for p in job.planes},
            static_share=job.static_share, criteria=(job.criterion,),
            min_share=DEFAULT_MIN_SHARE if job.min_share is None else job.min_share,
            one_plane_rule=job.one_plane_rule, rotor_length=job.rotor_length,
            correction_diameter=None if one is None else 2 * one.radius)
    except (BadInput, Infeasible) as exc:
        words = exc.worded(names, quantity_words(job.shop.units))
        raise type(exc)(f"{job.origin}: {words}") from None
    by_name = {p.name: p for p in report.planes}
    tolerances = {}
    for plane in job.planes:
        record = by_name[plane.name]
        tolerances[plane.name] = Tolerance(record.u_per.m_as("g*mm"), record.method, record.source)
    notes = [worded(w, names) for w in report.warnings]
    fmt = Formatter(job.shop.units, job.angle_reference, job.angle_sense)
    if report.static_couple is not None:
        sc = report.static_couple
        notes.append(f"static and couple tolerances ({names('static_share')} = {sc.static_share:g}): static part "
                     f"{fmt.unbalance(sc.static.m_as('g*mm'))} at the centre-of-mass plane, couple part "
                     f"{fmt.unbalance(sc.couple_per_plane.m_as('g*mm'))} in each plane; they set each plane's "
                     f"allowance ({fmt.unbalance(report.planes[0].u_per.m_as('g*mm'))})")
    op = report.one_plane
    if op is not None:
        notes.append(f"one correction plane: allowance {fmt.unbalance(op.used.m_as('g*mm'))} by the {op.rule} rule "
                     f"({names('one_plane_rule')}); the {op.other_rule} rule would give "
                     f"{fmt.unbalance(op.other.m_as('g*mm'))}")
        # the doubts name the job keys as the report's errors do (job_key_names); "{one_plane_rule} statics"
        # reads as the key set to that value
        keys = {p: names(p) + (" =" if p == "one_plane_rule" else "") for d in op.doubts for p in d.parameters}
        notes.extend(d.text(keys) for d in op.doubts)
    return report, tolerances, notes


def _initial(job: Job):
    """Initial unbalance per plane as {name: (g·mm, heavy-spot angle)}, a description, warnings, sources,
    cautions, and the influence-coefficient solution (None for balancing-machine readings)."""
    m = job.measurement
    if m.kind == "machine":
        out = {name: (amount.m_as("g*mm"), angle) for name, (amount, angle) in m.readings.items()}
        shows = "heavy spot" if m.shows == "heavy spot" else "the add position (turned to the heavy spot here)"
        return out, f"balancing machine readings per plane (the machine's angle shows {shows})", [], [], [], None
    if m.kind == "arbor-index":
        return _arbor_initial(job)
    if m.kind == "runs":
        from toolkit.influence import runs_from_dict, solve_runs

        from toolkit.influence import Settings

        runset = runs_from_dict(dict(m.runs), f"{job.origin} [measurement]")
        solution = solve_runs(runset, settings=Settings(**m.thresholds))
        what = (f"trial-mass runs ({len(runset.runs)} runs, {len(runset.sensors)} sensor(s), "
                f"{runset.method}), solved by influence coefficients")
    else:
        from toolkit.coefficients import load_coefficients, solve_with_coefficients

        coefficients = load_coefficients(m.coefficients)
        names = {p.name for p in job.planes}
        if set(coefficients.planes) != names:
            raise BadInput(f"{job.origin}: measurement.coefficients: the stored coefficients are for planes "
                           f"{', '.join(coefficients.planes)}; the job's planes are {', '.join(sorted(names))}")
        if coefficients.weight_angles != job.angle_sense:
            raise BadInput(f"{job.origin}: measurement.coefficients: the stored coefficients count weight angles "
                           f"{coefficients.weight_angles}; the job counts them {job.angle_sense}")
        try:
            solution = solve_with_coefficients(coefficients, list(m.original), origin=str(m.coefficients))
        except BadInput as exc:  # about this rotor's readings: named as the job's keys, with their line
            raise BadInput(f"{job.origin}: {exc.worded(job_key_names(job))}") from None
        what = f"original run with stored influence coefficients ({Path(str(m.coefficients)).name})"
    radius = {p.name: p.radius.m_as("mm") for p in job.planes}
    out = {}
    for c in solution.corrections:
        grams = c.mass.m_as("g")
        heavy = c.angle_deg if c.action == "remove" else (c.angle_deg + 180.0) % 360.0
        out[c.plane] = (grams * radius[c.plane], heavy)
    # the solver's predicted residual at the sensors is for the exact corrections; the work order predicts
    # its own residual per plane after the quantised operations, so that line would only mislead here
    warnings = [w for w in solution.warnings if not w.startswith("predicted residual after the corrections")]
    return out, what, warnings, [solution.source], list(solution.cautions), solution


def _arbor_initial(job: Job):
    """The part's shares of arbor-index readings as the initial unbalance; the arbor's shares in the
    description, the consistency checks' warnings per plane."""
    m = job.measurement
    fmt = Formatter(job.shop.units, job.angle_reference, job.angle_sense)
    out, arbor, warnings = {}, [], []
    for name, r in m.index.items():
        out[name] = (r.part_g_mm, r.part_angle_deg)
        arbor.append(f"plane {name} {fmt.unbalance(r.arbor_g_mm)} at {fmt.angle(r.arbor_angle_deg)} from the "
                     f"arbor's mark")
        check = ("" if r.consistent is None else
                 f"; readings {'consistent' if r.consistent else 'NOT consistent'}: spread {r.spread_fraction:.1%} "
                 f"of the mean reading (limit {r.max_spread:.0%})")
        warnings.append(f"plane {name}: arbor's share {fmt.unbalance(r.arbor_g_mm)} at {fmt.angle(r.arbor_angle_deg)} "
                        f"from the arbor's mark stays with the arbor (not corrected on the part){check}")
        warnings += [f"plane {name}: arbor index readings ([measurement.readings] {name}): "
                     + w.partition(":")[2].strip() for w in r.warnings]
    counts = sorted({len(r.readings) for r in m.index.values()})
    what = (f"part read on an arbor at {'/'.join(map(str, counts))} index positions per plane (index method: "
            f"the part's own share is corrected, from the part's reference mark; the arbor's share stays with the "
            f"arbor: {'; '.join(arbor)})")
    source = next(iter(m.index.values())).source if m.index else ""
    cautions = ["Stop the machine before turning the part on the arbor; secure the part and any trial mass "
                "before each run, guards closed."]
    return out, what, warnings, [source], cautions, None


def _key_notes(job: Job, fmt, shares: dict, planes) -> list[str]:
    """The key's part in each plane in words: what the correction covers, what the check run reads in this
    set-up, and the key's own remedies where its share alone exceeds the allowance."""
    k = job.key
    fill = {"key": "the key", "half-key": "a half-key", "nothing": "nothing"}[k.fill]
    notes = [f"[key]: this rotor ({k.component}) is balanced to the {k.convention} convention with "
             f"{fill} in its keyway; the key "
             f"mismatch in service is {fmt.unbalance(k.result.amount_g_mm)} at {fmt.angle(k.result.angle_deg)} "
             f"(heavy spot); each plane's correction includes its share of it"]
    for p in planes:
        if p.key_g_mm is None:
            continue
        machine = vector(p.predicted_g_mm, p.predicted_deg) - vector(p.key_g_mm, p.key_deg)
        amount, angle = polar(machine)
        notes.append(f"plane {p.name}: key share {fmt.unbalance(p.key_g_mm)} at {fmt.angle(p.key_deg)} is "
                     f"corrected with the measured unbalance; with {fill} in the keyway as now, the check run reads about {fmt.unbalance(amount)} at "
                     f"{fmt.angle(angle)}, and the assembly in service the predicted residual")
        if p.key_g_mm > p.tolerance.u_per_g_mm:
            remedies = "; ".join(k.result.correction.options) or k.result.correction.words
            notes.append(f"plane {p.name}: the key share alone exceeds the allowance "
                         f"({fmt.unbalance(p.tolerance.u_per_g_mm)}); instead of correcting it on the rotor: "
                         f"{remedies}")
    return notes


def _plan(job: Job, plane, u0: float, a0: float, allowance: float, method: str, step: float):
    """Plan one method; returns (plan-operation list as (kind, action, angle, mass, U, dims, text), plan
    warnings, cautions, residual complex)."""
    from toolkit.fabricate.drilling import Limits
    from toolkit.fabricate.plan import plan_correction

    common = dict(radius=plane.radius, material=plane.material, allowance=_q(allowance, "g*mm"),
                  materials_table="materials", units=job.shop.units)
    if method == "drill":
        limits = dict(job.shop.drilling)
        if plane.max_depth is not None:
            limits["max_depth_mm"] = plane.max_depth.m_as("mm")
        plans = [plan_correction(_q(u0, "g*mm"), a0, "drill", action="remove", orientation=plane.hole_orientation,
                                 drills=job.shop.drills, limits=Limits(**limits),
                                 point_angle_deg=job.shop.point_angle_deg, wall=plane.wall,
                                 fixed_positions=list(plane.fixed_positions) or None, **common)]
    elif method == "plate":
        plans = [plan_correction(_q(u0, "g*mm"), a0, "plate", action="remove", shape=plane.plate_shape,
                                 surface=plane.surface if plane.surface in ("outer", "inner") else "outer",
                                 width=plane.width, stock=job.shop.plate_stock,
                                 stock_unit="in" if unit_system(job.shop.units).inch else "mm",
                                 step=job.shop.plate_step or "1 mm", max_length=plane.max_length,
                                 fillet=job.shop.fillet, convexity=job.shop.weld_convexity, **common)]
    else:
        orientation = "axial" if plane.surface == "face" else "radial"
        surface = plane.surface if plane.surface in ("outer", "inner") else "outer"
        add_angle = (a0 + 180.0) % 360.0
        if plane.fixed_positions:
            from toolkit.vectors import split_vector

            grams = u0 / plane.radius.m_as("mm")
            split = split_vector(f"{grams!r} g@{add_angle!r}", at=list(plane.fixed_positions))
            parts = [(angle, mass * plane.radius.m_as("mm")) for angle, mass in split.parts]
        else:
            parts = [(add_angle, u0)]
        if len(parts) > 1:
            common["allowance"] = None  # the plane is checked as a whole below, not part by part
        plans = [plan_correction(_q(u, "g*mm"), angle, "washers", action="add", orientation=orientation,
                                 surface=surface, size=plane.washer_size, series=plane.washer_series, **common)
                 for angle, u in parts]
    ops, warnings, cautions = [], [], []
    for p in plans:
        for op in p.operations:
            text = op.without_angle
            ops.append((_METHOD_KIND[method], op.action, _round_angle(op.angle_deg, step), op.mass_g,
                        op.unbalance_g_mm, dict(op.dimensions), text))
        warnings.extend(p.warnings)
        cautions.extend(p.cautions)
    residual = vector(u0, a0) + sum((effect(a, u, ang) for _k, a, ang, _m, u, _d, _t in ops), 0j)
    return ops, warnings, cautions, residual


def _correct_plane(job: Job, plane, u0: float, a0: float, allowance: float, limit: float):
    """Try the plane's methods in order; returns (method, ops, residual, notes, cautions)."""
    step = job.shop.angle_step_deg
    if u0 <= limit:
        return "none", [], vector(u0, a0), [f"plane {plane.name}: the initial unbalance is within the allowance; "
                                            "no correction"], []
    tried, notes = [], []
    for method in plane.methods:
        try:
            # the limit (allowance less the error allowance) is what the plane is checked against: any
            # quantised result within it is taken, even the smallest plate, hole or washer
            ops, warnings, cautions, residual = _plan(job, plane, u0, a0, limit, method, step)
        except Infeasible as exc:
            why = exc.worded(job_key_names(job, job.planes.index(plane)), quantity_words(job.shop.units))
            notes.append(f"plane {plane.name}: {method} not possible ({' '.join(why.split())})")
            continue
        tried.append((method, ops, residual, warnings, cautions))
        if abs(residual) <= limit:
            break
    if not tried:
        raise Infeasible(f"{job.origin}: plane {plane.name}: no allowed method can carry out the correction: "
                         + "; ".join(notes))
    best = next((t for t in tried if abs(t[2]) <= limit), None) or min(tried, key=lambda t: abs(t[2]))
    method, ops, residual, warnings, cautions = best
    if abs(residual) > limit:
        notes.append(f"plane {plane.name}: no allowed method brings the predicted residual within the "
                     f"allowance; {method} leaves the least")
    notes.extend(f"plane {plane.name}: {w}" for w in warnings)
    return method, ops, residual, notes, cautions


def _order_date(job: Job) -> str:
    """The order's date: the job's, or today's (ISO 8601) when the job gives none."""
    import datetime

    given = job.order.get("date", "").strip()
    return given or datetime.date.today().isoformat()


def _drill_settings(job: Job) -> list[Setting]:
    """Which drill set the holes were chosen from (when a plane may drill)."""
    from toolkit.fabricate.stock import DRILL_SETS

    if not any("drill" in plane.methods for plane in job.planes):
        return []
    drills = job.shop.drills
    given = "drills" in job.shop.given or "drills" in job.shop.drilling_given
    if isinstance(drills, tuple):
        value = "the job's list: " + ", ".join(d.size for d in drills)
    elif drills in DRILL_SETS:
        value = DRILL_SETS[drills] + ("" if given else f", the default for {job.shop.units} units")
    else:
        value = f"the shop's table {Path(drills).name}"
    return [Setting("drill set", value, "CP", given, "[shop.drilling] drills = [\"6 mm\", ...] or a CSV path")]


def _washer_settings(job: Job) -> list[Setting]:
    """The washer series of each plane that may stack washers, and who chose it."""
    from toolkit.fabricate.plan import washer_series
    from toolkit.fabricate.washers import DEFAULT_SERIES

    out = []
    for plane in job.planes:
        if "washers" not in plane.methods:
            continue
        series = washer_series(job.shop.units, plane.washer_size, plane.washer_series) or DEFAULT_SERIES
        if plane.washer_series is not None:
            why = "the job's series"
        elif plane.washer_size is not None:
            why = f"the series of the job's size {plane.washer_size}"
        else:
            why = f"the default for {job.shop.units} units"
        out.append(Setting(f"washer series, plane {plane.name}", f"{series} ({why})", "CP",
                           plane.washer_series is not None, "[[plane]] washer_series"))
    return out


def _settings(job: Job, report) -> tuple[Setting, ...]:
    """The values used that the job may set; a value the job gave is marked ``job`` (its default's mark, CP
    or M, no longer applies)."""
    from dataclasses import replace

    out = (_chain_settings(job, report) + _washer_settings(job) + _drill_settings(job) + _key_settings(job)
           + _measurement_settings(job) + _drilling_settings(job) + _plate_settings(job))
    return tuple(replace(s, mark="job") if s.given else s for s in out)


def _chain_settings(job: Job, report) -> list[Setting]:
    """The order's date, the speeds, grade and material, the shop's angle and weighing steps, the lever-rule
    bounds and the one-plane rule."""
    from toolkit.tolerance import DEFAULT_MIN_SHARE

    out = []
    if "order.date" in job.defaults_used:
        out.append(Setting("order date", f"{_order_date(job)} (the day the order was made; the job gives no date)",
                           "CP", False, "[order] date"))
    speed = f"{job.balancing_speed_rpm:g} r/min"
    out.append(Setting("balancing speed", speed if "rotor.balancing_speed" not in job.defaults_used
                       else f"{speed} (the service speed; the job gives no balancing speed)", "CP",
                       "rotor.balancing_speed" not in job.defaults_used, "[rotor] balancing_speed"))
    for key in ("rotor.grade", "rotor.material"):
        _value, mark, _why = DEFAULTS[key]
        section, name = key.split(".")
        out.append(Setting(name, job.grade if name == "grade" else job.material, mark,
                           key not in job.defaults_used, f"[{section}] {name}"))
    out.append(Setting("angle marking step", f"{job.shop.angle_step_deg:g}°", "CP",
                       "angle_step" in job.shop.given, "[shop] angle_step"))
    weighing = (f"{job.shop.mass_step.m_as('g'):g} g" if unit_system(job.shop.units).mass == "g" else
                f"{job.shop.mass_step.m_as('g'):g} g, read to the nearest "
                f"{10.0 ** math.floor(math.log10(job.shop.mass_step.m_as('oz'))):g} oz")
    out.append(Setting("weighing step", weighing, "CP",
                       "mass_step" in job.shop.given, "[shop] mass_step"))
    share = DEFAULT_MIN_SHARE if job.min_share is None else job.min_share
    out.append(Setting("lever-rule share bounds", f"{share:g} to {1 - share:g}", "M",
                       job.min_share is not None, "[geometry] min_share"))
    if report.one_plane is not None:
        rule = report.one_plane.rule
        out.append(Setting("one-plane allowance rule", "whole U_per (ISO 21940-11)" if rule == "whole"
                           else "statics transfer (stricter)", "H" if rule == "whole" else "D",
                           job.one_plane_rule != "whole", "[geometry] one_plane_rule"))
    return out


def _key_settings(job: Job) -> list[Setting]:
    """The key marking, when the job has a [key] table."""
    if job.key is None:
        return []
    return [Setting("key marking", f"{job.key.marking}" + ("" if job.key.marking_given else
                    f" (by the {job.key.convention} convention)"), "M", job.key.marking_given, '[key] marking = "H"')]


def _measurement_settings(job: Job) -> list[Setting]:
    """The arbor index's spread, the measurement error allowance and the trial-run thresholds."""
    out = []
    if job.measurement.kind == "arbor-index":
        from toolkit.arbor import DEFAULT_MAX_SPREAD

        spread = job.measurement.max_spread
        out.append(Setting("arbor index: largest consistent spread",
                           f"{DEFAULT_MAX_SPREAD if spread is None else spread:g} of the mean reading", "CP",
                           spread is not None, "[measurement] max_spread"))
    delta = 0.0 if job.error_allowance is None else job.error_allowance.m_as("g*mm")
    shown = Formatter(job.shop.units, job.angle_reference, job.angle_sense).unbalance(delta) if delta else "0"
    out.append(Setting("measurement error allowance ΔU", shown, "M", job.error_allowance is not None,
                       "[rotor] error_allowance"))
    if job.measurement.kind == "runs":
        from toolkit.influence import Settings

        defaults = Settings()
        for key, label, unit in (("trial_change_pct", "trial run: least change in amplitude", " %"),
                                 ("trial_change_deg", "trial run: least change in phase", "°")):
            value = job.measurement.thresholds.get(key, getattr(defaults, key))
            out.append(Setting(label, f"{value:g}{unit}", "CP", key in job.measurement.thresholds,
                               f"[measurement] {key}"))
    return out


def _drilling_settings(job: Job) -> list[Setting]:
    """The drilling limits and the drill point angle (when a plane may drill)."""
    if not any("drill" in p.methods for p in job.planes):
        return []
    from dataclasses import fields

    from toolkit.fabricate.drilling import Limits

    out = []
    defaults = Limits()
    for f in fields(Limits):
        value = job.shop.drilling.get(f.name, getattr(defaults, f.name))
        if value is None:
            continue
        out.append(Setting(f"drilling: {f.name.replace('_', ' ')}", f"{value:g}", "CP",
                           f.name in job.shop.drilling, f"[shop.drilling] {f.name}"))
    out.append(Setting("drill point angle", f"{job.shop.point_angle_deg:g}°", "S",
                       "point_angle" in job.shop.given, "[shop] point_angle"))
    return out


def _plate_settings(job: Job) -> list[Setting]:
    """The plate size step, the weld convexity allowance and the fillet leg (when a plane may weld a plate)."""
    if not any("plate" in p.methods for p in job.planes):
        return []
    from toolkit.fabricate.plates import DEFAULT_CONVEXITY

    step = job.shop.plate_step.m_as("mm") if job.shop.plate_step is not None else 1.0
    convexity = DEFAULT_CONVEXITY if job.shop.weld_convexity is None else job.shop.weld_convexity
    fillet = ("minimum for the plate thickness (AWS D1.1 table [H])" if job.shop.fillet is None
              else f"{job.shop.fillet.m_as('mm'):g} mm")
    return [Setting("plate size step", f"{step:g} mm", "CP", job.shop.plate_step is not None, "[shop] plate_step"),
            Setting("weld convexity allowance", f"{convexity:g}", "M", job.shop.weld_convexity is not None,
                    "[shop] weld_convexity"),
            Setting("fillet weld leg", fillet, "H", job.shop.fillet is not None, "[shop] fillet")]


_SOURCES = {
    "hole": "Drilled holes: point cone h = (d/2)/tan(θ/2) (drill makers' data); hole volume and first moment "
            "derived here [D]; hole spacing, wall and depth limits common practice [CP].",
    "plate": "Weld-on plates: plate and annular-sector centroid derived here [D]; minimum fillet size AWS D1.1 "
             "table as reproduced [H]; stock thicknesses as stocked [H, M].",
    "washers": "Washers: ISO 7089 dimensions as reproduced by a fastener supplier [H]; masses derived [D].",
}


def build_order(job: Job) -> WorkOrder:
    """Run the whole chain on a validated :class:`~toolkit.workorder.job.Job`.

    Raises :class:`~toolkit.errors.BadInput` for inconsistent inputs and
    :class:`~toolkit.errors.Infeasible` when no allowed method can carry out a plane's correction.

    >>> order = build_order(parse_job(EXAMPLE_JOB))
    >>> [(p.name, p.method, round(p.tolerance.u_per_g_mm)) for p in order.planes]
    [('A', 'drill', 8962), ('B', 'plate', 7333)]
    >>> [op.action for op in order.operations][:1], order.passed
    (['remove'], True)
    """
    report, tolerances, notes = _tolerances(job)
    initial, measured_by, warnings, sources, cautions, solution = _initial(job)
    missing = [p.name for p in job.planes if p.name not in initial]
    if missing:
        raise BadInput(f"{job.origin}: measurement: no unbalance for plane(s) {', '.join(missing)}")
    warnings = list(notes) + warnings
    # each plane: its correction, the operations that carry it out (numbered across planes), its check run
    planes, kinds_used = [], set()
    key = job.key.result if job.key is not None else None
    key_shares = {s.plane: (s.amount_g_mm, s.angle_deg) for s in key.planes} if key is not None else {}
    for spec in job.planes:
        first = sum(len(p.operations) for p in planes) + 1
        plane, plane_notes, plane_cautions = _plane_order(job, spec, tolerances[spec.name], initial[spec.name],
                                                          key_shares.get(spec.name), first)
        planes.append(plane)
        warnings.extend(plane_notes)
        cautions.extend(plane_cautions)
        kinds_used.update(op.kind for op in plane.operations)
    # the key mismatch's notes, cautions and source
    if job.key is not None:
        warnings.extend(job.key.warnings)
        if key is not None:
            fmt = Formatter(job.shop.units, job.angle_reference, job.angle_sense)
            warnings.extend(_key_notes(job, fmt, key_shares, planes))
            cautions.extend(key.cautions)
            sources.append("Key mismatch: " + key.method + "; " + key.source)
        else:
            sources.append("Key convention: " + _KEY_SOURCE)
    return _work_order(job, report, planes, measured_by, warnings, list(GENERAL_CAUTIONS) + cautions,
                       [tolerances[p.name].source for p in job.planes] + sources + _method_sources(planes, kinds_used),
                       solution)


def _plane_order(job: Job, spec, tol, measured: tuple[float, float], key_share, first: int):
    """One plane of the order: the correction of ``measured`` (with the key mismatch's share, if any), its
    operations numbered from ``first``, the predicted residual and the check-run rule. Returns the
    :class:`PlaneOrder`, its notes and its cautions."""
    from toolkit.tolerance import check_residuals

    delta = 0.0 if job.error_allowance is None else job.error_allowance.m_as("g*mm")
    u0, a0 = measured
    if key_share is not None:  # the key mismatch in service is corrected with the measured unbalance
        u0, a0 = polar(vector(*measured) + vector(*key_share))
    limit = tol.u_per_g_mm - delta
    if limit <= 0:
        raise BadInput(f"{job.origin}: rotor.error_allowance: {delta:g} g·mm is not below the allowance of "
                       f"plane {spec.name} ({tol.u_per_g_mm:.4g} g·mm)")
    method, raw_ops, residual, notes, cautions = _correct_plane(job, spec, u0, a0, tol.u_per_g_mm, limit)
    ops = tuple(Operation(number, spec.name, kind, action, text, angle, mass, u, spec.radius.m_as("mm"),
                          _details(kind, dims, mass, job))
                for number, (kind, action, angle, mass, u, dims, text) in enumerate(raw_ops, start=first))
    amount, angle = polar(residual)
    check, = check_residuals({spec.name: _q(tol.u_per_g_mm, "g*mm")}, {spec.name: (_q(amount, "g*mm"), angle)},
                             error_allowance=job.error_allowance)
    correction_action = "remove" if method == "drill" else "add"
    correction_angle = a0 if correction_action == "remove" else (a0 + 180.0) % 360.0
    share = key_share or (None, None)
    plane = PlaneOrder(spec.name, spec.position.m_as("mm"), spec.radius.m_as("mm"), spec.surface, method, tol,
                       *measured, correction_action, u0, correction_angle, ops, amount, angle, (check.rule,),
                       check.limit.m_as("g*mm"), check.rule, key_g_mm=share[0], key_deg=share[1])
    return plane, notes, cautions


def _method_sources(planes, kinds_used) -> list[str]:
    """The sources of the residual check, of each fabrication method used and of the safety cautions."""
    sources = ["Residual check: " + planes[0].rule if planes else ""]
    sources += [_SOURCES[k] for k in ("hole", "plate", "washers") if k in kinds_used]
    sources.append("Safety: lock-out/tag-out OSHA 29 CFR 1910.147; hot work OSHA 29 CFR 1926.352/.354; welding "
                   "procedures ISO 15614-1 or AWS D1.1.")
    return sources


def _work_order(job: Job, report, planes, measured_by, warnings, cautions, sources, solution) -> WorkOrder:
    """The finished :class:`WorkOrder` from its parts."""
    order = job.order
    return WorkOrder(
        ident=Identification(order["number"], order["rotor"], order.get("customer", ""), order.get("drawing", ""),
                             order.get("serial", ""), _shown_date(job), order.get("notes", ""),
                             job.input_sha256),
        rotor_mass_kg=job.mass.m_as("kg"), service_speed_rpm=job.service_speed_rpm,
        balancing_speed_rpm=job.balancing_speed_rpm, grade=report.grade.label, criterion=job.criterion,
        material=job.material, u_per_total_g_mm=report.u_per.m_as("g*mm"), angle_reference=job.angle_reference,
        angle_sense=job.angle_sense, units=job.shop.units, planes=tuple(planes), measurement=measured_by,
        cautions=_unique(cautions, words=5), sources=_unique(s for s in sources if s),
        settings=_settings(job, report) + (paper_setting(job.shop.paper, job.shop.units,
                                                         "job file" if job.shop.paper else ""),),
        warnings=_unique(warnings), paper=job.shop.paper or default_paper(job.shop.units),
        inputs={"origin": job.origin}, field_record=None if solution is None else _field_record(solution, planes),
        **_key_fields(job, planes),
    )


def _field_record(solution, planes) -> FieldRecord:
    """The runs, the coefficients and the check run's predicted vibration per sensor after the operations
    as planned (quantised and at their rounded angles), not after the solver's exact corrections."""
    import numpy as np

    from toolkit.influence import conjugate_needed

    rs = solution.runset
    conj = conjugate_needed(rs.weight_angles, rs.phase)
    runs = tuple(FieldRun(run.name, tuple((plane, *polar(z)) for plane, z in run.trials),
                          tuple(polar(v) for v in run.readings)) for run in rs.runs)
    # in the instrument's own phase sense: the reading that 1 g at 0° in the plane causes
    coefficients = tuple(Coefficient(rs.sensors[i], rs.planes[j], *polar(z.conjugate() if conj else z),
                                     f"{rs.reading_unit} per g")
                         for i, row in enumerate(solution.influence) for j, z in enumerate(row))
    by_name = {p.name: p for p in planes}
    last = dict(rs.runs[-1].trials) if rs.runs else {}
    applied = np.array([sum((op.effect for op in by_name[plane].operations), 0j) / by_name[plane].radius_mm
                        if plane in by_name else 0j for plane in rs.planes], dtype=complex)
    if rs.trials_left_on:
        applied = applied + np.array([last.get(plane, 0j) for plane in rs.planes], dtype=complex)
    predicted = np.array(solution.original) + np.array(solution.influence) @ applied
    check = []
    for i, sensor in enumerate(rs.sensors):
        z, o = complex(predicted[i]), complex(solution.original[i])
        amount, angle = polar(np.conj(z) if conj else z)
        check.append(SensorCheck(sensor, amount, angle, abs(o)))
    trials_on = tuple((plane, *polar(z)) for plane, z in last.items() if z != 0)
    warnings = tuple(w for w in solution.warnings if not w.startswith("predicted residual after the corrections"))
    return FieldRecord(rs.reading_unit, rs.phase, rs.sensors, runs, coefficients, solution.condition_number,
                       warnings, rs.trials_left_on, trials_on, tuple(check))


_KEY_SOURCE = ("ISO 21940-32:2012, scope (half-key convention; full-key and no-key on older parts) [S]; marking "
               "letters as motor makers stamp them [H], as the standard's own wording [M]")


def _key_fields(job: Job, planes) -> dict:
    """The WorkOrder's key and arbor fields (by keyword); the key mismatch's share in each plane checked
    against that plane's allowance."""
    out = {}
    if job.key is not None:
        k = job.key
        unbalance = None
        if k.result is not None:
            unbalance = k.result.to_dict()
            unbalance["checks"] = [{"where": p.name, "amount_g_mm": p.key_g_mm, "allowance_g_mm": p.tolerance.u_per_g_mm,
                                    "passed": p.key_g_mm <= p.tolerance.u_per_g_mm} for p in planes
                                   if p.key_g_mm is not None]
            unbalance["passed"] = all(c["passed"] for c in unbalance["checks"]) if unbalance["checks"] else None
        out.update(key_convention=k.convention, keyway_fill=k.fill, key_marking=k.marking,
                   key_marking_given=k.marking_given, key_unbalance=unbalance)
    if job.measurement.kind == "arbor-index":
        out["arbor_index"] = {name: r.to_dict() for name, r in job.measurement.index.items()}
    return out


def _shown_date(job: Job) -> str:
    if "order.date" in job.defaults_used:
        return f"{_order_date(job)} (today; the job gives no date)"
    return job.order.get("date", "")


def _details(kind: str, dims: dict, mass: float, job: Job) -> tuple[tuple[str, str], ...]:
    unit = unit_system(job.shop.units).mass  # the scale's unit follows the job's unit system
    step = job.shop.mass_step.m_as(unit)
    if unit == "oz":  # a gram step is no round number of ounces: read to the decade below it (0.1 g: 0.001 oz)
        step = 10.0 ** math.floor(math.log10(step))
    shown = mass / 28.349523125 if unit == "oz" else mass
    weighed = f"{round(shown / step) * step:.{_decimals(step)}f} {unit}"
    if kind == "plate":
        return (("weigh before welding", f"{weighed} with weld"),)
    if kind == "washers":
        return (("weigh the stack", weighed),)
    return ()


def _decimals(step: float) -> int:
    text = f"{step:g}"
    return len(text.split(".")[1]) if "." in text else 0


def _unique(items, words: int | None = None) -> tuple[str, ...]:
    """Items in order without repeats; with ``words``, an item whose first ``words`` words repeat an
    earlier item's (the same caution worded for another operation) is left out."""
    seen, out = set(), []
    for item in items:
        text = re.sub(r"\s+", " ", item.strip())
        key = " ".join(text.lower().split()[:words]) if words else text
        if key not in seen:
            seen.add(key)
            out.append(text)
    return tuple(out)


def order_from_file(path: str | Path) -> WorkOrder:
    """Read, validate and build the work order of a job file."""
    return build_order(load_job(path))


def demo_job() -> Job:
    """The built-in invented demo job (``toolkit/workorder/demo.toml``)."""
    from importlib import resources

    text = resources.files("toolkit.workorder").joinpath("demo.toml").read_text(encoding="utf-8")
    return parse_job(text, "built-in demo job (invented example)")


#: The example files :func:`write_examples` writes: the invented job files and the planner sheet that uses
#: one of them.
EXAMPLE_FILES = ("job-fan-readings.toml", "job-fan-runs.toml", "job-blower-imperial.toml", "planner.csv")


def write_examples(folder: str | Path, *, force: bool = False) -> list[str]:
    """Write editable copies of the invented example job files (and the planner sheet) into ``folder``.

    Nothing is written if any of the files exists (unless ``force``); each is written atomically. Returns
    the paths written.
    """
    from importlib import resources

    from toolkit.fileio import check_writable, write_atomic

    folder = Path(folder)
    targets = [folder / name for name in EXAMPLE_FILES]
    for path in targets:
        check_writable(path, force)
    source = resources.files("toolkit.examples")
    return [str(write_atomic(path, source.joinpath(path.name).read_bytes(), force=force)) for path in targets]


def demo_order() -> WorkOrder:
    """The work order of the built-in invented demo job."""
    return build_order(demo_job())


from toolkit.workorder.job import EXAMPLE as EXAMPLE_JOB  # noqa: E402  (docstring example data)
