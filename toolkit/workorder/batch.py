"""Planner batches: one rotor per row of a sheet (.xlsx or .csv) to a work order per rotor, a combined PDF
and a summary workbook.

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
==================  =======================================================================

Outputs in the output folder: ``<order>.pdf`` per rotor, ``<sheet>-orders.pdf`` (every work order in one
document, each with its own page numbers) and ``<sheet>-summary.xlsx`` (one row per rotor: allowances,
corrections, predicted residuals, status, file or reason). A bad row is reported with its row number and
reason and the other rows go on.

Scale: the sheet is streamed (openpyxl read-only mode, or the csv reader), the summary is written in
openpyxl's write-only mode, and each order's pages are finished as soon as it is drawn, so memory grows
with the combined PDF only.
"""

from __future__ import annotations

import csv
import time
from dataclasses import dataclass, field
from pathlib import Path

from toolkit.errors import BadInput, CounterpoiseError

__all__ = ["COLUMNS", "PLANE_COLUMNS", "BatchResult", "run_batch", "read_rows", "row_job"]

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
    return set(COLUMNS) | {"job"} | {f"plane{n}_{c}" for n in range(1, MAX_PLANES + 1) for c in PLANE_COLUMNS}


@dataclass(frozen=True)
class BatchResult:
    """What a batch did: rows read, orders written, failed rows (row number, reason), orders predicted out
    of tolerance, and the files written."""

    sheet: str
    rows: int
    done: int
    failures: tuple[tuple[int, str], ...]
    out_of_tolerance: tuple[str, ...]
    files: tuple[str, ...]
    seconds: float = field(default=0.0, compare=False)
    kept: tuple[str, ...] = ()

    def to_dict(self) -> dict:
        return {"sheet": self.sheet, "rows": self.rows, "done": self.done,
                "failures": [{"row": r, "reason": why} for r, why in self.failures],
                "out_of_tolerance": list(self.out_of_tolerance), "files": list(self.files),
                "kept": list(self.kept), "seconds": round(self.seconds, 3)}


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


def row_job(cells: dict, origin: str, base: Path):
    """Validate one planner row and return its :class:`~toolkit.workorder.job.Job` (problems name the
    column)."""
    import copy

    from toolkit.workorder.job import job_from_data

    data: dict = {}
    columns: dict[tuple, str] = {}
    template = cells.get("job", "")
    if template:
        file = (base / template) if not Path(template).is_absolute() else Path(template)
        data = copy.deepcopy(_template(file))  # the row's cells are put into its own copy
        base = file.parent
    else:
        data["measurement"] = {"kind": "machine"}
    for column, path in COLUMNS.items():
        text = cells.get(column, "")
        if text:
            _put(data, path, _number(text) if column in _NUMBERS else text)
            columns[path] = column
    if "key" in data and not template:  # a fill or marking without its convention: name the missing column
        columns.setdefault(("key", "convention"), "key_convention")
    planes = data.get("plane") if template else None
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


# -- the batch ----------------------------------------------------------------------------------------

#: The batch's own record in the output folder: for each order file, its row, a hash of the row's inputs
#: and a hash of the file written; used to continue an interrupted batch.
MANIFEST_FORMAT = "counterpoise-batch"
#: Seconds between two saves of the record while a batch runs (it is also saved at the end and when the
#: batch is stopped by a signal).
MANIFEST_EVERY = 1.0


def _digest(data: bytes) -> str:
    import hashlib

    return hashlib.sha256(data).hexdigest()


def _file_digest(path: Path) -> str | None:
    try:
        return _digest(path.read_bytes())
    except OSError:
        return None


def row_inputs(cells: dict, base: Path, paper: str | None = None) -> str:
    """A hash of what a planner row's order is made from: its cells, the files they name (job template,
    shop tables), the paper asked for on the command line and the program version."""
    import hashlib
    import json

    from toolkit import __version__

    h = hashlib.sha256()
    h.update(json.dumps({"version": __version__, "cells": cells, "paper": paper}, sort_keys=True,
                        ensure_ascii=True).encode())
    for column in ("job", "drills", "plate_stock"):
        name = cells.get(column, "")
        if name:
            file = Path(name) if Path(name).is_absolute() else base / name
            try:
                h.update(b"\0" + file.read_bytes())
            except OSError:
                h.update(b"\0missing")
    return h.hexdigest()


def _load_manifest(path: Path) -> dict | None:
    """The record of an earlier batch, or None when there is none; a file of another kind is refused."""
    import json

    from toolkit.errors import OutputError

    try:
        raw = path.read_bytes()
    except FileNotFoundError:
        return None
    except OSError as exc:
        raise OutputError(f"cannot read {path}: {exc.strerror}") from None
    try:
        data = json.loads(raw.decode("utf-8"))
        if data.get("format") != MANIFEST_FORMAT or not isinstance(data.get("orders"), dict):
            raise ValueError
    except (ValueError, UnicodeDecodeError, AttributeError, RecursionError):
        raise OutputError(f"{path} is not the record of a batch, so it is not replaced; move it away, or "
                          "allow overwriting") from None
    return data


def run_batch(sheet: str | Path, out: str | Path = ".", *, force: bool = False, progress=None,
              carry_on: bool = False, paper: str | None = None) -> BatchResult:
    """Turn every row of a planner sheet into a work order.

    Writes one PDF per rotor, the combined PDF, the summary workbook and the batch's record
    (``<sheet>-batch.json``) into ``out`` (atomically; an existing file is replaced only with ``force``). A
    row that cannot be built is recorded with its row number and reason; the others go on. A row whose file
    name is taken by another row or by the batch's own files fails with that reason before anything of it
    is written.

    ``carry_on`` continues an interrupted batch: a row whose PDF is already in the folder, made from the
    same inputs (the record's hash) or byte for byte what the row gives now, is kept as it is; the summary
    and the combined PDF are made over every row, and the batch's own files of the earlier run are replaced.

    Raises :class:`~toolkit.errors.BadInput` only for problems of the whole sheet (missing, unreadable,
    unknown columns) and :class:`~toolkit.errors.OutputError` when the summary or combined files exist
    without ``force`` (or, with ``carry_on``, were not made by the recorded batch), or cannot be written.
    """
    import json

    from toolkit.errors import OutputError
    from toolkit.fileio import check_writable, describe, output_error, safe_filename, write_atomic
    from toolkit.workorder import pdf
    from toolkit.workorder.build import build_order
    from toolkit.workorder.model import with_paper

    start = time.perf_counter()
    sheet = Path(sheet)
    out = Path(out)
    kind = describe(out)
    if kind is not None:
        raise OutputError(f"{out} is {kind}; the output must be a folder (it is created if missing)")
    stem = safe_filename(sheet.stem, "planner")
    combined_path = out / f"{stem}-orders.pdf"
    summary_path = out / f"{stem}-summary.xlsx"
    manifest_path = out / f"{stem}-batch.json"
    own = {p.name.casefold(): p.name for p in (combined_path, summary_path, manifest_path)}
    earlier = _load_manifest(manifest_path) if (carry_on and not force) else None
    recorded = earlier.get("orders", {}) if earlier else {}
    batch_force = force
    if carry_on and not force:
        # the batch's own files may be replaced when the record says the recorded batch made them, or when
        # it records a batch that did not finish (it was stopped after writing one of them)
        for path, key in ((combined_path, "combined"), (summary_path, "summary")):
            if path.exists() and (earlier is None or (earlier.get("complete") is not False
                                                      and earlier.get(key) != _file_digest(path))):
                check_writable(path, False)
        batch_force = earlier is not None
    for path in (combined_path, summary_path, manifest_path):
        check_writable(path, batch_force)
    rows = read_rows(sheet)
    first = next(rows, None)  # sheet-level problems surface before anything is written
    total = _count_rows(sheet) if progress else None

    def report(done: int, final: bool = False) -> None:
        if progress:
            progress(done, total, len(failures), final)
    summary = _Summary()
    try:
        combined = pdf.Document()
    except OSError as exc:
        summary.discard()
        raise output_error(combined_path, exc) from None
    seen: dict[str, int] = {}
    failures: list[tuple[int, str]] = []
    failing: list[str] = []
    files: list[str] = []
    kept: list[str] = []
    record: dict[str, dict] = {}
    count = 0
    base = sheet.parent
    last_save = [time.monotonic()]

    def save_record(final: dict | None = None) -> None:
        data = {"format": MANIFEST_FORMAT, "version": 1, "sheet": str(sheet), "orders": record,
                **(final or {"complete": False})}
        text = json.dumps(data, indent=1, ensure_ascii=True) + "\n"
        write_atomic(manifest_path, text, force=saved[0] or batch_force)
        saved[0] = True

    saved = [False]

    def one(number: int, cells: dict) -> None:
        origin = f"{sheet}, row {number}"
        try:
            if _DAMAGED in cells:
                raise BadInput(cells[_DAMAGED])
            order = build_order(row_job(cells, origin, base))
            if paper:
                order = with_paper(order, paper, "command line")
            name = safe_filename(order.ident.number)
            key = f"{name}.pdf".casefold()
            if key in own:
                raise BadInput(f"order number {order.ident.number!r} gives the file name {name}.pdf, which is "
                               f"the batch's own {own[key]}")
            if key in seen:
                raise BadInput(f"order number {order.ident.number!r} gives the same file name as row {seen[key]}")
            seen[key] = number
            inputs = row_inputs(cells, base, paper)
            data, pages = pdf.render_order(order)
            path = out / f"{name}.pdf"
            digest = _digest(data)
            entry = recorded.get(path.name)
            keep = False
            if carry_on and path.exists():
                on_disk = _file_digest(path)
                keep = on_disk == digest or (entry is not None and entry.get("inputs") == inputs
                                             and entry.get("pdf") == on_disk)
            if keep:
                digest = on_disk
            else:
                path = write_atomic(path, data, force=force)
        except CounterpoiseError as exc:
            reason = " ".join(str(exc).split())
            prefix = f"{origin}: "
            failures.append((number, reason[len(prefix):] if reason.startswith(prefix) else reason))
            summary.failed(number, cells, failures[-1][1])
            return
        try:
            combined.add_pages(pages)
        except OSError as exc:  # the combined document's temporary storage: the batch cannot go on
            raise output_error(combined_path, exc) from None
        (kept if keep else files).append(str(path))
        record[path.name] = {"row": number, "inputs": inputs, "pdf": digest}
        summary.ok(number, order, path.name)
        if not order.passed:
            failing.append(order.ident.number)
        if time.monotonic() - last_save[0] >= MANIFEST_EVERY:
            save_record()
            last_save[0] = time.monotonic()

    try:
        if first is not None:
            for number, cells in _chain(first, rows):
                count += 1
                one(number, cells)
                report(count)
        report(count, final=True)
        final = {"complete": True, "combined": None, "summary": None}
        if combined.orders:
            files.append(str(write_atomic(combined_path, combined.write_to, force=batch_force)))
            final["combined"] = _file_digest(combined_path)
        summary_bytes = summary.finish()
        files.append(str(write_atomic(summary_path, summary_bytes, force=batch_force)))
        final["summary"] = _digest(summary_bytes)
        save_record(final)
        files.append(str(manifest_path))
    except BaseException:
        summary.discard()
        if record:
            try:  # what was written so far, so that the batch can be continued
                save_record()
            except BaseException:
                pass
        raise
    finally:
        combined.close()
    return BatchResult(str(sheet), count, count - len(failures), tuple(failures), tuple(failing), tuple(files),
                       time.perf_counter() - start, tuple(kept))


def _chain(first, rest):
    yield first
    yield from rest


class _Summary:
    """The summary workbook, written row by row in openpyxl's write-only mode.

    Printing: landscape, fitted to the page width only (as many pages down as the rows need), the header
    row repeated on every page, A4 unless most of the rotors built are in inch-pound units (then Letter).
    Every text cell wraps, top-aligned, and every row gets its height from its text (the work order's
    font-width model, :func:`toolkit.workorder.xlsx.wrapped_lines`). Each row states its own angle
    reference and sense, and every operation its angle with them: rows of one batch may count angles
    differently.
    """

    HEADER = ("Row", "Order", "Rotor", "Status", "Units", "Angles from, counted",
              *(f"{label} {n}" for n in range(1, MAX_PLANES + 1)
                for label in ("Plane", "Allowance [g·mm]", "Initial [g·mm]", "Initial angle [°]", "Operations",
                              "Predicted [g·mm]", "Result")),
              "File or reason")
    #: Column widths (units of the digit "0"): narrow, with wrapping, so that the sheet fits one landscape
    #: page wide at a readable scale.
    WIDTHS = (5, 11, 16, 11, 8, 14) + (10, 10, 10, 7, 24, 10, 6) * MAX_PLANES + (16,)

    def __init__(self):
        from openpyxl import Workbook
        from openpyxl.utils import get_column_letter

        from toolkit.workorder.xlsx import in_memory

        self.wb = Workbook(write_only=True)
        self.ws = self.wb.create_sheet("Summary")
        self.ws.freeze_panes = "A2"
        self.ws.print_title_rows = "1:1"
        self.ws.page_setup.orientation = "landscape"
        self.ws.page_setup.fitToWidth = 1
        self.ws.page_setup.fitToHeight = 0
        self.ws.sheet_properties.pageSetUpPr.fitToPage = True
        self.ws.print_options.gridLines = True
        self.ws.oddFooter.right.text = "page &P of &N"
        for col, width in enumerate(self.WIDTHS, start=1):
            self.ws.column_dimensions[get_column_letter(col)].width = width
        in_memory(self.ws)  # after the sheet's settings: rows in memory, never in an openpyxl temporary file
        self.rows = 0
        self.units: list[str] = []
        self._append([self._text(h) for h in self.HEADER], bold=True)

    def _text(self, value, bold: bool = False):
        from openpyxl.cell import WriteOnlyCell
        from openpyxl.styles import Alignment, Font

        from toolkit.workorder.xlsx import FORMULA_START, clean_text

        value = clean_text(value) if isinstance(value, str) else value
        cell = WriteOnlyCell(self.ws, value=value)
        cell.alignment = Alignment(wrap_text=isinstance(value, str), vertical="top")
        if isinstance(value, (int, float)) and not isinstance(value, bool):
            # room of a ")" on the right, so that a number never touches the text of the next column
            cell.number_format = ("0" if isinstance(value, int) else "0.0##") + "_)"
        if bold:
            cell.font = Font(bold=True)
        if isinstance(value, str) and value.startswith(FORMULA_START):
            cell.data_type = "s"
        return cell

    def _append(self, values, bold: bool = False) -> None:
        """Append one row, every value as a top-aligned cell, with the height its wrapped text needs."""
        from toolkit.workorder.xlsx import row_height, wrapped_lines

        cells, lines = [], 1
        for width, value in zip(self.WIDTHS, values):
            cell = value if hasattr(value, "value") else self._text(value, bold)
            if bold and hasattr(value, "value"):
                from openpyxl.styles import Font

                cell.font = Font(bold=True)
            if isinstance(cell.value, str) and cell.value:
                lines = max(lines, wrapped_lines(cell.value, width, 11.0, bold))
            cells.append(cell)
        self.rows += 1
        self.ws.row_dimensions[self.rows].height = row_height(lines)
        self.ws.append(cells)

    def ok(self, number: int, order, file_name: str):
        from toolkit.workorder.model import Formatter

        fmt = Formatter(order.units, order.angle_reference, order.angle_sense)
        status = "ready" if order.passed else "out of tolerance (predicted)"
        row = [number, self._text(order.ident.number), self._text(order.ident.rotor), status, order.units,
               self._text(f"{order.angle_reference}, {order.angle_sense}")]
        for n in range(MAX_PLANES):
            if n < len(order.planes):
                p = order.planes[n]
                ops = "; ".join(f"{op.number}. {op.action} {fmt.mass(op.mass_g)} ({op.kind}) at "
                                f"{fmt.where(op.angle_deg)}" for op in p.operations) or "none"
                row += [self._text(p.name), round(p.tolerance.u_per_g_mm, 3), round(p.initial_g_mm, 3),
                        round(p.initial_deg, 2), self._text(ops), round(p.predicted_g_mm, 3),
                        "PASS" if p.passed else "FAIL"]
            else:
                row += [None] * 7
        row.append(self._text(file_name))
        self.units.append(order.units)
        self._append(row)

    def failed(self, number: int, cells: dict, reason: str):
        self._append([number, self._text(cells.get("order", "")), self._text(cells.get("rotor", "")),
                      "failed", None, None, *([None] * 7 * MAX_PLANES), self._text(reason)])

    def paper(self) -> str:
        """``"Letter"`` when most of the rotors built are in inch-pound units, else ``"A4"``."""
        imperial = sum(1 for u in self.units if u == "imperial")
        return "Letter" if imperial * 2 > len(self.units) else "A4"

    def discard(self) -> None:
        """Close the half-written sheet when a batch stops early (otherwise openpyxl complains on stderr
        when the unsaved sheet is collected)."""
        try:
            self.ws.close()
        except Exception:  # already closed or never started: nothing to discard
            pass

    def finish(self) -> bytes:
        from toolkit.workorder.xlsx import save_bytes

        from openpyxl.worksheet.worksheet import Worksheet

        letter = self.paper() == "Letter"
        self.ws.page_setup.paperSize = Worksheet.PAPERSIZE_LETTER if letter else Worksheet.PAPERSIZE_A4
        return save_bytes(self.wb)
