"""Planner batches: one rotor per row of a sheet (.xlsx or .csv), each row turned into a work order.

The sheet has one header row; the column names are below (case and surrounding spaces do not matter;
unknown columns are refused so that a typing error cannot silently drop a value). Empty cells are left
out, so the job defaults apply. Each row is validated like a job file, and its problems name the column.

==================  =======================================================================
column              meaning (the job-file key it fills)
==================  =======================================================================
order               order number (required; also the PDF file name, made safe)
rotor               what the rotor is (required)
customer, drawing,  identification, free text
serial, date, notes
mass                rotor mass with unit, e.g. ``412 kg``
service_speed       maximum service speed, e.g. ``1480 rpm``
balancing_speed     optional
grade               e.g. ``G 6.3``
criterion           ``iso`` (default), ``api``, ``mil-std-167``
material            e.g. ``carbon steel``
bearing_span        e.g. ``1200 mm``
centre_of_mass      from bearing A, e.g. ``540 mm``
one_plane_rule      one plane: ``whole`` (default, ISO 21940-11) or ``statics``
static_share        two planes of a narrow or overhung rotor: the static part's fraction, e.g. ``0.5``
rotor_length        one plane: the rotor body's axial length, to check that one plane suffices
key_convention      ``half-key`` (ISO 21940-32), ``full-key`` or ``no-key`` (the job's ``[key] convention``)
keyway_fill         what sits in the keyway while balancing: ``key``, ``half-key`` or ``nothing``
key_marking         the component's stamp (default by convention)
reference, sense    angle reference mark; ``against rotation`` or ``with rotation``
shows               what the machine's angle shows: ``heavy spot`` (default) or ``add``
units               ``metric`` or ``imperial``
drills, plate_stock the shop's tables (as in the job file; paths relative to the sheet)
planeN_name         N = 1 or 2: the plane's name (leave plane 2 empty for a one-plane rotor)
planeN_position     from bearing A, e.g. ``150 mm``
planeN_radius       correction radius
planeN_surface      ``outer``, ``inner`` or ``face``
planeN_methods      allowed methods in order, separated by ``;``: ``drill;plate``
planeN_reading      the balancing machine's reading, ``AMOUNT@ANGLE`` (``1820 g*mm@40`` or ``5.9 g@40``)
planeN_width, planeN_wall, planeN_max_depth, planeN_max_length, planeN_washer_size,
planeN_plate_shape, planeN_hole_orientation, planeN_fixed_positions (angles separated by ``;``)
job                 optional: a job file (path relative to the sheet) used as the base for this row;
                    the row's non-empty cells replace its values (use it for trial-run jobs)
rotor_type          optional: a stored rotor type of the shop register whose newest template is the base
                    for this row (as ``job`` is); only where the caller gives the register's templates
==================  =======================================================================

This module only turns rows into work orders: :func:`orders` yields one :class:`Row` per non-empty data
row, with its order or the reason it failed (a bad row never stops the others). Writing the files (a PDF
per rotor, the combined PDF, the summary workbook, the batch's record) is
:func:`toolkit.export.files.write_batch`.

Scale: the sheet is streamed (openpyxl read-only mode, or the csv reader) and each row is built when it is
asked for, so memory does not grow with the rows.
"""

from __future__ import annotations

import csv
from dataclasses import dataclass
from pathlib import Path

from toolkit.errors import BadInput, CounterpoiseError

__all__ = ["COLUMNS", "PLANE_COLUMNS", "Row", "orders", "read_rows", "row_job", "row_data", "row_inputs"]

#: Top-level columns and the job key path each fills.
COLUMNS = {
    "order": ("order", "number"), "rotor": ("order", "rotor"), "customer": ("order", "customer"),
    "drawing": ("order", "drawing"), "serial": ("order", "serial"), "date": ("order", "date"),
    "notes": ("order", "notes"),
    "mass": ("rotor", "mass"), "service_speed": ("rotor", "service_speed"),
    "balancing_speed": ("rotor", "balancing_speed"), "grade": ("rotor", "grade"),
    "criterion": ("rotor", "criterion"), "material": ("rotor", "material"),
    "bearing_span": ("geometry", "bearing_span"), "centre_of_mass": ("geometry", "centre_of_mass"),
    "one_plane_rule": ("geometry", "one_plane_rule"), "static_share": ("geometry", "static_share"),
    "rotor_length": ("geometry", "rotor_length"),
    "key_convention": ("key", "convention"), "keyway_fill": ("key", "fill"), "key_marking": ("key", "marking"),
    "reference": ("angles", "reference"), "sense": ("angles", "sense"),
    "shows": ("measurement", "shows"),
    "units": ("shop", "units"), "drills": ("shop", "drills"), "plate_stock": ("shop", "plate_stock"),
}
#: Per-plane columns (``plane1_...``, ``plane2_...``), named after the job file's plane keys.
PLANE_COLUMNS = ("name", "position", "radius", "surface", "methods", "reading", "width", "wall", "max_depth",
                 "max_length", "washer_size", "plate_shape", "hole_orientation", "fixed_positions")
_LISTS = ("methods", "fixed_positions")
MAX_PLANES = 2


def _known_columns() -> set[str]:
    return set(COLUMNS) | {"job", "rotor_type"} | {f"plane{n}_{c}" for n in range(1, MAX_PLANES + 1) for c in PLANE_COLUMNS}


# -- reading the sheet --------------------------------------------------------------------------------

def _cell_text(value) -> str:
    if value is None:
        return ""
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, float):
        return f"{value:.15g}"
    if hasattr(value, "isoformat"):
        return value.isoformat()[:10]
    return str(value).strip()


#: Most names a message lists; the rest are counted ("and 999,990 more").
_LISTED = 10


def _some(names: list[str]) -> str:
    """At most :data:`_LISTED` names (each cut to 40 characters), then how many more.

    >>> _some(["a", "b"]), _some([str(i) for i in range(1_000_000)])[-20:]
    ('a, b', ', 9 and 999,990 more')
    """
    shown = ", ".join(n if len(n) <= 40 else n[:37] + "..." for n in names[:_LISTED])
    rest = len(names) - _LISTED
    return shown if rest <= 0 else f"{shown} and {rest:,} more"


def _header(cells, origin: str) -> list[str]:
    header = [_cell_text(c).lower().replace(" ", "_") for c in cells]
    while header and not header[-1]:
        header.pop()
    if not header:
        raise BadInput(f"{origin}: the first row must name the columns, e.g. order, rotor, mass, ...")
    known = _known_columns()
    unknown = [h for h in header if h and h not in known]
    if unknown:
        raise BadInput(f"{origin}, row 1: unknown column(s) {_some(unknown)}; see the planner columns in "
                       "the README (order, rotor, mass, service_speed, ..., plane1_name, plane1_reading, ...)")
    from collections import Counter

    dupes = sorted(h for h, n in Counter(h for h in header if h).items() if n > 1)
    if dupes:
        raise BadInput(f"{origin}, row 1: column {dupes[0]} appears twice")
    missing = [c for c in ("order",) if c not in header]
    if missing:
        raise BadInput(f"{origin}, row 1: missing column(s) {', '.join(missing)}")
    return header


def read_rows(path: str | Path):
    """Yield ``(row number, {column: text})`` for each non-empty data row of a planner sheet.

    Row numbers are the sheet's own (the header is row 1). An .xlsx is read in read-only mode (cached
    values of formulas); a .csv as UTF-8 (a byte-order mark is allowed).
    """
    path = Path(path)
    origin = str(path)
    if not path.is_file():
        raise BadInput(f"{origin}: no such planner sheet")
    suffix = path.suffix.lower()
    if suffix == ".csv":
        yield from _csv_rows(path, origin)
    elif suffix in (".xlsx", ".xlsm"):
        yield from _xlsx_rows(path, origin)
    else:
        raise BadInput(f"{origin}: {path.suffix or 'no suffix'} is not a planner sheet; give a .xlsx or .csv file")


def _csv_rows(path: Path, origin: str):
    try:
        handle = path.open(encoding="utf-8-sig", newline="")
    except OSError as exc:
        raise BadInput(f"{origin}: cannot read ({exc.strerror})") from None
    with handle:
        reader = csv.reader(handle)
        try:
            header = _header(next(reader, []), origin)
            # rows counted as a spreadsheet shows them: a quoted cell with a line break stays in its row
            for number, cells in enumerate(reader, start=2):
                if not any(c.strip() for c in cells):
                    continue
                yield number, {h: _cell_text(c) for h, c in zip(header, cells) if h}
        except UnicodeDecodeError:
            raise BadInput(f"{origin}, after row {reader.line_num}: not UTF-8 text") from None
        except csv.Error as exc:
            raise BadInput(f"{origin}, row {reader.line_num}: {exc}") from None


#: Largest uncompressed part of a planner workbook, and the largest compression ratio of a big part. A
#: 10,000-row sheet is a few tens of MB of XML compressed about 10:1; a part far beyond either is refused
#: before it is read (a small file that unpacks to hundreds of MB).
MAX_PART_BYTES = 200_000_000
MAX_RATIO = 100


def _check_package(path: Path, origin: str) -> None:
    import zipfile

    try:
        with zipfile.ZipFile(path) as package:
            for item in package.infolist():
                ratio = item.file_size / max(item.compress_size, 1)
                if item.file_size > MAX_PART_BYTES or (item.file_size > 10_000_000 and ratio > MAX_RATIO):
                    raise BadInput(f"{origin}: part {item.filename} unpacks to {item.file_size} bytes "
                                   f"({ratio:.0f} times its packed size); a planner sheet is refused beyond "
                                   f"{MAX_PART_BYTES} bytes or {MAX_RATIO}:1")
    except zipfile.BadZipFile:
        raise BadInput(f"{origin}: not a workbook (.xlsx is a zip package); save the sheet as .xlsx or .csv") from None


#: The key of the one cell yielded for a row that could not be read at all (its value is the reason).
_DAMAGED = "\x00damaged"


def _xlsx_rows(path: Path, origin: str):
    from openpyxl import load_workbook

    _check_package(path, origin)
    try:
        wb = load_workbook(path, read_only=True, data_only=True)
    except Exception as exc:  # openpyxl raises several kinds for a damaged or foreign file
        raise BadInput(f"{origin}: cannot read as a workbook ({type(exc).__name__})") from None
    formulas = None
    try:
        ws = wb.worksheets[0]
        rows = ws.iter_rows(values_only=True)
        try:
            header = _header(next(rows, ()), origin)
        except BadInput:
            raise
        except Exception as exc:  # damaged XML in the first row: the sheet as a whole cannot be read
            raise BadInput(f"{origin}: cannot read the first row ({type(exc).__name__})") from None
        formulas = _formula_rows(path) if _has_formulas(path) else None
        number = 1
        while True:
            try:
                cells = next(rows)
                written = next(formulas, None) if formulas is not None else None
            except StopIteration:
                break
            except Exception as exc:  # damaged XML further down: report that row, keep what was read
                yield number + 1, {_DAMAGED: f"the workbook is damaged from this row on ({type(exc).__name__}); "
                                             "the rows after it were not read"}
                break
            number += 1
            if written and cells:
                unread = [h for h, c, f in zip(header, cells, written) if h and c is None and f]
                if unread:
                    yield number, {_DAMAGED: f"column {unread[0]}: the cell holds a formula with no stored value "
                                             "(the workbook was saved without calculating it); open the sheet in "
                                             "a spreadsheet program and save it, so that each formula's value is "
                                             "stored, or type the value in"}
                    continue
            if cells is None or all(c is None or _cell_text(c) == "" for c in cells):
                continue
            yield number, {h: _cell_text(c) for h, c in zip(header, cells) if h}
    finally:
        if formulas is not None:
            formulas.close()
        wb.close()


def _has_formulas(path: Path) -> bool:
    """Whether any worksheet of the package holds a formula (an ``<f>`` element), read in chunks."""
    import zipfile

    try:
        with zipfile.ZipFile(path) as package:
            for item in package.infolist():
                if not (item.filename.startswith("xl/worksheets/") and item.filename.endswith(".xml")):
                    continue
                tail = b""
                with package.open(item) as part:
                    while chunk := part.read(1 << 20):
                        text = tail + chunk
                        if b"<f>" in text or b"<f " in text or b":f>" in text or b":f " in text:
                            return True
                        tail = text[-8:]
    except Exception:  # damaged packages are reported by the reader itself
        return False
    return False


def _formula_rows(path: Path):
    """For each data row, which cells hold a formula (True) as written in the file: a second read-only
    pass, made only when the workbook has formulas at all."""
    from openpyxl import load_workbook

    wb = load_workbook(path, read_only=True, data_only=False)
    try:
        rows = wb.worksheets[0].iter_rows(values_only=True)
        next(rows, None)
        for cells in rows:
            yield [isinstance(c, str) and c.startswith("=") for c in (cells or ())]
    finally:
        wb.close()


def _count_rows(path: Path) -> int | None:
    """Rows to expect (for the progress bar), cheaply; None when unknown."""
    try:
        if path.suffix.lower() == ".csv":
            with path.open("rb") as handle:
                return max(0, sum(1 for _ in handle) - 1)
        from openpyxl import load_workbook

        wb = load_workbook(path, read_only=True)
        try:
            count = wb.worksheets[0].max_row
        finally:
            wb.close()
        return None if count is None else max(0, count - 1)
    except Exception:  # only a progress hint
        return None


# -- a row to a job -----------------------------------------------------------------------------------

def _put(data: dict, path: tuple, value) -> None:
    table = data
    for key in path[:-1]:
        table = table.setdefault(key, {})
    table[path[-1]] = value


def row_data(cells: dict, base: Path, template_for=None) -> tuple[dict, dict, Path]:
    """A planner row as job data: ``(data, columns, base)``, where ``columns`` maps each job key path the
    row filled to its column (for the messages) and ``base`` is the folder the row's file names are read
    from. The base of the data is the row's ``job`` file, or the stored rotor type ``template_for(name)``
    gives (job data, a dict) for the ``rotor_type`` column, or an empty machine-reading job."""
    import copy

    data: dict = {}
    columns: dict[tuple, str] = {}
    template = cells.get("job", "")
    type_name = cells.get("rotor_type", "")
    if template and type_name:
        raise BadInput("columns job and rotor_type: give one base for the row, not both")
    if template:
        file = (base / template) if not Path(template).is_absolute() else Path(template)
        data = copy.deepcopy(_template(file))  # the row's cells are put into its own copy
        base = file.parent
    elif type_name:
        if template_for is None:
            raise BadInput(f"column rotor_type: {type_name!r} names a stored rotor type, and no shop register "
                           "was given to read it from")
        data = copy.deepcopy(template_for(type_name))
    else:
        data["measurement"] = {"kind": "machine"}
    for column, path in COLUMNS.items():
        text = cells.get(column, "")
        if text:
            _put(data, path, _number(text) if column in _NUMBERS else text)
            columns[path] = column
    if "key" in data and not (template or type_name):  # a fill or marking without its convention: name it
        columns.setdefault(("key", "convention"), "key_convention")
    planes = data.get("plane") if (template or type_name) else None
    planes = list(planes) if isinstance(planes, list) else []
    for n in range(1, MAX_PLANES + 1):
        given = {c: cells.get(f"plane{n}_{c}", "") for c in PLANE_COLUMNS}
        if not any(given.values()):
            continue
        while len(planes) < n:
            planes.append({})
        plane = dict(planes[n - 1])
        for key, text in given.items():
            if not text or key == "reading":
                continue
            value = [p.strip() for p in text.split(";") if p.strip()] if key in _LISTS else text
            plane[key] = value
            columns[("plane", n - 1, key)] = f"plane{n}_{key}"
        planes[n - 1] = plane
        if given["reading"]:
            name = plane.get("name", f"plane {n}")
            _put(data, ("measurement", "readings", name), given["reading"])
            columns[("measurement", "readings", name)] = f"plane{n}_reading"
    if planes:
        data["plane"] = planes
    return data, columns, base


def row_job(cells: dict, origin: str, base: Path, template_for=None):
    """Validate one planner row and return its :class:`~toolkit.workorder.job.Job` (problems name the
    column)."""
    from toolkit.workorder.job import job_from_data

    data, columns, base = row_data(cells, base, template_for)
    return job_from_data(data, origin, base, columns=columns, what="the row")


#: Columns whose job key takes a plain number (a fraction), not text.
_NUMBERS = ("static_share",)


def _number(text: str):
    """A cell's number as the job key wants it; text that is no number is left for the row's check to refuse."""
    from toolkit.units import plain_number

    try:
        return plain_number(text)
    except ValueError:
        return text


def _template(file: Path) -> dict:
    """A row's job template as data, read, parsed and checked (its own problems with line numbers) once per
    version of the file: the rows of a sheet usually share one template, and reading it for each row was
    most of a trial-run row's time."""
    try:
        stat = file.stat()
        key = (str(file.resolve()), stat.st_mtime_ns, stat.st_size)
    except OSError:
        key = None  # missing or unreadable: the reader below says so
    if key is not None and key in _TEMPLATES:
        return _TEMPLATES[key]
    from toolkit.fileio import parse_toml, read_text
    from toolkit.workorder.job import MAX_JOB_BYTES, parse_job

    text = read_text(file, "job file (.toml)", MAX_JOB_BYTES)
    parse_job(text, str(file), file.parent)  # its own problems, with line numbers
    data = parse_toml(text, str(file))
    if key is not None:
        if len(_TEMPLATES) >= 64:
            _TEMPLATES.clear()
        _TEMPLATES[key] = data
    return data


_TEMPLATES: dict[tuple, dict] = {}


# -- the rows' work orders -------------------------------------------------------------------------

def row_inputs(cells: dict, base: Path, paper: str | None = None, template: dict | None = None) -> str:
    """A hash of what a planner row's order is made from: its cells, the files they name (job template,
    shop tables), the stored rotor type's template (``template``) where the row names one, the paper asked
    for by the caller and the program version."""
    import hashlib
    import json

    from toolkit import __version__

    h = hashlib.sha256()
    given = {"version": __version__, "cells": cells, "paper": paper}
    if template is not None:
        given["template"] = template
    h.update(json.dumps(given, sort_keys=True, ensure_ascii=True, default=str).encode())
    for column in ("job", "drills", "plate_stock"):
        name = cells.get(column, "")
        if name:
            file = Path(name) if Path(name).is_absolute() else base / name
            try:
                h.update(b"\0" + file.read_bytes())
            except OSError:
                h.update(b"\0missing")
    return h.hexdigest()


@dataclass(frozen=True)
class Row:
    """One data row of a planner sheet: its row number, its cells, ``origin`` (sheet and row, for
    messages), and either ``order`` (the :class:`~toolkit.workorder.model.WorkOrder`, with ``job`` and
    ``data``, the validated job and the job data it was built from) or ``reason`` (why it failed, one line
    without the origin). ``inputs`` is :func:`row_inputs` of the row."""

    number: int
    cells: dict
    origin: str
    inputs: str = ""
    order: object = None
    job: object = None
    data: dict | None = None
    reason: str | None = None

    @property
    def failed(self) -> bool:
        return self.order is None


def reason_of(exc: Exception, origin: str) -> str:
    """A library error as one line without its ``origin`` prefix (the row number is said elsewhere)."""
    reason = " ".join(str(exc).split())
    prefix = f"{origin}: "
    return reason[len(prefix):] if reason.startswith(prefix) else reason


def orders(sheet: str | Path, *, paper: str | None = None, paper_source: str = "command line",
           progress=None, template_for=None):
    """Yield one :class:`Row` per non-empty data row of a planner sheet, in the sheet's order.

    Problems of the whole sheet (missing, unreadable, unknown columns) raise
    :class:`~toolkit.errors.BadInput` at the first step of the iteration, before any row is built; a row
    that cannot be built is yielded with its reason and the others go on. ``paper`` (``"A4"`` or
    ``"Letter"``) prints every order on that paper, with ``paper_source`` named as where it came from.
    ``template_for(name)`` returns the job data of a stored rotor type (for the ``rotor_type`` column).

    ``progress(done, total, failed, final)`` is called after each row has been handled by the caller (the
    rows handed out so far, the rows expected or None when unknown, the rows that failed here, and True on
    the last call); it never prints anything itself.
    """
    from toolkit.workorder.build import build_order
    from toolkit.workorder.job import job_from_data
    from toolkit.workorder.model import with_paper

    sheet = Path(sheet)
    base = sheet.parent
    rows = read_rows(sheet)
    first = next(rows, None)  # sheet-level problems surface before any row is built
    total = _count_rows(sheet) if progress else None
    done = failed = 0
    seen_templates: dict[str, dict] = {}

    def remembered(name: str) -> dict:
        data = template_for(name)
        seen_templates[name] = data
        return data

    for number, cells in (_chain(first, rows) if first is not None else ()):
        origin = f"{sheet}, row {number}"
        seen_templates.clear()
        try:
            if _DAMAGED in cells:
                raise BadInput(cells[_DAMAGED])
            data, columns, row_base = row_data(cells, base, remembered if template_for else None)
            job = job_from_data(data, origin, row_base, columns=columns, what="the row")
            order = build_order(job)
            if paper:
                order = with_paper(order, paper, paper_source)
            template = seen_templates.get(cells.get("rotor_type", ""))
            row = Row(number, cells, origin, row_inputs(cells, base, paper, template), order, job, data)
        except CounterpoiseError as exc:
            failed += 1
            row = Row(number, cells, origin, reason=reason_of(exc, origin))
        yield row
        done += 1
        if progress:
            progress(done, total, failed, False)
    if progress:
        progress(done, total, failed, True)


def _chain(first, rest):
    yield first
    yield from rest
