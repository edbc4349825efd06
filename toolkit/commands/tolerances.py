"""Subcommands grades, tolerance, verify.

Light at import: numpy, pint and the library modules are imported inside the run functions.
"""

from __future__ import annotations

from toolkit.commands._common import add_json, add_units, emit, emit_result, parse_named

_CAUTION_NOTE = ("The rotor maker's balance specification, where it is stricter, takes precedence over these "
                 "figures.")


# -- helpers ------------------------------------------------------------------------------------------

def _fraction(text, option: str, low: float, high: float, example: str):
    from toolkit.errors import BadInput

    if text is None:
        return None
    from toolkit.units import plain_number

    try:
        value = plain_number(text)
    except ValueError:
        raise BadInput(f"{option}: {text!r} is not a number; give a fraction from {low:g} to {high:g}, "
                       f"e.g. {example}") from None
    if not low <= value <= high:
        raise BadInput(f"{option}: {text!r} is outside {low:g} to {high:g}; e.g. {example}")
    return value


def _Fmt(system_name: str):  # noqa: N802 - kept as the name the calculators import
    """The one formatter, with the calculators' short names (``unb``; ``mass`` is the rotor's mass)."""
    from toolkit.formatting import Formatter

    class _Calculator(Formatter):
        unb = Formatter.unbalance

        def mass(self, q, sig: int = 4) -> str:
            return self.rotor_mass(q, sig)

    return _Calculator(system_name)


def _table(rows: list[list[str]], indent: str = "  ") -> list[str]:
    widths = [max(len(r[i]) for r in rows) for i in range(len(rows[0]))]
    return [indent + "  ".join(cell.ljust(w) for cell, w in zip(r, widths)).rstrip() for r in rows]


def _warnings(lines: list[str], warnings) -> None:
    from toolkit.errors import worded

    for w in warnings:
        lines.append(f"warning: {worded(w, lambda p: OPTION_NAMES.get(p, p))}")


# -- grades --------------------------------------------------------------------------------------------

def configure_grades(parser) -> None:
    parser.epilog = "Example: counterpoise grades --json"
    add_json(parser)
    parser.set_defaults(run=run_grades)


def run_grades(args) -> int:
    from toolkit.tolerance import grades

    rows = grades()
    legend = {"S": "grade value as stated in the standard", "H": "grade value confirmed in a reproduction "
              "of the standard's table", "M": "from memory, not confirmed against the standard",
              "D": "derived", "CP": "common practice", "custom": "given by the user"}
    used = [m for m in legend if any(g.mark == m for g in rows)]
    data = {"grades": [g.to_dict() for g in rows], "marks": {m: legend[m] for m in used}}
    lines = ["Balance quality grades (ISO 21940-11:2016); G = e_per x Omega in mm/s.",
             "Machine kinds are typical uses in our own words; the rotor maker's specification comes first.", ""]
    lines += _table([["grade", "mark", "typical machinery"]] +
                    [[g.label, g.mark, g.machinery] for g in rows])
    lines += ["", "marks: " + "; ".join(f"{m} = {legend[m]}" for m in used) + ".",
              "sources: the source column of tables/grades.csv (counterpoise grades --json)."]
    emit(args.json, data, "\n".join(lines))
    return 0


# -- tolerance ------------------------------------------------------------------------------------------

def configure_tolerance(parser) -> None:
    parser.epilog = ('Example: counterpoise tolerance --grade G6.3 --mass "412 kg" --speed "1480 rpm" '
                     '--bearing-span "900 mm" --com-from-a "400 mm" --plane "I=-120 mm" --plane "II=1010 mm"')
    parser.add_argument("--grade", required=True, help="balance quality grade: G6.3, 'G 6.3', 6.3 or '6.3 mm/s'")
    parser.add_argument("--custom-grade", action="store_true",
                        help="accept a grade off the ISO 21940-11 series (the output says so)")
    parser.add_argument("--mass", required=True, help='rotor mass with its unit, e.g. "412 kg" or "908 lb"')
    parser.add_argument("--speed", required=True, help='maximum service speed, e.g. "1480 rpm" or "24.7 Hz"')
    parser.add_argument("--bearing-span", metavar="LENGTH", help='distance between bearings A and B, e.g. "900 mm"')
    parser.add_argument("--com-from-a", metavar="LENGTH",
                        help="centre of mass measured from bearing A towards B")
    parser.add_argument("--plane", action="append", default=[], metavar="NAME=POSITION",
                        help="correction plane and its position from bearing A towards B (negative or beyond "
                             "the span when outboard); repeat for the second plane")
    parser.add_argument("--static-share", metavar="FRACTION",
                        help="state the tolerance as static and couple parts, the static part this fraction "
                             "of U_per (for narrow or overhung rotors)")
    parser.add_argument("--one-plane-rule", choices=("whole", "statics"), default="whole",
                        help="with one correction plane: whole (default) gives it the whole U_per, the "
                             "standard's one-plane rule; statics transfers the bearing shares to it (stricter)")
    parser.add_argument("--show-other-rule", action="store_true",
                        help="with one correction plane, show the other rule's allowance beside the one used")
    parser.add_argument("--rotor-length", metavar="LENGTH",
                        help="axial length of the rotor body, to check that one correction plane suffices")
    parser.add_argument("--correction-diameter", metavar="LENGTH",
                        help="diameter at the correction plane, to check that one correction plane suffices")
    parser.add_argument("--criterion", action="append", default=[], metavar="NAME",
                        help="iso (default), api or mil-std-167; repeat to compare (the strictest per plane "
                             "governs)")
    parser.add_argument("--journal-load", action="append", default=[], metavar="A=MASS",
                        help="static load on a journal (A or B), for the API criterion")
    parser.add_argument("--min-share", metavar="FRACTION", default=None,
                        help="lower bound of a bearing plane's share in the lever rule (default 0.3, i.e. "
                             "0.3-0.7)")
    parser.add_argument("--residual", action="append", default=[], metavar="NAME=AMOUNT@ANGLE",
                        help='measured residual in a plane, e.g. "A=450 g*mm@40"; exit 1 when any fails')
    parser.add_argument("--error-allowance", metavar="AMOUNT",
                        help="error allowance dU for the residual check (default 0)")
    parser.add_argument("--check-stage", default="after-balancing", metavar="STAGE",
                        help="after-balancing (pass when residual <= allowance - dU, default) or later-check "
                             "(fail only when residual > allowance + dU)")
    k = parser.add_argument_group("key convention (ISO 21940-32; printed with the allowance)")
    k.add_argument("--key-convention", metavar="CONVENTION",
                   help="what the rotor is balanced to: half-key (the standard's), full-key or no-key")
    k.add_argument("--keyway-fill", metavar="WHAT",
                   help="what sits in its keyway while it is balanced: key, half-key or nothing (default: what "
                        "the convention says)")
    k.add_argument("--key-marking", metavar="TEXT",
                   help="the component's stamp (default by convention: H half-key, F full-key; from memory)")
    k.add_argument("--key-component", choices=("shaft", "hub"), default="shaft",
                   help="the rotor is the keyed joint's shaft (default) or a hub (fitment)")
    add_units(parser)
    add_json(parser)
    parser.set_defaults(run=run_tolerance)


def run_tolerance(args) -> int:
    return emit_result(args, result_tolerance(args))


def result_tolerance(args) -> tuple[int, dict, str | None]:
    """What ``tolerance`` computes, worded: (exit status, the ``--json`` object, the text or None with ``--json``)."""
    from toolkit.tolerance import DEFAULT_MIN_SHARE, parse_grade, tolerance_report
    from toolkit.units import Q_, quantity, speed_rpm

    fmt = _Fmt(args.units)
    grade = parse_grade(args.grade, custom=args.custom_grade, name="--grade")
    mass = quantity(args.mass, "mass", "--mass", positive=True)
    speed = Q_(speed_rpm(args.speed, "--speed"), "rpm")
    min_share = _fraction(args.min_share, "--min-share", 0.0, 0.5, "0.3")
    static_share = _fraction(args.static_share, "--static-share", 0.0, 1.0, "0.5")
    report = tolerance_report(
        grade, mass, speed, custom_grade=args.custom_grade,
        bearing_span=args.bearing_span, com_from_a=args.com_from_a,
        planes=[parse_named(p, "plane", "--plane") for p in args.plane] or None,
        static_share=static_share, criteria=args.criterion or ("iso",),
        journal_loads=[parse_named(j, "journal load", "--journal-load") for j in args.journal_load] or None,
        min_share=DEFAULT_MIN_SHARE if min_share is None else min_share,
        residuals=[parse_named(r, "residual", "--residual") for r in args.residual] or None,
        error_allowance=args.error_allowance, check_stage=args.check_stage,
        one_plane_rule=args.one_plane_rule,
        rotor_length=None if args.rotor_length is None else quantity(args.rotor_length, "length", "--rotor-length",
                                                                     positive=True),
        correction_diameter=None if args.correction_diameter is None else quantity(
            args.correction_diameter, "length", "--correction-diameter", positive=True))
    if report.one_plane is None and (args.rotor_length or args.correction_diameter or args.show_other_rule
                                     or args.one_plane_rule != "whole"):
        from toolkit.errors import BadInput

        raise BadInput("--one-plane-rule, --show-other-rule, --rotor-length and --correction-diameter apply to one "
                       "correction plane: give --plane NAME=POSITION once with --bearing-span and --com-from-a")
    doubts = [] if report.one_plane is None else [d.text(OPTION_NAMES) for d in report.one_plane.doubts]
    key = _key_convention(args)
    data = report.to_dict()
    data["units"] = fmt.system.name
    from toolkit.errors import worded

    data["warnings"] = [worded(w, lambda p: OPTION_NAMES.get(p, p)) for w in report.warnings]
    if key is not None:
        data["key"] = key.to_dict()
        data["key"]["warnings"] = ["--keyway-fill" + w[len("fill"):] for w in key.warnings]
        doubts = doubts + data["key"]["warnings"]
        data["warnings"] = data["warnings"] + data["key"]["warnings"]
    if report.one_plane is not None:
        data["one_plane"] = report.one_plane.to_dict(OPTION_NAMES)
        data["warnings"] = data["warnings"] + doubts
    return (1 if report.passed is False else 0,
            data, None if args.json else _tolerance_text(report, fmt, args.show_other_rule, doubts, key))


def _key_convention(args):
    """The key convention options as a :class:`toolkit.keys.KeyConvention`, or None when none is given."""
    from toolkit.errors import BadInput
    from toolkit.keys import key_convention

    if args.key_convention is None:
        if args.keyway_fill is not None or args.key_marking is not None:
            raise BadInput("--keyway-fill/--key-marking: give --key-convention (half-key, full-key or no-key) too")
        return None
    try:
        return key_convention(args.key_convention, args.keyway_fill, args.key_marking, args.key_component)
    except BadInput as exc:
        head, _sep, rest = str(exc).partition(":")
        option = {"convention": "--key-convention", "fill": "--keyway-fill"}.get(head, head)
        raise BadInput(f"{option}:{rest}") from None


#: The tolerance library's parameter names as this command's options, for warnings that name what to check.
OPTION_NAMES = {"rotor_length": "--rotor-length", "correction_diameter": "--correction-diameter",
                "static_share": "--static-share",
                "bearing_span": "--bearing-span", "com_from_a": "--com-from-a", "plane_position": "--plane",
                "one_plane_rule": "--one-plane-rule"}


def _tolerance_text(report, fmt: _Fmt, show_other: bool = False, doubts=(), key=None) -> str:
    g = report.grade
    lines = [f"Permissible residual unbalance, {report.method}",
             f"  grade       {g.label}  ({g.machinery}; source mark {g.mark})",
             f"  rotor mass  {fmt.mass(report.mass)}",
             f"  max speed   {report.speed_rpm:g} r/min",
             f"  e_per       {report.e_per.m_as('um'):.4g} µm (g·mm per kg)",
             f"  U_per       {fmt.unb(report.u_per)}  (whole rotor)"]
    if key is not None:
        lines.append(f"  key         {key.component} {key.words}; the allowance applies in that state "
                     f"(ISO 21940-32:2012{'' if key.marking_given else '; marking letters from memory'})")
    if report.bearing_span is not None:
        lines.append(f"  geometry    bearing span {fmt.length(report.bearing_span)}, centre of mass "
                     f"{fmt.length(report.com_from_a)} from bearing A")
    if report.planes:
        names = [c.name for c in report.criteria]
        head = ["plane", "position"] + [c.label for c in report.criteria] + ["allowance"]
        rows = [head]
        for p in report.planes:
            cells = [p.name, "bearing" if p.position is None else fmt.length(p.position)]
            by = dict(p.by_criterion)
            for key in names:
                cells.append(fmt.unb(by[key]) + (" *" if key == p.criterion and len(names) > 1 else ""))
            cells.append(f"{fmt.unb(p.u_per)}")
            rows.append(cells)
        head_note = " (* strictest criterion, it governs)" if len(names) > 1 else ""
        if report.static_couple is not None:
            head_note += " (the allowance column is set by the static and couple tolerances below)"
        lines += ["", "Allowance per plane" + head_note]
        lines += _table(rows)
    else:
        lines += ["", "Figures without plane geometry (per-plane allowances need --bearing-span and "
                      "--com-from-a, or --journal-load A=... --journal-load B=...)"]
        lines += _table([[c.label, name, fmt.unb(u)] for c in report.criteria for name, u in c.planes])
    lines += ["", "Methods and sources"]
    for c in report.criteria:
        lines.append(f"  {c.label}: {c.method}")
        lines.append(f"    source: {c.source}")
        for note in c.notes:
            lines.append(f"    note: {note}")
    op = report.one_plane
    if op is not None:
        lines.append(f"  one correction plane ({op.plane}): the {op.rule} rule was used, {fmt.unb(op.used)} "
                     f"({ONE_PLANE_TEXT[op.rule]})")
        if show_other:
            lines.append(f"    the {op.other_rule} rule would give {fmt.unb(op.other)} "
                         f"(--one-plane-rule {op.other_rule}): {ONE_PLANE_TEXT[op.other_rule]}")
    if report.bearings is not None and len(report.criteria) > 0:
        b = report.bearings
        lines.append(f"  bearing shares (ISO): A {b.share_a:.3f}, B {b.share_b:.3f} (lever rule gave "
                     f"{b.lever_share_a:.3f}/{1 - b.lever_share_a:.3f})")
    sc = report.static_couple
    if sc is not None:
        lines += ["", f"Static and couple tolerances ({sc.method})",
                  f"  static (resultant, at the centre-of-mass plane)  {fmt.unb(sc.static)}",
                  f"  couple, in each of planes {sc.planes[0]} and {sc.planes[1]} (opposite angles)  "
                  f"{fmt.unb(sc.couple_per_plane)}",
                  f"  static share {sc.static_share:g} (largest possible {sc.max_static_share:.3f}); "
                  f"source: {sc.source}",
                  f"  allowance in each plane  {fmt.unb(report.planes[0].u_per)}: T = min(S/2, U_c*b/(|z1 - z_s| + "
                  f"|z2 - z_s|)), so residuals within T in both planes keep the static and couple parts within "
                  f"their tolerances (derived here [D]); the residual check uses it"]
    if report.checks:
        rule = report.checks[0].rule
        lines += ["", f"Residual check (rule: {rule})"]
        rows = [["plane", "residual", "angle", "allowance", "limit", "margin", "result"]]
        for c in report.checks:
            rows.append([c.plane, fmt.unb(c.residual), f"{c.angle_deg:g}° from reference mark",
                         fmt.unb(c.allowance), fmt.unb(c.limit),
                         f"{fmt.unb(c.margin)} ({c.margin_percent:.0f} %)", "PASS" if c.passed else "FAIL"])
        lines += _table(rows)
        lines.append("  result: " + ("all planes within tolerance" if report.passed
                                     else "OUT OF TOLERANCE (exit status 1)"))
    lines.append("")
    _warnings(lines, list(report.warnings) + list(doubts))
    lines.append(f"note: {_CAUTION_NOTE}")
    return "\n".join(lines)


ONE_PLANE_TEXT = {"whole": "the whole U_per, the standard's rule for one correction plane",
                  "statics": "the bearing shares transferred to the plane by statics, stricter"}


# -- verify ---------------------------------------------------------------------------------------------

def configure_verify(parser) -> None:
    parser.epilog = ('Example: counterpoise verify --test "200 g*mm" --reading 44.88@0 --reading 53.63@60 '
                     '--reading 58.64@120 --reading 56.03@180 --reading 47.72@240 --reading 41.41@300 '
                     '--allowed "150 g*mm"')
    parser.add_argument("--test", required=True, metavar="AMOUNT",
                        help='test unbalance (test mass x radius), e.g. "150 g*mm"; 1-2x the allowance')
    parser.add_argument("--reading", action="append", default=[], metavar="AMPLITUDE@ANGLE",
                        help="reading amplitude with the test mass at ANGLE degrees; repeat, 3 or more "
                             "positions (six at 60 deg is usual)")
    parser.add_argument("--allowed", metavar="AMOUNT", help="allowed residual unbalance, for pass or fail")
    parser.add_argument("--min-consistency", metavar="FRACTION", default=None,
                        help="warn when the fit's consistency is below this (default 0.9)")
    add_units(parser)
    add_json(parser)
    parser.set_defaults(run=run_verify)


def run_verify(args) -> int:
    return emit_result(args, result_verify(args))


def result_verify(args) -> tuple[int, dict, str | None]:
    """What ``verify`` computes, worded: (exit status, the ``--json`` object, the text or None with ``--json``)."""
    from toolkit.verify import MIN_CONSISTENCY, verify_residual

    fmt = _Fmt(args.units)
    min_c = _fraction(args.min_consistency, "--min-consistency", 0.0, 1.0, "0.9")
    result = verify_residual(args.test, args.reading, allowed=args.allowed,
                             min_consistency=MIN_CONSISTENCY if min_c is None else min_c)
    data = result.to_dict()
    data["units"] = fmt.system.name
    return 1 if result.passed is False else 0, data, None if args.json else _verify_text(result, fmt)


def _verify_text(v, fmt: _Fmt) -> str:
    lines = [f"Residual unbalance from a test unbalance of {fmt.unb(v.test_unbalance)} at "
             f"{len(v.readings)} positions"]
    lines += _table([["test at", "reading"]] + [[f"{a:g}°", f"{r:g}"] for a, r in zip(v.angles_deg, v.readings)])
    lines += ["",
              f"  residual     {fmt.unb(v.residual)} at {v.residual_angle_deg:.1f}° (heavy spot, in the frame of "
              f"the test-mass positions)",
              f"  consistency  {v.consistency:.4f} (coefficient of determination of the fit; 1 = on the circle)",
              f"  shortcut     {fmt.unb(v.shortcut)} by (max - min)/(max + min), for comparison only",
              f"  method       {v.method}",
              f"  source       {v.source}"]
    if v.allowed is not None:
        verdict = "PASS" if v.passed else "FAIL (exit status 1)"
        lines.append(f"  allowed      {fmt.unb(v.allowed)}: {verdict}")
    lines.append("")
    _warnings(lines, v.warnings)
    for c in v.cautions:
        lines.append(f"caution: {c}")
    return "\n".join(lines)
