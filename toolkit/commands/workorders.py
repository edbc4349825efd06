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
    _paper_option(parser)
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
    from toolkit.commands.register import add_order_options  # the shop register's options

    add_order_options(parser)


def configure_batch(parser) -> None:
    parser.add_argument("sheet", metavar="SHEET", help="planner sheet, .xlsx or .csv (an example: counterpoise "
                                                       "demo --jobs DIR)")
    parser.add_argument("--out", default=".", metavar="DIR", help="folder for the output files (default: .)")
    parser.add_argument("--carry-on", action="store_true",
                        help="continue an interrupted batch in the same folder: keep the orders already "
                             "written from unchanged rows, write the others, then the summary and combined "
                             "PDF over all of them (with --record, a row the earlier run recorded keeps its "
                             "number and is not recorded again)")
    parser.add_argument("--order-workbooks", action="store_true",
                        help="also write each rotor's work-order workbook (<order>.xlsx) beside its PDF")
    _paper_option(parser)
    add_force(parser)
    add_json(parser)
    group = parser.add_argument_group("register")
    group.add_argument("--record", action="store_true",
                       help="record each rotor's job in the register; the register allocates the order numbers "
                            "(a row's rotor_type column starts it from a stored rotor type, its serial column "
                            "gives the serial number)")
    from toolkit.commands.register import _where

    _where(group)
    parser.set_defaults(run=run_batch)


def _paper_option(parser) -> None:
    parser.add_argument("--paper", metavar="SIZE", help="A4 or Letter (default: the job's [shop] paper, else "
                                                         "Letter for imperial units and A4 for metric)")


def _paper_name(args) -> str | None:
    from toolkit.errors import BadInput

    if args.paper is None:
        return None
    paper = {"a4": "A4", "letter": "Letter"}.get(str(args.paper).strip().lower())
    if paper is None:
        raise BadInput(f"--paper: {args.paper!r} is not allowed; give A4 or Letter")
    return paper


def _paper(order, args):
    """The order on the paper given by --paper (unchanged without it)."""
    from toolkit.workorder.model import with_paper

    paper = _paper_name(args)
    return order if paper is None else with_paper(order, paper, "command line")


def _formats(text: str) -> tuple[str, ...]:
    from toolkit.errors import BadInput

    parts = tuple(dict.fromkeys(p.strip().lower() for p in str(text).split(",") if p.strip()))
    bad = [p for p in parts if p not in FORMATS]
    if not parts or bad:
        raise BadInput(f"--format: {text!r} is not allowed; give xlsx, pdf or xlsx,pdf")
    return parts


def out_folder(text) -> "Path":
    """The ``--out`` folder, refused in one line when it is something else (a file, a device, a dangling or
    looping link, a name that is too long)."""
    from pathlib import Path

    from toolkit.errors import OutputError
    from toolkit.fileio import describe

    try:
        kind = describe(text)
    except OutputError as exc:
        raise OutputError(f"--out {text}: {str(exc).split(': ', 1)[-1]}") from None
    if kind is not None:
        raise OutputError(f"--out {text} is {kind}; give a folder (it is created if missing)")
    return Path(text)


def write_order_files(order, out: str, formats, force: bool) -> list[str]:
    """Write the chosen files of one work order into ``out`` (:func:`toolkit.export.files.write_order`),
    with ``--out`` named when the folder is something else."""
    from toolkit.export.files import write_order

    return write_order(order, out_folder(out), formats, force=force)


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
    order = _paper(demo_order(), args)
    files = write_order_files(order, args.out, formats, args.force)
    return _finish(args, order, files)


def run_order(args) -> int:
    from toolkit.commands.register import order_for, record_files

    formats = _formats(args.format)
    order = _paper(order_for(args), args)  # the job file alone, or recorded in / composed from the shop register
    files = write_order_files(order, args.out, formats, args.force)
    record_files(args, order, files)
    return _finish(args, order, files)


class Progress:
    """A one-line progress bar on stderr for a batch (only on an interactive terminal): called by the
    library with the rows done, the rows expected (None when unknown), the rows failed and whether it is
    the last call."""

    def __init__(self):
        self.last = 0.0

    def __call__(self, done: int, total: int | None, failed: int, final: bool = False) -> None:
        import sys
        import time

        now = time.monotonic()
        if not final and now - self.last < 0.1:
            return
        self.last = now
        if total:
            width = 30
            filled = int(width * min(done, total) / total)
            text = f"\r[{'#' * filled + '.' * (width - filled)}] {done}/{total} rows, {failed} failed"
        else:
            text = f"\r{done} rows, {failed} failed"
        sys.stderr.write(text + ("\n" if final else ""))
        sys.stderr.flush()


class _BatchRegister:
    """The shop register as a batch uses it: stored rotor types for the sheet's ``rotor_type`` column, and
    with ``--record`` each rotor's job recorded (the register numbers it) together with its files. Opened
    on first use only.

    A row's number is reserved first, in a transaction of its own; the job, its planes, status and files
    are then recorded in one transaction around the writing of its files, so a row whose files fail (or
    that the register refuses) leaves nothing recorded, only a gap in the numbers. With ``--carry-on`` a
    row that an earlier run of the batch recorded (the same job text, its files written into this folder)
    keeps its number and is not recorded again."""

    def __init__(self, args, out):
        self.args, self.out = args, out
        self.reg = None
        self.versions: dict[str, int] = {}
        self.recorded: list[dict] = []
        self.taken: set[str] = set()  # numbers of earlier runs given to a row of this one

    def _open(self):
        if self.reg is None:
            from toolkit.register import open_register

            self.reg = open_register(self.args.register)
        return self.reg

    def template_for(self, name: str) -> dict:
        from toolkit.register import records as R

        t = R.template(self._open(), name)
        self.versions[name] = t["version_id"]
        return R._loads(t["template"], f"rotor type {t['type']} version {t['version']}")

    def prepare(self, row, make):
        from pathlib import Path

        from toolkit.register import records as R

        reg = self._open()
        text = R.toml_text(row.data, f"job of {row.origin} (planner sheet row)")
        digest = R.sha256_text(text)
        note = {"row": row.number, "sheet_order": row.cells.get("order", "")}
        earlier = [n for n in R.recorded_in_folder(reg, digest, self.out) if n not in self.taken] \
            if self.args.carry_on else []
        if earlier:  # recorded by an earlier run of this batch: the same order again, kept or written anew
            self.taken.add(earlier[0])
            made = make(R._replaced(row.order, ident=R._replaced(row.order.ident, number=earlier[0],
                                                                 input_sha256=digest)))
            self.recorded.append({**note, "order_number": earlier[0], "earlier": True})
            return made
        number = R.reserve_number(reg)
        built = R._replaced(row.order, ident=R._replaced(row.order.ident, number=number))
        type_name = row.cells.get("rotor_type", "")
        made = []

        def files(order):
            made.append(make(order))
            return [made[0][1][fmt] for fmt in made[0][1]]

        try:
            R.store_order(reg, built, text, dict(row.job.order), allocate=False, files=files,
                          type_version_id=self.versions.get(type_name) if type_name else None)
        except BaseException:
            for path in made[0][4] if made else ():  # written for a job that was then not recorded
                Path(path).unlink(missing_ok=True)
            raise
        self.recorded.append({**note, "order_number": number, "earlier": False})
        return made[0]

    def close(self) -> None:
        if self.reg is not None:
            self.reg.close()


def run_batch(args) -> int:
    import sys

    from pathlib import Path

    from toolkit.errors import BadInput, OutputError
    from toolkit.export.files import write_batch

    if Path(args.sheet).is_dir():
        raise BadInput(f"{args.sheet} is a folder; give a planner sheet (.xlsx or .csv file)")
    out = out_folder(args.out)
    progress = Progress() if sys.stderr.isatty() and not args.json else None
    register = _BatchRegister(args, out)
    formats = ("pdf", "xlsx") if args.order_workbooks else ("pdf",)
    try:
        result = write_batch(args.sheet, out, force=args.force, progress=progress, carry_on=args.carry_on,
                             paper=_paper_name(args), formats=formats, template_for=register.template_for,
                             prepare=register.prepare if args.record else None)
    except OutputError as exc:
        if not args.carry_on and "already exists" in str(exc) and any(out.glob("*-batch.json")):
            from toolkit.commands._common import error_text

            raise OutputError(f"{error_text(exc, args)}, or --carry-on to continue the batch it records") from None
        raise
    finally:
        register.close()
    kept = f", {len(result.kept)} kept from the earlier run" if result.kept else ""
    lines = [f"Batch {args.sheet}: {result.done - len(result.kept)} work order(s) written{kept}, "
             f"{len(result.failures)} row(s) failed"]
    lines += [f"  wrote {f}" for f in result.files]
    lines += [f"  kept {f} (already written from the same row)" for f in result.kept]
    lines += [f"  row {row}: {reason}" for row, reason in result.failures]
    lines += [f"  out of tolerance (predicted): {n}" for n in result.out_of_tolerance]
    data = result.to_dict()
    if args.record:
        data["recorded"] = register.recorded
        data["not_recorded"] = [row for row, _reason in result.failures]
        lines += [f"  recorded row {r['row']} ({r['sheet_order']}) as {r['order_number']}"
                  + (" by the earlier run" if r["earlier"] else "") for r in register.recorded]
        if result.failures:
            lines.append("  not recorded (failed): row" + "s" * (len(result.failures) > 1) + " "
                         + ", ".join(str(row) for row, _reason in result.failures))
    emit(args.json, data, "\n".join(lines))
    return 1 if result.failures or result.out_of_tolerance else 0
