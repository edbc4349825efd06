"""Subcommands solve, split: corrections from trial-mass runs, and one correction split onto fixed positions.

Module-level imports stay light (no numpy, no pint): the run functions import the library.
"""

from __future__ import annotations

from toolkit.commands._common import add_force, add_json, emit, emit_result

_SENSE_HELP = ("sense in which weight angles are measured from the reference mark: 'with rotation' or "
               "'against rotation' (default against rotation, printed on the output)")


def configure_solve(parser) -> None:
    parser.usage = ("counterpoise solve RUNS.toml [options]\n"
                    "       counterpoise solve --original VEC --trial MASS@ANGLE --with-trial VEC [--keep-trial]\n"
                    "       counterpoise solve --coefficients FILE --original VEC [--original VEC ...]\n"
                    "       counterpoise solve --bearing-mass MASS --radius LENGTH --speed SPEED")
    parser.epilog = ("Examples: counterpoise solve --original \"4.20 mm/s@285\" --trial \"10 g@0\" "
                     "--with-trial \"6.12 mm/s@251.5\";  counterpoise solve examples/runs-two-plane.toml. "
                     "Secure trial masses before every run; guards closed, people clear.")
    parser.add_argument("runs", nargs="?", metavar="RUNS.toml",
                        help="runs file (TOML): sensors, planes, senses and [[run]] tables")
    parser.add_argument("--original", action="append", metavar="VEC",
                        help="original reading AMOUNT@ANGLE, e.g. '4.20 mm/s@285' (with --coefficients: "
                             "once per sensor, in order)")
    parser.add_argument("--trial", metavar="MASS@ANGLE", help="trial mass, e.g. '10 g@0' (one-plane case)")
    parser.add_argument("--with-trial", metavar="VEC", help="reading with the trial mass on")
    parser.add_argument("--keep-trial", action="store_true",
                        help="the trial mass stays on the rotor: the correction is W - T")
    parser.add_argument("--radius", metavar="LENGTH",
                        help="correction radius, e.g. '150 mm': also report the unbalance")
    parser.add_argument("--weight-angles", default=None, metavar="SENSE", help=_SENSE_HELP)
    parser.add_argument("--phase", default=None, metavar="SENSE",
                        help="the instrument's phase sense: 'lag' or 'lead' (default lag, printed on the output)")
    parser.add_argument("--method", choices=("least squares", "min-max", "lsq", "minmax"), default=None,
                        help="least squares (default) or min-max (smallest largest residual)")
    parser.add_argument("--limit", action="append", metavar="PLANE=MASS",
                        help="largest correction allowed in a plane, e.g. 'near=60 g' (repeatable)")
    parser.add_argument("--min-change-pct", type=float, default=None, metavar="PCT",
                        help="trial effect warning: smallest amplitude change (default 30 %%, common practice)")
    parser.add_argument("--min-change-deg", type=float, default=None, metavar="DEG",
                        help="trial effect warning: smallest phase change (default 30 degrees, common practice)")
    parser.add_argument("--max-condition", type=float, default=None, metavar="N",
                        help="ill-conditioning warning above this condition number (default 10, chosen here)")
    parser.add_argument("--save-coefficients", metavar="FILE",
                        help="save the influence coefficients of this job to FILE (JSON) for later rotors")
    parser.add_argument("--coefficients", metavar="FILE",
                        help="solve from stored coefficients and the original run alone")
    parser.add_argument("--installed", action="append", metavar="PLANE=MASS@ANGLE",
                        help="with --coefficients and --after: the correction installed for a trim run")
    parser.add_argument("--after", action="append", metavar="VEC",
                        help="with --coefficients: readings after the installed correction (trim run), once "
                             "per sensor; updates the coefficients (save them with --save-coefficients)")
    parser.add_argument("--amplitude", action="append", metavar="ANGLE=AMPLITUDE",
                        help="amplitude-only method: the reading with the trial (--trial, a mass) at ANGLE, e.g. "
                             "'120=6.29 mm/s'; three or more, with --original an amplitude such as '6.0 mm/s'")
    parser.add_argument("--bearing-mass", metavar="MASS",
                        help="suggest a trial mass: rotor mass carried by the nearer bearing, e.g. '200 kg'")
    parser.add_argument("--speed", metavar="SPEED", help="speed of the trial run, e.g. '1480 rpm'")
    parser.add_argument("--fraction", type=float, default=None,
                        help="trial suggestion: centrifugal force as a fraction of the bearing load "
                             "(default 0.10, common practice)")
    add_force(parser)
    add_json(parser)
    parser.set_defaults(run=run_solve)


def _settings(args):
    from toolkit.influence import Settings

    kw = {}
    if args.min_change_pct is not None:
        kw["trial_change_pct"] = args.min_change_pct
    if args.min_change_deg is not None:
        kw["trial_change_deg"] = args.min_change_deg
    if args.max_condition is not None:
        kw["max_condition"] = args.max_condition
    return Settings(**kw)


def _method(args):
    return {"lsq": "least squares", "minmax": "min-max"}.get(args.method, args.method)


def _pairs(items, option):
    from toolkit.errors import BadInput

    out = {}
    for item in items or []:
        if "=" not in item:
            raise BadInput(f"{option}: {item!r} must be PLANE=VALUE, e.g. 'near=60 g'")
        plane, value = item.split("=", 1)
        out[plane.strip()] = value.strip()
    return out


def run_solve(args) -> int:
    from toolkit.errors import BadInput

    if args.bearing_mass is not None or args.speed is not None:
        return _run_suggest(args)
    if args.coefficients:
        return _run_stored(args)
    if args.amplitude:
        return _run_amplitude(args)
    settings = _settings(args)
    if args.runs:
        if args.trial or args.with_trial or args.original:
            raise BadInput("RUNS.toml: give either a runs file or --original/--trial/--with-trial, not both")
        from toolkit.influence import load_runs, solve_runs

        runset = load_runs(args.runs)
        if args.weight_angles or args.phase:
            raise BadInput("--weight-angles/--phase: the runs file declares its senses; change them there")
        if args.radius or args.keep_trial:
            raise BadInput("--radius/--keep-trial: the runs file declares them (radius = {...}, "
                           "trials_left_on = true); change them there")
        solution = solve_runs(runset, method=_method(args), settings=settings,
                              limits=_pairs(args.limit, "--limit") or None)
    else:
        missing = [o for o, v in (("--original", args.original), ("--trial", args.trial),
                                  ("--with-trial", args.with_trial)) if not v]
        if missing:
            raise BadInput(f"{missing[0]}: missing; give a runs file, or --original, --trial and --with-trial "
                           f"for one plane")
        if len(args.original) != 1:
            raise BadInput("--original: give it once for the one-plane case (several sensors: use a runs file)")
        from toolkit.influence import runs_from_dict, solve_runs
        from toolkit.vectors import parse_reading, to_complex

        from toolkit.runs import phase_sense, weight_sense
        from toolkit.units import magnitude

        parse_reading(args.original[0], "--original")
        parse_reading(args.with_trial, "--with-trial")
        if "*" not in args.trial.split("@")[0]:
            to_complex(args.trial, "mass", "--trial")
        elif not args.radius:
            raise BadInput.about("trial", f"{args.trial!r} is an unbalance; give {{radius}} to turn it into a mass",
                                 mentions=("radius",))
        # checked here, under their own names: the runs table built below is not the user's file
        if args.phase is not None:
            phase_sense(args.phase, "phase")
        if args.weight_angles is not None:
            weight_sense(args.weight_angles, "weight_angles")
        if args.radius:
            magnitude(args.radius, "length", "mm", name="radius", positive=True)
        data = {"sensors": ["sensor"], "planes": ["plane"],
                "weight_angles": args.weight_angles or "against rotation", "phase": args.phase or "lag",
                "trials_left_on": args.keep_trial,
                "run": [{"name": "original", "readings": [args.original[0]]},
                        {"name": "with trial", "trial": {"plane": args.trial}, "readings": [args.with_trial]}]}
        if args.radius:
            data["radius"] = {"plane": args.radius}
        solution = solve_runs(runs_from_dict(data, "solve"), method=_method(args), settings=settings,
                              limits=_pairs(args.limit, "--limit") or None)
    saved = None
    if args.save_coefficients:
        from toolkit.coefficients import coefficients_from, save_coefficients

        saved = save_coefficients(coefficients_from(solution, note=f"from {solution.runset.origin}"),
                                  args.save_coefficients, force=args.force)
    data = solution.to_dict()
    if saved:
        data["coefficients_file"] = str(saved)
    defaults = []
    if not args.runs:
        if args.weight_angles is None:
            defaults.append("weight angles against rotation (default)")
        if args.phase is None:
            defaults.append("phase lag (default)")
    data["sense_defaults"] = defaults
    emit(args.json, data, _solution_text(solution, saved, defaults))
    return 0


def _solution_text(solution, saved=None, defaults=(), measured: str = "") -> str:
    from toolkit.units import format_number
    from toolkit.vectors import polar

    rs = solution.runset
    lines = [f"Corrections ({solution.method}; angles {rs.weight_angles} from the reference mark)"]
    width = max(len(p) for p in rs.planes)
    for c in solution.corrections:
        extra = f"  ({format_number(c.unbalance_g_mm)} g·mm)" if c.unbalance_g_mm is not None else ""
        lines.append(f"  {c.plane:<{width}}  {c.action} {format_number(c.mass.m_as('g'))} g at "
                     f"{c.angle_deg:.1f}°{extra}")
    if rs.trials_left_on:
        lines.append("  (the trial masses of the last run stay on the rotor; corrections are in addition to them)")
    lines.append(f"Readings: phase {rs.phase}"
                 + ("; conjugated to the weight-angle sense before solving" if solution.to_dict()["readings_conjugated"]
                    else "; same sense as the weight angles"))
    if defaults:
        lines.append("Senses not given, defaults used: " + ", ".join(defaults)
                     + "; if your instrument or marks differ, the mass lands at the mirror-image angle")
    lines.append(f"Influence coefficients ({rs.reading_unit} per g, weight-angle frame):")
    for i, s in enumerate(rs.sensors):
        for j, p in enumerate(rs.planes):
            amount, angle = polar(solution.influence[i][j])
            lines.append(f"  {s} / {p}: {format_number(amount)} at {angle:.1f}°")
    lines.append(f"Condition number: {format_number(solution.condition_number)}")
    lines.append("Predicted residual after the corrections:")
    for r in solution.predicted_residual:
        lines.append(f"  {r['sensor']}: {format_number(r['amount'])} {r['unit']} "
                     f"(was {format_number(r['original_amount'])}{' ' + measured if measured else ''})")
    if saved:
        lines.append(f"Coefficients saved to {saved}")
    if solution.warnings:
        lines.append("Warnings:")
        lines += [f"  - {w}" for w in solution.warnings]
    lines.append("Cautions:")
    lines += [f"  - {c}" for c in solution.cautions]
    return "\n".join(lines)


def _run_stored(args) -> int:
    from toolkit.coefficients import load_coefficients, save_coefficients, solve_with_coefficients, trim_correction
    from toolkit.errors import BadInput

    coefficients = load_coefficients(args.coefficients)
    if args.runs or args.trial or args.with_trial:
        raise BadInput("--coefficients: give only --original (once per sensor), not a runs file or a trial")
    if not args.original:
        raise BadInput(f"--original: missing; give one reading per sensor ({', '.join(coefficients.sensors)})")
    if args.installed or args.after:
        if not (args.installed and args.after):
            raise BadInput("--installed/--after: a trim run needs both the installed masses and the readings after")
        trim = trim_correction(coefficients, args.original, _pairs(args.installed, "--installed"), args.after,
                               method=_method(args) or "least squares", settings=_settings(args),
                               origin=str(args.coefficients))
        updated = trim.updated
        path = save_coefficients(updated, args.save_coefficients, force=args.force) if args.save_coefficients \
            else None
        data = updated.to_dict()
        data["coefficients_file"] = None if path is None else str(path)
        data["trim"] = trim.solution.to_dict()
        where = f"saved to {path}" if path else "not saved (give --save-coefficients FILE to keep them)"
        lines = _solution_text(trim.solution, measured="measured after the installed correction").split("\n")
        lines[0] = "Trim " + lines[0][0].lower() + lines[0][1:] + ", from the readings after the installed correction"
        at = next(i for i, line in enumerate(lines) if line.startswith("Influence coefficients"))
        lines[at] = lines[at].replace("Influence coefficients", "Influence coefficients updated by the trim run")
        lines.insert(at + 1 + len(updated.sensors) * len(updated.planes), f"  (updated coefficients {where})")
        emit(args.json, data, "\n".join(lines))
        return 0
    solution = solve_with_coefficients(coefficients, args.original, method=_method(args) or "least squares",
                                       settings=_settings(args), origin=str(args.coefficients))
    data = solution.to_dict()
    emit(args.json, data, _solution_text(solution))
    return 0


def _run_amplitude(args) -> int:
    from toolkit.errors import BadInput
    from toolkit.influence import four_run
    from toolkit.units import format_number

    if not args.original or len(args.original) != 1 or not args.trial:
        raise BadInput("--amplitude: give --original (an amplitude, e.g. '6.0 mm/s') once and --trial (a mass, "
                       "e.g. '40 g')")
    runs = []
    for item in args.amplitude:
        angle, sep, amplitude = item.partition("=")
        if not sep:
            raise BadInput(f"--amplitude: {item!r} must be ANGLE=AMPLITUDE, e.g. '120=6.29 mm/s'")
        runs.append((angle.strip(), amplitude.strip()))
    s = four_run(args.original[0], args.trial, runs)
    sense = f", {args.weight_angles}" if args.weight_angles else ""
    lines = [f"Correction (amplitude only; angle measured like the trial positions{sense}):",
             f"  add {format_number(s.mass.m_as('g'))} g at {s.angle_deg:.1f}°",
             f"Consistency index: {s.consistency:.3f} (1 for a linear rotor)"]
    if s.warnings:
        lines.append("Warnings:")
        lines += [f"  - {w}" for w in s.warnings]
    lines.append("Cautions:")
    lines += [f"  - {c}" for c in s.cautions]
    emit(args.json, s.to_dict(), "\n".join(lines))
    return 0


def _run_suggest(args) -> int:
    from toolkit.errors import BadInput
    from toolkit.influence import suggest_trial_mass
    from toolkit.units import format_number

    if not (args.bearing_mass and args.speed and args.radius):
        raise BadInput("--bearing-mass/--speed/--radius: a trial suggestion needs all three")
    s = suggest_trial_mass(args.bearing_mass, args.radius, args.speed, args.fraction)
    text = (f"Suggested trial mass: {format_number(s.mass.m_as('g'))} g at {format_number(s.radius_mm)} mm "
            f"({s.rule}; fraction {s.fraction:g}, {s.mark}).\n"
            "A starting point only: check it against the rotor maker's guidance and what the rotor can "
            "carry safely.\nCautions:\n" + "\n".join(f"  - {c}" for c in s.cautions))
    emit(args.json, s.to_dict(), text)
    return 0


def configure_split(parser) -> None:
    parser.epilog = "Example: counterpoise split \"25 g@100\" --at 90,135"
    parser.add_argument("vector", metavar="MASS@ANGLE", help="the correction, e.g. '25 g@100'")
    group = parser.add_mutually_exclusive_group(required=True)
    group.add_argument("--positions", type=int, metavar="N", help="number of equally spaced positions (3 or more)")
    group.add_argument("--at", metavar="DEG,DEG", help="angles of the available positions, e.g. '90,135'")
    parser.add_argument("--offset", default="0", metavar="DEG",
                        help="angle of the first of the equally spaced positions (default 0)")
    add_json(parser)
    parser.set_defaults(run=run_split)


def run_split(args) -> int:
    return emit_result(args, result_split(args))


def result_split(args) -> tuple[int, dict, str | None]:
    """What ``split`` computes, worded: (exit status, the ``--json`` object, the text or None with ``--json``)."""
    from toolkit.errors import BadInput
    from toolkit.units import format_number
    from toolkit.vectors import split_vector

    if args.at is not None and args.offset not in ("0", None):
        raise BadInput("--offset: only with --positions")
    result = split_vector(args.vector, positions=args.positions, offset=args.offset, at=args.at)
    lines = [f"{format_number(result.mass_g)} g at {result.angle_deg:g}° split onto the positions "
             f"(same angle sense as the input; the parts add up to the input):"]
    lines += [f"  {format_number(m)} g at {a:g}°" for a, m in result.parts]
    lines.append("Weigh each part and secure it before running.")
    return 0, result.to_dict(), "\n".join(lines)
