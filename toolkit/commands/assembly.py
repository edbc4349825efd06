"""Subcommands key, index, budget: keyed rotors, the arbor index method and an assembly's error budget.

Light at import: numpy, pint and the library modules are imported inside the run functions. The library's
errors carry the parameter they are about (``key_length``); the command line words them as these commands'
options (``--key-length: ...``) through :func:`toolkit.commands._common.error_text`, as for every command.
"""

from __future__ import annotations

import re

from toolkit.commands._common import add_json, add_units, emit

_NOTE = ("The rotor maker's instructions and balance specification take precedence over these figures.")


# -- helpers ------------------------------------------------------------------------------------------

def _say(warnings, args) -> list[str]:
    """Library warnings in the command's terms: the parameters a warning names (its ``{name}`` fields, see
    :class:`toolkit.errors.Worded`) become this command's options, named as its errors are
    (:func:`toolkit.commands._common.option_names`)."""
    from toolkit.commands._common import option_names
    from toolkit.errors import worded

    name = option_names(getattr(args, "command_parser", None))
    return [worded(w, name) for w in warnings]


def _named(text: str, option: str, example: str) -> tuple[str, str]:
    from toolkit.commands._common import parse_named

    try:
        return parse_named(text, "plane", option)
    except Exception:
        from toolkit.errors import BadInput

        raise BadInput(f"{option}: {text!r} is malformed; write NAME=VALUE, e.g. {example!r}") from None


def _fmt(units: str):
    from toolkit.commands.tolerances import _Fmt

    return _Fmt(units)


def _deg(a) -> str:
    return "angle unknown" if a is None else f"{a:.1f}°"


# -- key -----------------------------------------------------------------------------------------------

def configure_key(parser) -> None:
    parser.epilog = ('Example: counterpoise key --width "14 mm" --height "9 mm" --shaft-depth "5.5 mm" '
                     '--hub-depth "3.8 mm" --shaft-diameter "50 mm" --keyway-length "70 mm" --hub-length "56 mm" '
                     '--hub-start "14 mm" --keyway-angle 90')
    g = parser.add_argument_group("key and keyways")
    g.add_argument("--width", required=True, metavar="LENGTH", help='key width, e.g. "14 mm"')
    g.add_argument("--height", required=True, metavar="LENGTH", help='full key height, e.g. "9 mm"')
    g.add_argument("--shaft-depth", required=True, metavar="LENGTH", help="shaft keyway depth below the shaft surface")
    g.add_argument("--hub-depth", metavar="LENGTH",
                   help="hub keyway depth beyond the bore (default: key height less shaft depth)")
    g.add_argument("--shaft-diameter", required=True, metavar="LENGTH", help="shaft diameter at the keyway")
    g.add_argument("--keyway-length", required=True, metavar="LENGTH", help="straight part of the shaft keyway")
    g.add_argument("--key-length", metavar="LENGTH", help="key length (default: the keyway length)")
    g.add_argument("--hub-length", metavar="LENGTH",
                   help="hub length over the key; leave out for a rotor run without its hub")
    g.add_argument("--keyway-start", default="0 mm", metavar="POSITION",
                   help="axial position of the keyway's end nearer the datum (default 0 mm); plane positions use "
                        "the same datum")
    g.add_argument("--key-start", metavar="POSITION", help="axial position of the key's near end (default: keyway's)")
    g.add_argument("--hub-start", metavar="POSITION", help="axial position of the hub's near end (default: key's)")
    g.add_argument("--keyway-angle", default="0", metavar="DEG", help="keyway angle from the reference mark (0)")
    g.add_argument("--material", default="steel", metavar="NAME", help="key material (default steel)")
    g.add_argument("--density", metavar="DENSITY", help="key density instead of a material ('7850 kg/m^3')")
    g.add_argument("--materials", metavar="FILE", default="materials", help="a shop's materials CSV")
    c = parser.add_argument_group("conventions (half-key is ISO 21940-32's)")
    c.add_argument("--shaft", default="half-key", metavar="CONVENTION",
                   help="convention the shaft was balanced to: half-key (default), full-key or no-key")
    c.add_argument("--shaft-fill", metavar="WHAT",
                   help="what sat in the shaft keyway while it was balanced: key, half-key or nothing (default: "
                        "what the convention says)")
    c.add_argument("--hub", metavar="CONVENTION",
                   help="convention the hub was balanced to: half-key (default), full-key or no-key")
    c.add_argument("--hub-fill", metavar="WHAT", help="what sat in the hub keyway while it was balanced")
    c.add_argument("--half-key-height", metavar="LENGTH", help="height of the shaft's half-key (default half the key)")
    c.add_argument("--half-key-length", metavar="LENGTH", help="length of the shaft's half-key (default the keyway)")
    c.add_argument("--hub-half-key-height", metavar="LENGTH", help="height of the hub's half-key (default half the key)")
    c.add_argument("--hub-half-key-length", metavar="LENGTH", help="length of the hub's half-key (default the hub)")
    c.add_argument("--in-service", default="key", metavar="WHAT",
                   help="what sits in the keyway now: key (assembled, default) or nothing (run without a key)")
    c.add_argument("--shaft-mark", metavar="TEXT",
                   help="the shaft's stamp (default by convention: H half-key, F full-key; from memory, overridable)")
    c.add_argument("--hub-mark", metavar="TEXT", help="the hub's stamp (default by convention)")
    p = parser.add_argument_group("planes, allowance and correction")
    p.add_argument("--plane", action="append", default=[], metavar="NAME=POSITION",
                   help="correction plane and its axial position (same datum); once or twice")
    p.add_argument("--allowance", action="append", default=[], metavar="[NAME=]AMOUNT",
                   help="allowance for every plane (or the resultant), or NAME=AMOUNT per plane; exit 1 when exceeded")
    p.add_argument("--fix", choices=("drill", "plate", "washers"), help="plan a fabricated correction of the resultant")
    p.add_argument("--fix-radius", metavar="LENGTH", help="radius of the fabricated correction")
    p.add_argument("--fix-width", metavar="LENGTH", help="seat width for a plate")
    p.add_argument("--fix-radial", action="store_true", help="radial holes or washers (default axial)")
    add_units(parser)
    add_json(parser)
    parser.set_defaults(run=run_key)


def run_key(args) -> int:
    from toolkit.errors import BadInput
    from toolkit.keys import key_unbalance

    planes = [_named(t, "--plane", "I=120 mm") for t in args.plane]
    allowance = None
    if args.allowance:
        named = [a for a in args.allowance if "=" in a]
        if named and len(named) != len(args.allowance):
            raise BadInput("--allowance: give one AMOUNT for every plane, or NAME=AMOUNT for each, not both")
        if named:
            allowance = dict(_named(t, "--allowance", "I=120 g*mm") for t in named)
        elif len(args.allowance) > 1:
            raise BadInput("--allowance: give it once, or as NAME=AMOUNT per plane")
        else:
            allowance = args.allowance[0]
    fix_options = {}
    if args.fix == "plate":
        fix_options["width"] = args.fix_width
    elif args.fix_width is not None:
        raise BadInput("--fix-width: only a plate (--fix plate) takes a seat width")
    if args.fix in ("drill", "washers"):
        fix_options["orientation"] = "radial" if args.fix_radial else "axial"
    r = key_unbalance(width=args.width, height=args.height, shaft_depth=args.shaft_depth, hub_depth=args.hub_depth,
                      shaft_diameter=args.shaft_diameter, keyway_length=args.keyway_length,
                      key_length=args.key_length, hub_length=args.hub_length, keyway_start=args.keyway_start,
                      key_start=args.key_start, hub_start=args.hub_start, keyway_angle=args.keyway_angle,
                      material=None if args.density else args.material, density=args.density,
                      shaft_convention=args.shaft, shaft_fill=args.shaft_fill, hub_convention=args.hub,
                      hub_fill=args.hub_fill, half_key_height=args.half_key_height,
                      half_key_length=args.half_key_length, hub_half_key_height=args.hub_half_key_height,
                      hub_half_key_length=args.hub_half_key_length, in_service=args.in_service,
                      shaft_marking=args.shaft_mark, hub_marking=args.hub_mark, planes=planes or None,
                      allowance=allowance, fix_method=args.fix, fix_radius=args.fix_radius,
                      fix_options=fix_options, materials_table=args.materials, units=args.units)
    fmt = _fmt(args.units)
    data = r.to_dict()
    data["warnings"] = _say(data["warnings"], args)
    data["units"] = fmt.system.name
    emit(args.json, data, None if args.json else _key_text(r, fmt, data["warnings"]))
    return 1 if r.passed is False or (r.correction.plan is not None and r.correction.plan.within_allowance is False) \
        else 0


def _key_text(r, fmt, warnings) -> str:
    from toolkit.commands.tolerances import _table, _warnings
    from toolkit.units import Q_

    L = lambda mm: fmt.length(Q_(mm, "mm"))  # noqa: E731
    U = lambda g_mm: fmt.unb(Q_(g_mm, "g*mm"))  # noqa: E731
    i = r.inputs
    lines = [f"Key error: {U(r.amount_g_mm)} at {r.angle_deg:g}° from the reference mark (heavy spot; keyway at "
             f"{r.keyway_angle_deg:g}°, "
             + ("the keyway side heavy)" if r.signed_g_mm > 0 else "the keyway side light)" if r.signed_g_mm < 0
                else "no resultant)")]
    if r.axial_centre_mm is not None:
        lines.append(f"  axial centre   {L(r.axial_centre_mm)} from the datum")
    sign = "+" if r.net_mass_g >= 0 else "-"
    lines.append(f"  net key mass   {sign}{fmt.amount('mass', abs(r.net_mass_g))} left over "
                 f"in service")
    lines += ["", "Conventions"]
    for comp, c in r.conventions.items():
        mark = c["marking"] + (" (given)" if c["marking_given"] else " (by convention; marking letters from memory)")
        lines.append(f"  {comp:<6} balanced to the {c['convention']} convention, marked {mark}; "
                     f"in its keyway while balanced: {c['fill']}")
    lines.append(f"  in service: {'the key' if i['in_service'] == 'key' else 'no key in the keyway'}")
    lines += ["", "Geometry",
              f"  key {L(i['width_mm'])} wide x {L(i['height_mm'])} high x {L(i['key_length_mm'])} long from "
              f"{L(i['key_start_mm'])}; shaft keyway {L(i['keyway_length_mm'])} from {L(i['keyway_start_mm'])}, "
              f"{L(i['shaft_depth_mm'])} deep in a {L(i['shaft_diameter_mm'])} shaft"
              + ("" if i["hub_length_mm"] is None else
                 f"; hub {L(i['hub_length_mm'])} long from {L(i['hub_start_mm'])}, keyway {L(i['hub_depth_mm'])} deep"),
              f"  key material   {r.density.material.name if r.density.material else 'as given'}, "
              f"{r.density.kg_m3:g} kg/m³ ({r.density.source})", "", "Bodies (+ in service, - while balancing)"]
    rows = [["body", "radii from axis", "axial", "mass", "unbalance"]]
    for b in r.bodies:
        rows.append([b.label, f"{L(b.r_in_mm)} to {L(b.r_out_mm)}", f"{L(b.z_start_mm)} to {L(b.z_end_mm)}",
                     f"{'+' if b.sign > 0 else '-'}{b.mass_g:.4g} g", f"{'+' if b.sign > 0 else '-'}{U(b.unbalance_g_mm)}"])
    lines += _table(rows)
    lines += ["", "What is left, by cause (signed along the keyway's angle)"]
    rows = [["cause", "axial", "left"]] + [[p.cause, f"{L(p.z_start_mm)} to {L(p.z_end_mm)}",
                                            f"{'+' if p.signed_g_mm > 0 else '-'}{U(abs(p.signed_g_mm))}"]
                                           for p in r.parts]
    lines += _table(rows) if r.parts else ["  nothing: the key matches the conventions"]
    if r.planes:
        lines += ["", "Shares in the correction planes (statics)"]
        lines += _table([["plane", "position", "share", "heavy spot"]] +
                        [[s.plane, L(s.position_mm), U(s.amount_g_mm), f"{s.angle_deg:.1f}°"] for s in r.planes])
    if r.checks:
        lines += ["", "Against the allowance"]
        lines += _table([["where", "key error", "allowance", "result"]] +
                        [[c.where, U(c.amount_g_mm), U(c.allowance_g_mm), "PASS" if c.passed else "FAIL"]
                         for c in r.checks])
    k = r.correction
    lines += ["", "Correction", f"  {k.words}"]
    lines += [f"  or {o}" for o in k.options if not o.startswith("fabricated")]
    if k.plan is not None:
        lines.append(f"  fabricated ({k.plan.method}):")
        lines += [f"    {op.description}" for op in k.plan.operations]
        lines.append(f"    leaves {U(k.plan.error_g_mm)}" + ("" if k.plan.allowance_g_mm is None else
                                                             f" against {U(k.plan.allowance_g_mm)}: "
                                                             + ("within" if k.plan.within_allowance else "MISSES")))
    lines += ["", f"method: {r.method}", f"sources: {r.source}", ""]
    _warnings(lines, warnings)
    if k.plan is not None:
        _warnings(lines, k.plan.warnings)
        for c in k.plan.cautions:
            lines.append(f"caution: {c}")
    for c in r.cautions:
        lines.append(f"caution: {c}")
    lines.append(f"note: {_NOTE}")
    return "\n".join(lines)


# -- index ---------------------------------------------------------------------------------------------

def configure_index(parser) -> None:
    parser.epilog = ('Example: counterpoise index --reading "0=300 g*mm@40" --reading "180=180 g*mm@200" '
                     '--allowance "150 g*mm"')
    parser.add_argument("--reading", action="append", default=[], metavar="[INDEX=]AMOUNT@ANGLE",
                        help="reading in the arbor's frame with the part's mark at INDEX degrees on the arbor; "
                             "repeat, two or more (without INDEX: equal steps 0, 360/N, ...)")
    parser.add_argument("--radius", metavar="LENGTH", help="radius of readings given as masses ('2.7 g@30')")
    parser.add_argument("--allowance", metavar="AMOUNT", help="the part's allowance; exit 1 when its share exceeds it")
    parser.add_argument("--max-spread", metavar="FRACTION",
                        help="warn when the fit's spread exceeds this fraction of the mean reading (default 0.1, "
                             "common practice)")
    add_units(parser)
    add_json(parser)
    parser.set_defaults(run=run_index)


def run_index(args) -> int:
    from toolkit.arbor import index_separation
    from toolkit.commands.tolerances import _fraction
    from toolkit.errors import BadInput

    readings, indexes = [], []
    for k, text in enumerate(args.reading, 1):
        head, sep, rest = text.partition("=")
        if sep:
            indexes.append(head.strip())
            readings.append(rest.strip())
        else:
            readings.append(text)
    if indexes and len(indexes) != len(readings):
        raise BadInput("--reading: give INDEX=AMOUNT@ANGLE for every reading, or for none (equal steps)")
    spread = _fraction(args.max_spread, "--max-spread", 0.001, 1.0, "0.1")
    r = index_separation(readings, indexes or None, radius=args.radius, max_spread=spread, allowance=args.allowance)
    fmt = _fmt(args.units)
    data = r.to_dict()
    data["warnings"] = _say(data["warnings"], args)
    data["units"] = fmt.system.name
    emit(args.json, data, None if args.json else _index_text(r, fmt, data["warnings"]))
    return 1 if r.part_within is False else 0


def _index_text(r, fmt, warnings) -> str:
    from toolkit.commands.tolerances import _table, _warnings
    from toolkit.units import Q_

    U = lambda g_mm: fmt.unb(Q_(g_mm, "g*mm"))  # noqa: E731
    lines = [f"Arbor index method, {len(r.readings)} readings (angles in one sense, from the arbor's mark)"]
    lines += _table([["part's mark at", "reading", "misfit"]] +
                    [[f"{x.index_deg:g}°", f"{U(x.amount_g_mm)} at {x.angle_deg:.1f}°", U(x.misfit_g_mm)]
                     for x in r.readings])
    lines += ["",
              f"  arbor's share  {U(r.arbor_g_mm)} at {r.arbor_angle_deg:.1f}° from the arbor's mark",
              f"  part's share   {U(r.part_g_mm)} at {r.part_angle_deg:.1f}° from the part's own mark"]
    if r.spread_fraction is not None:
        lines.append(f"  spread         {U(r.spread_g_mm)} RMS misfit, {r.spread_fraction:.1%} of the mean reading "
                     f"(limit {r.max_spread:.0%}, {'given' if r.max_spread_given else 'default, common practice'}): "
                     + ("consistent" if r.consistent else "NOT consistent"))
    if r.allowance_g_mm is not None:
        lines.append(f"  part allowance {U(r.allowance_g_mm)}: " + ("PASS" if r.part_within else "FAIL (exit status 1)"))
    lines += [f"  method         {r.method}", f"  source         {r.source}", ""]
    _warnings(lines, warnings)
    lines.append("caution: stop the machine before turning the part on the arbor; secure the part and any trial "
                 "mass before each run, guards closed.")
    return "\n".join(lines)


# -- budget --------------------------------------------------------------------------------------------

def configure_budget(parser) -> None:
    parser.epilog = ('Example: counterpoise budget --tolerance "600 g*mm" --part "impeller=120 g*mm@40" '
                     '--part "shaft=95 g*mm" --fit "impeller=38 kg,clearance 0.02 mm" --key "key=173 g*mm@90"')
    parser.add_argument("--tolerance", metavar="AMOUNT", help="the assembly's permissible residual unbalance")
    parser.add_argument("--grade", help="instead of --tolerance: grade with --mass and --speed (ISO 21940-11)")
    parser.add_argument("--mass", metavar="MASS", help="the assembly's mass, with --grade")
    parser.add_argument("--speed", metavar="SPEED", help="the assembly's maximum service speed, with --grade")
    parser.add_argument("--part", action="append", default=[], metavar="NAME=AMOUNT[@ANGLE]",
                        help="residual of a separately balanced component; without @ANGLE its angle is unknown")
    parser.add_argument("--fit", action="append", default=[], metavar="NAME=MASS,clearance|runout LENGTH[@ANGLE]",
                        help="a mounted part's fit: its mass and the diametral clearance or total indicated runout "
                             "(e.g. 'hub=12 kg,runout 0.03 mm@120')")
    parser.add_argument("--key", action="append", default=[], metavar="NAME=AMOUNT[@ANGLE]",
                        help="a key error (from counterpoise key)")
    parser.add_argument("--other", action="append", default=[], metavar="NAME=AMOUNT[@ANGLE]",
                        help="any other error (e.g. a systematic error of the balancing machine)")
    add_units(parser)
    add_json(parser)
    parser.set_defaults(run=run_budget)


_FIT = re.compile(r"^(?P<mass>[^,]+),\s*(?P<basis>clearance|runout|eccentricity)\s+(?P<len>[^@]+?)\s*"
                  r"(?:@\s*(?P<angle>.+))?$")


def run_budget(args) -> int:
    from toolkit.errors import BadInput
    from toolkit.fits import budget_item, error_budget, fit_unbalance

    items = []
    for option, kind, texts in (("--part", "component", args.part), ("--key", "key", args.key),
                                ("--other", "other", args.other)):
        for t in texts:
            name, value = _named(t, option, "impeller=120 g*mm@40")
            items.append(_as(budget_item, f"{option} {name}", name, value, kind=kind))
    for t in args.fit:
        name, value = _named(t, "--fit", "hub=12 kg,runout 0.03 mm@120")
        m = _FIT.match(value)
        if not m:
            raise BadInput(f"--fit: {t!r} is malformed; write NAME=MASS,clearance LENGTH or NAME=MASS,runout "
                           f"LENGTH[@ANGLE], e.g. 'hub=12 kg,runout 0.03 mm@120'")
        f = _as(fit_unbalance, f"--fit {name}", m["mass"].strip(), **{m["basis"]: m["len"].strip()},
                angle=m["angle"])
        items.append(f.as_item(name))
    if not items:
        raise BadInput("--part/--fit/--key/--other: the budget has no contributions; give at least one")
    tol, tol_note = _tolerance(args)
    b = error_budget(items, tol)
    fmt = _fmt(args.units)
    data = b.to_dict()
    data["tolerance_basis"] = tol_note
    data["units"] = fmt.system.name
    emit(args.json, data, None if args.json else _budget_text(b, fmt, tol_note))
    return 1 if b.verdict == "exceeds" else 0


def _as(fn, option: str, *a, **kw):
    """Call a library function; its messages name ``option`` (the option and the item) instead of a parameter."""
    from toolkit.errors import BadInput

    try:
        return fn(*a, **kw)
    except BadInput as exc:
        raise BadInput(f"{option}: {exc.text() if exc.parameter else str(exc).partition(': ')[2]}") from None


def _tolerance(args):
    from toolkit.errors import BadInput

    by_grade = [x for x in (args.grade, args.mass, args.speed) if x is not None]
    if args.tolerance is not None and by_grade:
        raise BadInput("--tolerance: give either --tolerance or --grade with --mass and --speed, not both")
    if args.tolerance is not None:
        return args.tolerance, "given"
    if not by_grade:
        return None, "none given"
    if len(by_grade) != 3:
        raise BadInput("--grade/--mass/--speed: give all three for the assembly's tolerance")
    from toolkit.tolerance import parse_grade, permissible_unbalance
    from toolkit.units import Q_, quantity, speed_rpm

    grade = parse_grade(args.grade, name="--grade")
    mass = quantity(args.mass, "mass", "--mass", positive=True)
    speed = Q_(speed_rpm(args.speed, "--speed"), "rpm")
    u = permissible_unbalance(grade, mass, speed)
    return u, (f"U_per for {grade.label}, {mass:~P}, {speed.m_as('rpm'):g} r/min (ISO 21940-11:2016, 6.3.3) = "
               f"{u.m_as('g*mm'):.4g} g*mm")


def _budget_text(b, fmt, tol_note: str) -> str:
    from toolkit.commands.tolerances import _table, _warnings
    from toolkit.units import Q_

    U = lambda g_mm: fmt.unb(Q_(g_mm, "g*mm"))  # noqa: E731
    lines = ["Error budget of the assembly (largest contribution first)"]
    rows = [["contribution", "kind", "amount", "heavy spot", "of tolerance"]]
    for it in b.items:
        rows.append([it.name, it.kind, U(it.amount_g_mm), _deg(it.angle_deg),
                     "" if b.tolerance_g_mm is None else f"{it.amount_g_mm / b.tolerance_g_mm:.0%}"])
    lines += _table(rows)
    lines.append("")
    if b.all_angles_known:
        lines.append(f"  vector sum     {U(b.vector_sum_g_mm)} at {_deg(b.known_angle_deg)} (every angle known)")
    else:
        if b.known_angle_deg is not None:
            lines.append(f"  known angles   {U(b.known_g_mm)} at {_deg(b.known_angle_deg)} (their vector sum)")
        lines += [f"  worst case     {U(b.worst_case_g_mm)} (known vector sum + unknown magnitudes)",
                  f"  estimate (RSS) {U(b.rss_g_mm)} (root-sum-square)"]
    lines.append(f"  all magnitudes {U(b.magnitudes_g_mm)} (the bound if no angle were known)")
    if b.tolerance_g_mm is not None:
        verdict = {"within": "WITHIN the tolerance", "within by estimate": "within by the estimate only",
                   "exceeds": "EXCEEDS the tolerance (exit status 1)"}[b.verdict]
        lines.append(f"  tolerance      {U(b.tolerance_g_mm)} ({tol_note}): {verdict}")
    lines += [f"  rule           {b.rule} [{b.rule_mark}: as recalled, not a clause of a standard]",
              f"  source         {b.source}", ""]
    _warnings(lines, b.warnings)
    lines.append(f"note: {_NOTE}")
    return "\n".join(lines)
