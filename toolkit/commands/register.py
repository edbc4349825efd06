"""Subcommand group ``register``: the shop register of rotor types, jobs, check runs, sign-offs,
coefficients, certificates and statistics (toolkit.register), and the ``order`` options that record into it.

Nothing heavy is imported at module level (SQLAlchemy, the library and the exporters are imported by the
run functions).
"""

from __future__ import annotations

from toolkit.commands._common import add_force, add_json, emit

__all__ = ["configure_register", "add_order_options", "order_for", "record_files"]


def _where(parser) -> None:
    parser.add_argument("--register", metavar="URL_OR_PATH", default=None,
                        help="the register: a file path, sqlite:///PATH or postgresql://USER@HOST/DB (default: "
                             "$COUNTERPOISE_REGISTER, else register.sqlite3 in the user's data folder)")


def _by(parser) -> None:
    parser.add_argument("--by", default="", metavar="NAME", help="who records this (kept with the entry)")


def _sub(sub, name: str, help_text: str, run):
    parser = sub.add_parser(name, help=help_text, description=help_text[:1].upper() + help_text[1:] + ".")
    _where(parser)
    add_json(parser)
    parser.set_defaults(run=run, command_parser=parser)  # its options word the register's errors
    return parser


def configure_register(parser) -> None:
    sub = parser.add_subparsers(dest="register_command", metavar="SUBCOMMAND", parser_class=type(parser))
    sub.required = True
    p = _sub(sub, "init", "create the register (or open it) and set the shop's settings", run_init)
    p.add_argument("--pattern", metavar="PATTERN", help="order-number pattern with {seq} and optionally {year}, "
                                                        "{month} (default WO-{year}-{seq:05d})")
    p.add_argument("--stale-days", metavar="DAYS", help="stored coefficients older than this are flagged "
                                                        "(default 180 days)")
    _sub(sub, "types", "list the stored rotor types", run_types)
    p = _sub(sub, "type-save", "store a rotor type from a job file or from options; a second save is a new "
                               "version (options alone change the type's newest version)", run_type_save)
    p.add_argument("name", metavar="TYPE")
    p.add_argument("job", metavar="JOB.toml", nargs="?", help="a job file; its order number and measurement "
                                                              "may be left out (options are laid over it)")
    for flag, (_path, example) in TYPE_OPTIONS.items():
        p.add_argument(flag, metavar="VALUE", help=f"[{'.'.join(_path)}], e.g. {example!r}")
    p.add_argument("--plane", action="append", default=[], dest="planes", metavar="'NAME: KEY=VALUE; ...'",
                   help="add a plane, or change the keys of the plane of that name, e.g. 'hub: position=260 mm; "
                        "radius=180 mm; surface=outer; methods=drill' (repeat per plane; KEY= alone removes a key)")
    p.add_argument("--drop-plane", action="append", default=[], metavar="NAME", help="remove a plane")
    p.add_argument("--set", action="append", default=[], dest="sets", metavar="TABLE.KEY=VALUE",
                   help="any other key of a job file, e.g. shop.mass_step=0.1 g or shop.drilling.min_wall_mm=2 "
                        "(a TOML value, else text; TABLE.KEY= alone removes it)")
    p.add_argument("--note", default="", help="what this version changes")
    _by(p)
    p = _sub(sub, "type-show", "a rotor type's versions, template and coefficient sets", run_type_show)
    p.add_argument("name", metavar="TYPE")
    p.add_argument("--version", type=int, default=None, metavar="N", help="the template of version N")
    p = _sub(sub, "jobs", "list recorded jobs (newest first)", run_jobs)
    _selection(p)
    p.add_argument("--limit", type=int, default=200, metavar="N", help="at most N jobs (default 200)")
    p = _sub(sub, "show", "everything recorded about one job", run_show)
    p.add_argument("order", metavar="ORDER")
    p = _sub(sub, "record", "record check-run readings, sign-offs, a status, or a returned work-order workbook",
             run_record)
    p.add_argument("order", metavar="ORDER", nargs="?", help="the order number (optional with --workbook)")
    p.add_argument("--workbook", metavar="FILE.xlsx", help="read the returned work-order workbook")
    p.add_argument("--residual", action="append", default=[], metavar="PLANE=AMOUNT[@ANGLE]",
                   help="measured residual of a plane, e.g. A=850 g*mm@120 or A=2.8 g (repeat per plane)")
    p.add_argument("--vibration", action="append", default=[], metavar="SENSOR=READING",
                   help="measured vibration at a sensor, e.g. 'drive end=0.8 mm/s@40'")
    p.add_argument("--sign", action="append", default=[], metavar="ROLE=NAME",
                   help="sign-off: operator, machinist or inspector, e.g. inspector=A. Person")
    p.add_argument("--status", metavar="STATUS", help="move the job to planned, balanced, checked, released or "
                                                      "rework (where allowed)")
    p.add_argument("--note", default="", help="a note kept with the status change")
    _by(p)
    p = _sub(sub, "certificate", "the balance certificate (PDF) of a released job", run_certificate)
    p.add_argument("order", metavar="ORDER")
    p.add_argument("--out", default=".", metavar="DIR", help="folder for the certificate (default: .)")
    add_force(p)
    p = _sub(sub, "stats", "series statistics for a rotor type or a date range (PDF, xlsx)", run_stats)
    _selection(p)
    p.add_argument("--out", default=None, metavar="DIR", help="write the statistics as PDF and xlsx into DIR")
    p.add_argument("--format", default="pdf,xlsx", metavar="LIST", help="pdf, xlsx or both (default pdf,xlsx)")
    add_force(p)
    p = _sub(sub, "export", "write the whole register to a portable file (JSON lines)", run_export)
    p.add_argument("file", metavar="FILE.jsonl")
    add_force(p)
    p = _sub(sub, "import", "read a portable file into an empty register", run_import)
    p.add_argument("file", metavar="FILE.jsonl")
    p = _sub(sub, "coeffs", "influence coefficients of a rotor type: list them, or store a set", run_coeffs)
    p.add_argument("name", metavar="TYPE")
    p.add_argument("--save", metavar="FILE.json", help="store a coefficients file (from solve --save)")
    p.add_argument("--job", action="append", default=[], metavar="ORDER",
                   help="a job the coefficients were measured on (provenance; repeat)")
    p.add_argument("--note", default="", help="provenance note (mounting, sensors, trial radius)")
    _by(p)
    p = _sub(sub, "trim", "update a rotor type's newest coefficients from a trim run (a new set)", run_trim)
    p.add_argument("name", metavar="TYPE")
    p.add_argument("--before", action="append", default=[], metavar="READING",
                   help="reading per sensor before the trim correction, e.g. 2.1 mm/s@285")
    p.add_argument("--installed", action="append", default=[], metavar="PLANE=MASS@ANGLE",
                   help="mass installed in a plane, e.g. near=6 g@255")
    p.add_argument("--after", action="append", default=[], metavar="READING", help="reading per sensor after it")
    p.add_argument("--job", default="", metavar="ORDER", help="the job of the trim run (provenance)")
    _by(p)
    p = _sub(sub, "balance", "one-run balancing: a new rotor of a stored type from its original readings and "
                             "the type's stored coefficients; records the job and writes its work order",
             run_balance)
    p.add_argument("name", metavar="TYPE")
    p.add_argument("--serial", required=True, metavar="SN", help="the rotor's serial number")
    p.add_argument("--original", action="append", default=[], metavar="READING",
                   help="the original reading per sensor, in the sensors' order, e.g. 2.1 mm/s@285")
    p.add_argument("--customer", default=None, help="customer (default: the type's)")
    p.add_argument("--out", default=".", metavar="DIR", help="folder for the work-order files (default: .)")
    p.add_argument("--format", default="xlsx,pdf", metavar="LIST", help="xlsx, pdf or both (default xlsx,pdf)")
    add_force(p)
    _by(p)


def _selection(p) -> None:
    p.add_argument("--type", dest="type_name", metavar="TYPE", help="only jobs of this rotor type")
    p.add_argument("--status", metavar="STATUS", help="only jobs with this status")
    p.add_argument("--since", metavar="YYYY-MM-DD", help="only jobs recorded on or after this day (UTC)")
    p.add_argument("--until", metavar="YYYY-MM-DD", help="only jobs recorded on or before this day (UTC)")


def _open(args):
    from toolkit.register import open_register

    return open_register(args.register)


def _pairs(items, option: str, example: str) -> dict[str, str]:
    from toolkit.errors import BadInput

    out = {}
    for item in items:
        name, sep, value = str(item).partition("=")
        if not sep or not name.strip() or not value.strip():
            raise BadInput(f"{option}: {item!r} is not NAME=VALUE, e.g. {example!r}")
        if name.strip() in out:
            raise BadInput(f"{option}: {name.strip()!r} is given twice")
        out[name.strip()] = value.strip()
    return out


def run_init(args) -> int:
    from toolkit.errors import BadInput
    from toolkit.register.store import DEFAULT_PATTERN, DEFAULT_STALE_DAYS, check_pattern

    with _open(args) as reg:
        if args.pattern is not None:
            reg.set_setting("order_pattern", check_pattern(args.pattern))
        if args.stale_days is not None:
            try:
                days = float(args.stale_days)
            except ValueError:
                days = float("nan")
            if not (0 < days < 100_000):
                raise BadInput(f"--stale-days: {args.stale_days!r} is not a number of days between 0 and 100000")
            reg.set_setting("stale_days", f"{days:g}")
        settings = {"order_pattern": DEFAULT_PATTERN, "stale_days": f"{DEFAULT_STALE_DAYS:g}", **reg.settings()}
        data = {"register": reg.where, "database": reg.dialect, "schema_version": reg.version(), "settings": settings}
    text = "\n".join([f"Register {data['register']} ({data['database']}), schema version {data['schema_version']}",
                      f"  order numbers: {settings['order_pattern']}",
                      f"  stored coefficients flagged stale after {settings['stale_days']} days"])
    emit(args.json, data, text)
    return 0


def run_types(args) -> int:
    from toolkit.register import records as R

    with _open(args) as reg:
        types = R.list_types(reg)
    lines = [f"{len(types)} rotor type(s)"] + [f"  {t['type']}: version {t['versions']}, {t['jobs']} job(s)"
                                              for t in types]
    emit(args.json, {"types": types}, "\n".join(lines))
    return 0


#: type-save options for the keys of a job file: flag -> (key path, example).
TYPE_OPTIONS = {
    "--description": (("order", "rotor"), "Supply fan rotor, two planes"),
    "--customer": (("order", "customer"), "Example Air Handling Ltd"),
    "--drawing": (("order", "drawing"), "EX-2201 rev B"),
    "--mass": (("rotor", "mass"), "285 kg"),
    "--service-speed": (("rotor", "service_speed"), "1780 rpm"),
    "--balancing-speed": (("rotor", "balancing_speed"), "700 rpm"),
    "--grade": (("rotor", "grade"), "G 6.3"),
    "--criterion": (("rotor", "criterion"), "iso"),
    "--material": (("rotor", "material"), "carbon steel"),
    "--error-allowance": (("rotor", "error_allowance"), "50 g*mm"),
    "--bearing-span": (("geometry", "bearing_span"), "1100 mm"),
    "--centre-of-mass": (("geometry", "centre_of_mass"), "610 mm"),
    "--angle-reference": (("angles", "reference"), "keyway"),
    "--angle-sense": (("angles", "sense"), "against rotation"),
    "--units": (("shop", "units"), "metric"),
}


def _option_value(text: str):
    """A value given on the command line: a TOML value if it reads as one (2, 0.3, true, ["a", "b"]),
    else the text itself; nothing (``KEY=``) removes the key."""
    import tomllib

    text = text.strip()
    if text == "":
        return None
    try:
        return tomllib.loads(f"v = {text}")["v"]
    except tomllib.TOMLDecodeError:
        return text


def _plane_option(item: str) -> tuple[str, dict]:
    from toolkit.errors import BadInput

    example = "'hub: position=260 mm; radius=180 mm; methods=drill'"
    name, sep, rest = str(item).partition(":")
    if not sep or not name.strip():
        raise BadInput(f"--plane: {item!r} is not NAME: KEY=VALUE; ..., e.g. {example}")
    keys = {}
    for part in filter(str.strip, rest.split(";")):
        key, eq, value = part.partition("=")
        if not eq or not key.strip():
            raise BadInput(f"--plane {name.strip()}: {part.strip()!r} is not KEY=VALUE, e.g. {example}")
        key = key.strip()
        if key == "methods" and value.strip():
            keys[key] = [m.strip() for m in value.split(",") if m.strip()]
        else:
            keys[key] = _option_value(value)
    return name.strip(), keys


def _type_changes(args) -> list[tuple[tuple[str, ...], object]]:
    from toolkit.errors import BadInput

    changes = [(path, _option_value(getattr(args, flag[2:].replace("-", "_"))))
               for flag, (path, _e) in TYPE_OPTIONS.items() if getattr(args, flag[2:].replace("-", "_")) is not None]
    for item in args.sets:
        key, eq, value = str(item).partition("=")
        path = tuple(k.strip() for k in key.split("."))
        if not eq or len(path) < 2 or not all(path):
            raise BadInput(f"--set: {item!r} is not TABLE.KEY=VALUE, e.g. 'shop.mass_step=0.1 g'")
        if path[0] == "plane":
            raise BadInput(f"--set: {item!r}: planes are changed with --plane 'NAME: KEY=VALUE'")
        changes.append((path, _option_value(value)))
    return changes


def _worded_for_options(exc):
    """The template's problems with each key named by the option that sets it."""
    from toolkit.workorder.job import JobError

    if not isinstance(exc, JobError):
        return exc
    flags = {".".join(path): flag for flag, (path, _e) in TYPE_OPTIONS.items()}

    def word(problem: str) -> str:
        key, sep, rest = problem.partition(":")
        if sep and key in flags:
            return f"{key} ({flags[key]}):{rest}"
        if sep and (key == "plane" or key.startswith("plane[")):
            return f"{key} (--plane):{rest}"
        if sep and "." in key and " " not in key:
            return f"{key} (--set {key}=...):{rest}"
        return problem

    return JobError(exc.origin, [word(p) for p in exc.problems], "the rotor type")


def run_type_save(args) -> int:
    from toolkit.errors import BadInput
    from toolkit.fileio import read_text
    from toolkit.register import records as R
    from toolkit.workorder.job import MAX_JOB_BYTES

    text = read_text(args.job, "job file (.toml)", MAX_JOB_BYTES) if args.job else None
    changes = _type_changes(args)
    planes = [_plane_option(item) for item in args.planes]
    with _open(args) as reg:
        if text is not None and not changes and not planes and not args.drop_plane:
            saved = R.save_type(reg, args.name, text, note=args.note, by=args.by, origin=str(args.job))
        elif text is None and not changes and not planes and not args.drop_plane:
            raise BadInput("type-save: give a job file, or options that describe or change the rotor type "
                           "(e.g. --mass '285 kg', --plane 'hub: radius=180 mm')")
        else:
            origin = f"{args.job} with the options given" if args.job else "the options given"
            try:
                saved = R.save_type_changes(reg, args.name, base_text=text, changes=changes, planes=planes,
                                            drop_planes=args.drop_plane, note=args.note, by=args.by, origin=origin)
            except BadInput as exc:
                raise _worded_for_options(exc) from None
    based = f" (options over version {saved['based_on']})" if saved.get("based_on") else ""
    emit(args.json, saved, f"Rotor type {saved['type']}: version {saved['version']} stored{based}")
    return 0


def run_type_show(args) -> int:
    from toolkit.register import records as R

    with _open(args) as reg:
        info = R.type_info(reg, args.name)
        if args.version is not None:
            info["template"] = R.template(reg, args.name, args.version)["template"]
            info["shown_version"] = args.version
    lines = [f"Rotor type {info['type']}"]
    lines += [f"  version {v['version']} ({v['created'][:10]}{', ' + v['by'] if v['by'] else ''}): {v['jobs']} "
              f"job(s){'; ' + v['note'] if v['note'] else ''}" for v in info["versions"]]
    lines += [f"  coefficient set {c['set']} ({c['reason']}, {c['created'][:10]}"
              + (f", from set {c['parent']}" if c["parent"] else "") + ")" for c in info["coefficients"]]
    lines += ["Template:", info["template"]]
    emit(args.json, info, "\n".join(lines))
    return 0


def run_jobs(args) -> int:
    from toolkit.errors import BadInput
    from toolkit.register import records as R

    if not 0 < args.limit <= 100_000:
        raise BadInput(f"--limit: {args.limit} is not between 1 and 100000")
    with _open(args) as reg:
        jobs = R.list_jobs(reg, type_name=args.type_name, status=args.status, since=args.since, until=args.until,
                           limit=args.limit)
    lines = [f"{len(jobs)} job(s)"] + [
        f"  {j['order_number']}  {j['status']:<9} {j['created'][:10]}  {j['type'] or '(no type)'}"
        f"{' v' + str(j['type_version']) if j['type_version'] else ''}  serial {j['serial'] or '-'}"
        for j in jobs]
    emit(args.json, {"jobs": jobs}, "\n".join(lines))
    return 0


def _show_text(d: dict) -> str:
    lines = [f"Order {d['order_number']}: {d['workorder']['ident']['rotor']}",
             f"  status {d['status']}; recorded {d['created']}{' by ' + d['created_by'] if d['created_by'] else ''}",
             f"  rotor type {d['type'] or '(none)'}{' version ' + str(d['type_version']) if d['type_version'] else ''};"
             f" serial {d['serial'] or '-'}; customer {d['customer'] or '-'}",
             f"  job text SHA-256 {d['job_sha256']}"]
    lines += [f"  status {s['status']} at {s['at']}{' by ' + s['by'] if s['by'] else ''} ({s['source']})"
              for s in d["status_history"]]
    for c in d["check_runs"]:
        angle = "" if c["angle_deg"] is None else f" at {c['angle_deg']:g}°"
        verdict = "" if c["passed"] is None else (" PASS" if c["passed"] else " FAIL")
        lines.append(f"  check {c['kind']} {c['target']}: {c['amount']:.4g} {c['unit']}{angle}{verdict} "
                     f"({c['at'][:19]}, {c['source']})")
    lines += [f"  operation {m['operation']}: {m['status']}{' - ' + m['remark'] if m['remark'] else ''}"
              for m in d["operation_marks"]]
    lines += [f"  signed {s['role']}: {s['name']}{' ' + s['signed'] if s['signed'] else ''}" for s in d["signoffs"]]
    lines += [f"  file {f['path']} sha256 {f['sha256']}" for f in d["files"]]
    lines += [f"  trim {t['step']} ({'influence coefficients' if t['kind'] == 'coefficients' else 'machine readings'})"
              f" at {t['at'][:19]}{' by ' + t['by'] if t['by'] else ''}: after {'; '.join(t['data'].get('after', []))}"
              for t in d.get("trims", [])]
    return "\n".join(lines)


def run_show(args) -> int:
    from toolkit.register import records as R

    with _open(args) as reg:
        detail = R.job_detail(reg, args.order)
    emit(args.json, detail, _show_text(detail))
    return 0


def run_record(args) -> int:
    from toolkit.errors import BadInput
    from toolkit.register import records as R

    residuals = _pairs(args.residual, "--residual", "A=850 g*mm@120")
    vibrations = _pairs(args.vibration, "--vibration", "drive end=0.8 mm/s@40")
    signs = _pairs(args.sign, "--sign", "inspector=A. Person")
    if not (args.workbook or residuals or vibrations or signs or args.status):
        raise BadInput("record: give --workbook, --residual, --vibration, --sign or --status")
    if not args.workbook and not args.order:
        raise BadInput("record: give the order number (or --workbook)")
    result: dict = {}
    with _open(args) as reg:
        if args.workbook:
            from toolkit.register.readback import record_workbook

            result["workbook"] = record_workbook(reg, args.workbook, number=args.order, by=args.by)
            number = result["workbook"]["order_number"]
        else:
            number = args.order
        if residuals or vibrations:
            result["check_runs"] = R.record_check(reg, number, residuals=residuals, vibrations=vibrations, by=args.by)
        for role, name in signs.items():
            result.setdefault("signoffs", []).append(R.record_signoff(reg, number, role, name))
        if args.status:
            result["status_change"] = R.set_status(reg, number, args.status, by=args.by, note=args.note)
        status = R.job_detail(reg, number)["status"]
    result.update({"order_number": number, "status": status})
    lines = [f"Order {number}: status {status}"]
    wbk = result.get("workbook")
    if wbk:
        lines.append(f"  from the workbook: {len(wbk['check_runs'])} reading(s), {len(wbk['operation_marks'])} "
                     f"operation mark(s), {len(wbk['signoffs'])} sign-off(s) recorded"
                     + (f"; status moved to {', '.join(wbk['status_changes'])}" if wbk["status_changes"] else ""))
    for c in result.get("check_runs", []) + (wbk["check_runs"] if wbk else []):
        verdict = "" if c["passed"] is None else (" PASS" if c["passed"] else " FAIL")
        lines.append(f"  {c['kind']} {c['target']}: {c['amount']:.4g} {c['unit']}{verdict}")
    lines += [f"  signed {s['role']}: {s['name']}" for s in result.get("signoffs", [])]
    emit(args.json, result, "\n".join(lines))
    return 0


def run_certificate(args) -> int:
    from pathlib import Path

    from toolkit.fileio import safe_filename, write_atomic
    from toolkit.export.certificate import certificate_pdf
    from toolkit.register.reports import certificate_data

    with _open(args) as reg:
        data = certificate_data(reg, args.order)
    path = Path(args.out) / f"{safe_filename(data['order_number'])}-certificate.pdf"
    written = write_atomic(path, certificate_pdf(data), force=args.force)
    data["file"] = str(written)
    emit(args.json, data, f"Balance certificate of order {data['order_number']}: wrote {written}")
    return 0


def run_stats(args) -> int:
    from pathlib import Path

    from toolkit.errors import BadInput
    from toolkit.fileio import check_writable, write_atomic
    from toolkit.export.statistics import stats_pdf, stats_text, stats_xlsx
    from toolkit.register.reports import series_statistics

    formats = tuple(dict.fromkeys(p.strip().lower() for p in str(args.format).split(",") if p.strip()))
    if not formats or any(f not in ("pdf", "xlsx") for f in formats):
        raise BadInput(f"--format: {args.format!r} is not allowed; give pdf, xlsx or pdf,xlsx")
    with _open(args) as reg:
        stats = series_statistics(reg, type_name=args.type_name, status=args.status, since=args.since,
                                  until=args.until)
    files = []
    if args.out is not None:
        stem = "register-statistics"
        paths = {f: Path(args.out) / f"{stem}.{f}" for f in formats}
        for p in paths.values():
            check_writable(p, args.force)
        makers = {"pdf": stats_pdf, "xlsx": stats_xlsx}
        files = [str(write_atomic(paths[f], makers[f](stats), force=args.force)) for f in formats]
    stats["files"] = files
    emit(args.json, stats, stats_text(stats) + "".join(f"\n  wrote {f}" for f in files))
    return 0


def run_export(args) -> int:
    from toolkit.fileio import write_atomic
    from toolkit.register.portable import export_lines

    with _open(args) as reg:
        counts: dict = {}
        path = write_atomic(args.file, lambda handle: export_lines(reg, handle, counts), force=args.force)
    data = {"file": str(path), "rows": counts}
    emit(args.json, data, f"Exported {sum(counts.values())} row(s) to {path}: "
                          + ", ".join(f"{k} {v}" for k, v in counts.items() if v))
    return 0


def run_import(args) -> int:
    from toolkit.register.portable import import_lines

    with _open(args) as reg:
        counts = import_lines(reg, args.file)
    emit(args.json, {"file": str(args.file), "rows": counts},
         f"Imported {sum(counts.values())} row(s) from {args.file}: "
         + ", ".join(f"{k} {v}" for k, v in counts.items() if v))
    return 0


def run_coeffs(args) -> int:
    from toolkit.register import records as R

    with _open(args) as reg:
        saved = None
        if args.save:
            from toolkit.coefficients import load_coefficients

            saved = R.store_coefficients(reg, args.name, load_coefficients(args.save), reason="file", by=args.by,
                                         provenance={"file": str(args.save), "jobs": list(args.job),
                                                     "note": args.note})
        history = R.coefficient_history(reg, args.name)
    data = {"type": args.name, "saved": saved, "sets": history}
    lines = ([f"Stored coefficient set {saved['set']} for rotor type {args.name}"] if saved else []) + \
            [f"{len(history)} coefficient set(s) of rotor type {args.name}"]
    for h in history:
        cells = "; ".join(f"{c['amount']:.4g}@{c['angle_deg']:.1f}" for row in h["coefficients"] for c in row)
        lines.append(f"  set {h['set']} ({h['reason']}{', from set ' + str(h['parent']) if h['parent'] else ''}, "
                     f"{h['created'][:10]}, {h['speed_rpm'] or '?'} r/min): {cells}")
    emit(args.json, data, "\n".join(lines))
    return 0


def run_trim(args) -> int:
    from toolkit.register import records as R

    installed = _pairs(args.installed, "--installed", "near=6 g@255")
    with _open(args) as reg:
        new = R.trim_coefficients(reg, args.name, list(args.before), installed, list(args.after), by=args.by,
                                  job=args.job)
    emit(args.json, new, f"Rotor type {args.name}: coefficient set {new['set']} stored (trim update of set "
                         f"{new['parent']})")
    return 0


def run_balance(args) -> int:
    from toolkit.commands.workorders import _finish, _formats, write_order_files
    from toolkit.register.oneshot import balance_from_type

    formats = _formats(args.format)
    with _open(args) as reg:
        order, record = balance_from_type(reg, args.name, serial=args.serial, original=list(args.original),
                                          customer=args.customer, by=args.by)
        files = write_order_files(order, args.out, formats, args.force)
        from toolkit.register import records as R

        R.add_files(reg, record["order_number"], files)
    return _finish(args, order, files)


# -- options of ``order`` ------------------------------------------------------------------------------------

def add_order_options(parser) -> None:
    """The ``order`` options that record into the register or start from a stored rotor type."""
    group = parser.add_argument_group("register")
    group.add_argument("--record", action="store_true",
                       help="record the job in the register; the register allocates the order number")
    group.add_argument("--rotor-type", metavar="TYPE", default=None,
                       help="start from this stored rotor type: JOB.toml then holds only this rotor's tables "
                            "(e.g. [order] and [measurement]) laid over the type's template")
    group.add_argument("--serial", metavar="SN", default=None, help="the rotor's serial number")
    _where(group)


def order_for(args):
    """The work order of ``order``: from the job file alone, or recorded in the register, or composed from a
    stored rotor type."""
    from pathlib import Path

    from toolkit.errors import BadInput
    from toolkit.workorder.build import build_order, order_from_file

    record, type_name = getattr(args, "record", False), getattr(args, "rotor_type", None)
    if not record and not type_name:
        if getattr(args, "serial", None):
            raise BadInput("--serial: only with --rotor-type or --record")
        return order_from_file(args.job)
    from toolkit.fileio import read_text
    from toolkit.register import records as R
    from toolkit.workorder.job import MAX_JOB_BYTES, parse_job

    text = read_text(args.job, "job file (.toml)", MAX_JOB_BYTES)
    base = Path(args.job).parent
    with _open(args) as reg:
        version_id = None
        if type_name:
            t, text = R.compose_job(reg, type_name, text, serial=args.serial or "")
            version_id = t["version_id"]
        elif args.serial:
            text = R.toml_text(R._merge(R._loads(text, str(args.job)), {"order": {"serial": args.serial}}))
        if not record:
            job = parse_job(text, str(args.job), base)
            if job.number == R.PLACEHOLDER:
                raise BadInput(f"{args.job}: [order] number is missing; give one in the file or give --record "
                               "so that the register allocates it")
            return build_order(job)
        order, rec = R.record_job(reg, text, origin=str(args.job), base=base, type_version_id=version_id)
    args._recorded = rec["order_number"]
    return order


def record_files(args, order, files) -> None:
    """Record the files written for a job recorded by :func:`order_for`."""
    if getattr(args, "_recorded", None):
        from toolkit.register import records as R

        with _open(args) as reg:
            R.add_files(reg, args._recorded, files)
