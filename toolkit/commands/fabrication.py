"""Subcommands drill, plate, washers, materials: turn a correction into holes, a weld-on plate or a washer
stack quantised to the shop's tools and stock, and list the materials with their sources.

Heavy imports (numpy, pint) happen inside the run functions so ``--help`` stays fast.
"""

from __future__ import annotations

from toolkit.commands._common import add_json, add_units, emit, emit_result

_LIMIT_HELP = "common practice, overridable"


def _add_correction(parser, default_action: str) -> None:
    parser.add_argument("--unbalance", required=True, metavar="AMOUNT",
                        help="the correction: an unbalance ('2400 g*mm', '3.3 oz*in') or a mass with --radius "
                             "('38 g'); AMOUNT@ANGLE ('2400 g*mm@131') also sets the angle")
    parser.add_argument("--radius", required=True, metavar="LENGTH",
                        help="radius of the correction ('150 mm', '6 in')")
    parser.add_argument("--angle", default=None, metavar="DEG",
                        help="angle of the correction from the reference mark, degrees (default 0)")
    parser.add_argument("--action", choices=("add", "remove"), default=default_action,
                        help=f"how the correction is stated: add mass at the angle, or remove it there (heavy "
                             f"spot); default {default_action}")
    parser.add_argument("--material", metavar="NAME", help="material name or grade (see 'counterpoise materials')")
    parser.add_argument("--density", metavar="DENSITY", help="density instead of a material ('7850 kg/m^3')")
    parser.add_argument("--materials", metavar="FILE", default="materials",
                        help="a shop's materials CSV with the built-in columns")
    parser.add_argument("--allowance", metavar="AMOUNT",
                        help="allowed residual of this correction ('50 g*mm'): any rounded result within it is "
                             "taken (even the smallest plate, hole or washer when the request is smaller); "
                             "exit 1 when the nearest result misses it")
    add_units(parser)
    add_json(parser)


def _split(args):
    text = args.unbalance
    angle = args.angle
    if "@" in text:
        from toolkit.vectors import parse_angle

        text, _, ang = text.partition("@")
        if angle is not None:
            from toolkit.errors import BadInput

            raise BadInput("--angle: give the angle either in --unbalance AMOUNT@ANGLE or with --angle, not both")
        angle = parse_angle(ang, "--unbalance angle")
    return text.strip(), (0.0 if angle is None else angle)


def _number(text: str, name: str, kind=float):
    from toolkit.errors import BadInput

    try:
        value = kind(text)
    except (TypeError, ValueError):
        raise BadInput(f"{name}: {text!r} is not a {'whole ' if kind is int else ''}number") from None
    return value


# -- drill -----------------------------------------------------------------------------------------------

def configure_drill(parser) -> None:
    parser.epilog = ("example: counterpoise drill --unbalance '2400 g*mm@131' --radius '150 mm' --radial "
                     "--material steel")
    _add_correction(parser, "remove")
    way = parser.add_mutually_exclusive_group(required=True)
    way.add_argument("--axial", dest="orientation", action="store_const", const="axial",
                     help="holes parallel to the axis, in a face, centred on --radius")
    way.add_argument("--radial", dest="orientation", action="store_const", const="radial",
                     help="holes towards the axis, into a cylinder of radius --radius")
    parser.add_argument("--diameter", metavar="LENGTH", help="drill to use; default: chosen from the drill set")
    parser.add_argument("--drills", default=None, metavar="SET",
                        help="drill set: metric, inch (full ladders), metric-basic, inch-basic (short sets), a "
                             "shop's CSV (columns size, diameter, unit, source) or the shop's drills as a list "
                             "('6 mm,8 mm,No. 7,1/4 in'); default: inch with inch --units, otherwise metric")
    parser.add_argument("--point-angle", default="118", metavar="DEG",
                        help="included point angle, degrees (118 general, 135 hard material, 180 flat bottom)")
    parser.add_argument("--max-depth", metavar="LENGTH", help="deepest tip allowed (for example the part's room)")
    parser.add_argument("--wall", metavar="LENGTH",
                        help="material thickness along the hole from first contact, to keep the wall under the tip")
    parser.add_argument("--positions", metavar="DEG,DEG,...",
                        help="fixed hole positions (a drilled pattern) to split the correction onto")
    parser.add_argument("--warn-depth-ratio", default="3", metavar="X", help=f"warn beyond X·d tip depth (3; {_LIMIT_HELP})")
    parser.add_argument("--max-depth-ratio", default="5", metavar="X", help=f"refuse beyond X·d tip depth (5; {_LIMIT_HELP})")
    parser.add_argument("--min-wall", default="2 mm", metavar="LENGTH",
                        help=f"least wall under the tip, with --wall-ratio·d (2 mm; {_LIMIT_HELP})")
    parser.add_argument("--wall-ratio", default="0.5", metavar="X", help=f"least wall under the tip as X·d (0.5; {_LIMIT_HELP})")
    parser.add_argument("--spacing-ratio", default="2", metavar="X", help=f"hole centres at least X·d apart (2; {_LIMIT_HELP})")
    parser.add_argument("--depth-step", default="0.1 mm", metavar="LENGTH", help=f"depth rounding (0.1 mm; {_LIMIT_HELP})")
    parser.add_argument("--max-holes", default="7", metavar="N", help=f"most holes in a pattern (7; {_LIMIT_HELP})")
    parser.set_defaults(run=run_drill)


def _drill_set(args):
    """The drill set asked for (a set name, a CSV path or a comma-separated list of sizes), or the one of
    the unit system (an inch shop drills with inch drills)."""
    from toolkit.errors import BadInput
    from toolkit.units import unit_system

    if args.drills is not None:
        if "," not in args.drills:
            return args.drills
        from toolkit.fabricate.stock import drill_list

        try:
            return drill_list([x.strip() for x in args.drills.split(",")], "--drills")
        except BadInput as exc:
            raise BadInput(str(exc).replace("--drills[", "--drills item [")) from None
    return "inch" if unit_system(getattr(args, "units", "metric")).inch else "metric"


def run_drill(args) -> int:
    return emit_result(args, result_drill(args))


def result_drill(args) -> tuple[int, dict, str | None]:
    """What ``drill`` computes, worded: (exit status, the ``--json`` object, the text or None with ``--json``)."""
    from toolkit.fabricate.drilling import Limits
    from toolkit.fabricate.plan import plan_correction
    from toolkit.units import magnitude
    from toolkit.vectors import parse_angle

    amount, angle = _split(args)
    limits = Limits(
        warn_depth_ratio=_number(args.warn_depth_ratio, "--warn-depth-ratio"),
        max_depth_ratio=_number(args.max_depth_ratio, "--max-depth-ratio"),
        max_depth_mm=None if args.max_depth is None else magnitude(args.max_depth, "length", "mm", "--max-depth",
                                                                   positive=True),
        min_wall_mm=magnitude(args.min_wall, "length", "mm", "--min-wall", nonnegative=True),
        min_wall_ratio=_number(args.wall_ratio, "--wall-ratio"),
        spacing_ratio=_number(args.spacing_ratio, "--spacing-ratio"),
        depth_step_mm=magnitude(args.depth_step, "length", "mm", "--depth-step", positive=True),
        max_holes=_number(args.max_holes, "--max-holes", int),
    )
    positions = None
    if args.positions:
        positions = [parse_angle(p, "--positions") for p in args.positions.split(",") if p.strip()]
    plan = plan_correction(amount, angle, "drill", radius=args.radius, material=args.material,
                           density=args.density, action=args.action, allowance=args.allowance,
                           orientation=args.orientation, diameter=args.diameter, drills=_drill_set(args),
                           point_angle_deg=_number(args.point_angle, "--point-angle"), limits=limits,
                           wall=args.wall, fixed_positions=positions, materials_table=args.materials,
                           units=args.units)
    r = plan.detail
    data = r.to_dict() | _plan_keys(plan)
    lines = [f"Drill: {r.placement(lambda x: _unb(x, args))}",
             f"  drill          {r.drill}, {r.point_angle_deg:g}° point, {r.orientation} holes on "
             f"{_length(r.radius_mm, args)} {'pitch' if r.orientation == 'axial' else 'surface'} radius"]
    lines += [f"  {op.description}" for op in plan.operations]
    if r.pattern():
        lines.append(f"  pattern        {r.pattern(lambda x: _length(x, args))}")
    if r.wall_note():
        lines.append(f"  wall           {r.wall_note()}")
    lines += [f"  removed mass   {_mass(r.removed_mass_g, args)}",
              *_achieved(plan, args),
              f"  material       {r.material or 'as given'}, {r.density_kg_m3:g} kg/m³ ({r.density_source})",
              f"  limits used    tip warn {r.limits.warn_depth_ratio:g}·d, refuse {r.limits.max_depth_ratio:g}·d"
              + (f" or {_length(r.limits.max_depth_mm, args)}" if r.limits.max_depth_mm else "")
              + f"; wall under tip ≥ max({_length(r.limits.min_wall_mm, args)}, {r.limits.min_wall_ratio:g}·d); "
              f"spacing {r.limits.spacing_ratio:g}·d; depth step {_length(r.limits.depth_step_mm, args)} "
              f"[{_LIMIT_HELP}]",
              "  depths are to the shoulder (full diameter) from first contact; the tip lies deeper"]
    return 1 if plan.within_allowance is False else 0, data, _finish(lines, plan)


# -- plate -----------------------------------------------------------------------------------------------

def configure_plate(parser) -> None:
    parser.epilog = ("example: counterpoise plate --unbalance '38 g@307' --radius '620 mm' --width '40 mm' "
                     "--material steel --shape rolled")
    _add_correction(parser, "add")
    parser.add_argument("--width", required=True, metavar="LENGTH",
                        help="plate width across the seat (axial on a cylinder, radial on a face)")
    parser.add_argument("--thickness", metavar="LENGTH", help="plate thickness; default: chosen from stock")
    parser.add_argument("--shape", choices=("flat", "rolled", "face"), default="flat",
                        help="flat plate on a cylinder, plate rolled to the radius, or flat on a radial face")
    parser.add_argument("--surface", choices=("outer", "inner"), default="outer",
                        help="outer surface or inside a bore (rolled plates only)")
    parser.add_argument("--step", default="1 mm", metavar="LENGTH", help="rounding of width and length (1 mm)")
    parser.add_argument("--fillet", metavar="LENGTH",
                        help="fillet leg (default: AWS D1.1 minimum for the plate thickness)")
    parser.add_argument("--convexity", default=None, metavar="X",
                        help="weld convexity allowance as a fraction (default 0.2, from memory: 0.1 to 0.3)")
    parser.add_argument("--weld", choices=("all-round", "ends", "sides"), default="all-round",
                        help="which edges are welded (default all-round)")
    parser.add_argument("--stock", default="plate_stock", metavar="FILE",
                        help="plate stock CSV (columns thickness, unit, label, source)")
    parser.add_argument("--stock-unit", choices=("mm", "in"), default="mm", help="metric or inch stock (mm)")
    parser.add_argument("--max-length", metavar="LENGTH", help="room along the seat; longer plates are refused or split")
    parser.add_argument("--ce", metavar="X",
                        help="the rotor's IIW carbon equivalent, if known (e.g. 0.42): adds preheat guidance")
    parser.add_argument("--seat-offset", metavar="DEG",
                        help="when one seat is too short, split onto two seats at angle ± DEG")
    parser.set_defaults(run=run_plate)


def run_plate(args) -> int:
    return emit_result(args, result_plate(args))


def result_plate(args) -> tuple[int, dict, str | None]:
    """What ``plate`` computes, worded: (exit status, the ``--json`` object, the text or None with ``--json``)."""
    from toolkit.fabricate.plan import plan_correction

    amount, angle = _split(args)
    plan = plan_correction(amount, angle, "plate", radius=args.radius, material=args.material,
                           density=args.density, action=args.action, allowance=args.allowance, shape=args.shape,
                           surface=args.surface, width=args.width, thickness=args.thickness, step=args.step,
                           stock=args.stock, stock_unit=args.stock_unit, max_length=args.max_length,
                           seat_offset_deg=None if args.seat_offset is None else _number(args.seat_offset, "--seat-offset"),
                           fillet=args.fillet, weld_run=args.weld,
                           ce=None if args.ce is None else _number(args.ce, "--ce"),
                           convexity=None if args.convexity is None else _number(args.convexity, "--convexity"),
                           materials_table=args.materials, units=args.units)
    p = plan.detail
    data = p.to_dict() | _plan_keys(plan)
    lines = [f"Weld-on plate: {p.placement(lambda x: _unb(x, args))}"]
    lines += [f"  {op.description}" for op in plan.operations]
    lines += [f"  plate mass     {_mass(p.mass_g, args)} each; weld metal about {_mass(p.weld_mass_g, args)} "
              f"({p.weld_run}, {_length(p.fillet_mm, args)} fillet: {p.fillet_source}; convexity {p.convexity:g}: "
              f"{p.convexity_source})",
              f"  centroid       {_length(p.centroid_radius_mm, args)} from the axis (plate alone)",
              *_achieved(plan, args),
              f"  material       {p.material or 'as given'}, {p.density_kg_m3:g} kg/m³ ({p.density_source})"]
    return 1 if plan.within_allowance is False else 0, data, _finish(lines, plan)


# -- washers ---------------------------------------------------------------------------------------------

def configure_washers(parser) -> None:
    parser.epilog = "example: counterpoise washers --unbalance '2400 g*mm@131' --radius '150 mm' --size M10"
    _add_correction(parser, "add")
    parser.add_argument("--size", metavar="SIZE", help="washer size to use (M10, 1/2); default: chosen")
    parser.add_argument("--series", metavar="SERIES",
                        help="washer series: 'ISO 7089' (default for metric units, also with --size alone), "
                             "'ISO 7093', 'inch SAE' (default for --units imperial or inch-gram; an inch "
                             "--size alone takes it, and the output says so)")
    parser.add_argument("--radial", action="store_true",
                        help="the bolt is radial (the stack grows away from its seat at --radius)")
    parser.add_argument("--surface", choices=("outer", "inner"), default="outer",
                        help="radial stack grows outward (outer) or towards the axis (inner)")
    parser.add_argument("--max-count", default="6", metavar="N", help="most washers on one bolt (6; common practice)")
    parser.add_argument("--washers", default="washers", metavar="FILE",
                        help="washer table CSV (columns size, series, d1, d2, h, unit, source)")
    parser.set_defaults(run=run_washers)


def run_washers(args) -> int:
    return emit_result(args, result_washers(args))


def result_washers(args) -> tuple[int, dict, str | None]:
    """What ``washers`` computes, worded: (exit status, the ``--json`` object, the text or None with ``--json``)."""
    from toolkit.fabricate.plan import plan_correction

    amount, angle = _split(args)
    plan = plan_correction(amount, angle, "washers", radius=args.radius, material=args.material,
                           density=args.density, action=args.action, allowance=args.allowance,
                           orientation="radial" if args.radial else "axial", surface=args.surface,
                           size=args.size, series=args.series, washer_table=args.washers,
                           max_count=_number(args.max_count, "--max-count", int), materials_table=args.materials,
                           units=args.units)
    s = plan.detail
    data = s.to_dict() | _plan_keys(plan)
    lines = [f"Washers: {s.placement(lambda x: _unb(x, args))}"]
    lines += [f"  {op.description}" for op in plan.operations]
    lines += [f"  one washer     {_length(s.d1_mm, args)} × {_length(s.d2_mm, args)} × {_length(s.h_mm, args)}, "
              f"{_mass(s.unit_mass_g, args)} "
              f"({s.washer_source}; {s.density_source})",
              f"  stack          {_length(s.stack_height_mm, args)} high, centroid {_length(s.centroid_radius_mm, args)} "
              "from the axis",
              *_achieved(plan, args)]
    return 1 if plan.within_allowance is False else 0, data, _finish(lines, plan)


# -- materials -------------------------------------------------------------------------------------------

def configure_materials(parser) -> None:
    parser.epilog = "example: counterpoise materials --json"
    parser.add_argument("--materials", metavar="FILE", default="materials",
                        help="a shop's materials CSV instead of the built-in table")
    add_json(parser)
    parser.set_defaults(run=run_materials)


def run_materials(args) -> int:
    from toolkit.fabricate.materials import materials

    rows = materials(args.materials)
    data = {"materials": [m.to_dict() for m in rows]}
    width = max(len(m.name) for m in rows)
    lines = [f"{'material':<{width}}  density kg/m³  weldable  source"]
    for m in rows:
        lines.append(f"{m.name:<{width}}  {m.density_kg_m3:>13g}  {'yes' if m.weldable else 'no':<8}  {m.source}")
        if m.aliases:
            lines.append(f"{'':<{width}}    also: {', '.join(m.aliases)}")
    lines.append("weldable is common practice only: the welding procedure and the rotor maker decide.")
    emit(args.json, data, "\n".join(lines))
    return 0


# -- shared text -----------------------------------------------------------------------------------------

def _plan_keys(plan) -> dict:
    return {"operations": [op.to_dict() for op in plan.operations], "achieved_angle_deg": plan.achieved_angle_deg,
            "achieved_g_mm": plan.achieved_g_mm, "error_g_mm": plan.error_g_mm,
            "allowance_g_mm": plan.allowance_g_mm, "within_allowance": plan.within_allowance,
            "tried": list(plan.tried), "warnings": list(plan.warnings)}


def _say(args):
    from toolkit.formatting import Formatter

    return Formatter(args.units)


def _unb(x: float, args) -> str:
    return _say(args).unbalance(x)


def _length(x: float, args) -> str:
    return _say(args).dimension(x)


def _mass(x: float, args) -> str:
    return _say(args).mass(x, sig=4)


def _achieved(plan, args) -> list[str]:
    out = [f"  achieved       {plan.action} {_unb(plan.achieved_g_mm, args)} at {plan.achieved_angle_deg:.1f}° "
           f"(requested {_unb(plan.requested_g_mm, args)} at {plan.requested_angle_deg:g}°; residual of this "
           f"correction {_unb(plan.error_g_mm, args)})"]
    if plan.allowance_g_mm is not None:
        out.append(f"  allowance      {_unb(plan.allowance_g_mm, args)}: "
                   f"{'within' if plan.within_allowance else 'NOT within'}")
    out.append("  angles in degrees from the rotor's reference mark, in the sense the correction was given")
    return out


def _finish(lines: list[str], plan) -> str:
    lines = list(lines)
    for w in plan.warnings:
        lines.append(f"  warning: {w}")
    lines.append("Cautions:")
    lines += [f"  - {c}" for c in plan.cautions]
    return "\n".join(lines)
