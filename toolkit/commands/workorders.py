"""Subcommands demo, order, batch: work orders from the built-in demo job, a job file or a planner sheet.

Nothing heavy is imported at module level: the library (pint, numpy, openpyxl, reportlab) is imported by
the run functions.
"""

from __future__ import annotations

from toolkit.commands._common import add_force, add_json, emit

FORMATS = ("xlsx", "pdf")


def _order_options(parser, out: str, run) -> None:
    parser.add_argument("--out", default=out, metavar="DIR",
                        help=f"folder for the work-order files (default: ./{out.strip('.')})".replace("./)", ".)"))
    parser.add_argument("--format", default="xlsx,pdf", metavar="LIST",
                        help="which files to write: xlsx, pdf or both (default xlsx,pdf)")
    add_force(parser)
    add_json(parser)
    parser.set_defaults(run=run)


def configure_demo(parser) -> None:
    parser.add_argument("--jobs", metavar="DIR", default=None,
                        help="instead of the demo order, write the invented example job files (and a planner "
                             "sheet) into DIR for you to edit")
    _order_options(parser, "counterpoise-demo", run_demo)


def configure_order(parser) -> None:
    parser.add_argument("job", metavar="JOB.toml",
                        help="the job file (editable examples: counterpoise demo --jobs DIR)")
    _order_options(parser, ".", run_order)


def configure_batch(parser) -> None:
    parser.add_argument("sheet", metavar="SHEET", help="planner sheet, .xlsx or .csv (an example: counterpoise "
                                                       "demo --jobs DIR)")
    parser.add_argument("--out", default=".", metavar="DIR", help="folder for the output files (default: .)")
    add_force(parser)
    add_json(parser)
    parser.set_defaults(run=run_batch)


def _formats(text: str) -> tuple[str, ...]:
    from toolkit.errors import BadInput

    parts = tuple(dict.fromkeys(p.strip().lower() for p in str(text).split(",") if p.strip()))
    bad = [p for p in parts if p not in FORMATS]
    if not parts or bad:
        raise BadInput(f"--format: {text!r} is not allowed; give xlsx, pdf or xlsx,pdf")
    return parts


def write_order_files(order, out: str, formats, force: bool) -> list[str]:
    """Write the chosen files of one work order into ``out``; nothing is written if any target exists
    (without ``force``)."""
    from pathlib import Path

    from toolkit.fileio import check_writable, safe_filename
    from toolkit.workorder import pdf, xlsx

    stem = safe_filename(order.ident.number)
    paths = {fmt: Path(out) / f"{stem}.{fmt}" for fmt in formats}
    for path in paths.values():
        check_writable(path, force)
    data = {}
    if "xlsx" in paths:
        data["xlsx"] = xlsx.to_bytes(order)
    if "pdf" in paths:
        data["pdf"] = pdf.to_bytes(order)
    from toolkit.fileio import write_atomic

    return [str(write_atomic(paths[fmt], data[fmt], force=force)) for fmt in formats]


def summary(order, files: list[str]) -> str:
    """A short text summary of a work order and the files written."""
    from toolkit.workorder.model import Formatter

    fmt = Formatter(order.units, order.angle_reference, order.angle_sense)
    lines = [f"Work order {order.ident.number}: {order.ident.rotor}"]
    lines += [f"  wrote {f}" for f in files]
    lines.append(f"  grade {order.grade}, {fmt.rotor_mass(order.rotor_mass_kg)}, {order.service_speed_rpm:g} r/min: "
                 f"permissible residual {fmt.unbalance(order.u_per_total_g_mm)} for the whole rotor")
    for p in order.planes:
        lines.append(f"  plane {p.name}: allowance {fmt.unbalance(p.tolerance.u_per_g_mm)}; initial "
                     f"{fmt.unbalance(p.initial_g_mm)} at {fmt.where(p.initial_deg)}")
        for op in p.operations:
            lines.append(f"    {op.number}. {op.action} {fmt.mass(op.mass_g)} ({op.kind}) at {fmt.angle(op.angle_deg)}")
        if not p.operations:
            lines.append("    no operation needed")
        lines.append(f"    predicted residual {fmt.unbalance(p.predicted_g_mm)} at {fmt.angle(p.predicted_deg)}: "
                     f"{'PASS' if p.passed else 'FAIL'}")
    for w in order.warnings:
        lines.append(f"  warning: {w}")
    lines.append("Result: " + ("PASS, every plane within its allowance after the operations (predicted)"
                               if order.passed else "FAIL, a plane stays out of tolerance after the operations "
                                                    "(predicted); see the work order"))
    lines.append("Cautions are printed on the work order: secure every mass before a run, lock out the drive "
                 "while drilling or welding; the rotor maker's instructions and local codes take precedence.")
    return "\n".join(lines)


def _finish(args, order, files) -> int:
    data = {"files": files, "passed": order.passed, "order": order.to_dict()}
    emit(args.json, data, summary(order, files))
    return 0 if order.passed else 1


def run_demo(args) -> int:
    from toolkit.workorder.build import demo_order, write_examples

    if args.jobs is not None:
        files = write_examples(args.jobs, force=args.force)
        emit(args.json, {"files": files}, "\n".join(["Example files (invented examples) to edit:"]
                                                     + [f"  wrote {f}" for f in files]
                                                     + [f"Then: counterpoise order {files[0]}"]))
        return 0

    formats = _formats(args.format)
    order = demo_order()
    files = write_order_files(order, args.out, formats, args.force)
    return _finish(args, order, files)


def run_order(args) -> int:
    from toolkit.workorder.build import order_from_file

    formats = _formats(args.format)
    order = order_from_file(args.job)
    files = write_order_files(order, args.out, formats, args.force)
    return _finish(args, order, files)


def run_batch(args) -> int:
    import sys

    from toolkit.workorder.batch import run_batch as batch

    progress = sys.stderr.isatty() and not args.json
    result = batch(args.sheet, args.out, force=args.force, progress=progress)
    lines = [f"Batch {args.sheet}: {result.done} work order(s) written, {len(result.failures)} row(s) failed"]
    lines += [f"  wrote {f}" for f in result.files]
    lines += [f"  row {row}: {reason}" for row, reason in result.failures]
    lines += [f"  out of tolerance (predicted): {n}" for n in result.out_of_tolerance]
    emit(args.json, result.to_dict(), "\n".join(lines))
    return 1 if result.failures or result.out_of_tolerance else 0
