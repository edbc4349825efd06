"""Writing a work order's files and a planner batch's files: the one place that decides which files are
written, what they are called and in which order, through :mod:`toolkit.fileio` (atomic writes, nothing
replaced without ``force``). The command line calls these functions, so a library user gets exactly the
files the command writes.

- :func:`write_order`: ``<order>.xlsx`` and/or ``<order>.pdf`` of one work order, written together.
- :func:`write_batch`: for every row of a planner sheet (turned into orders by
  :func:`toolkit.workorder.batch.orders`), ``<order>.pdf`` (and ``<order>.xlsx`` when asked for), then
  ``<sheet>-orders.pdf`` (every order in one document, each with its own page numbers),
  ``<sheet>-summary.xlsx`` (one row per rotor: allowances, corrections, predicted residuals, status, files or
  reason) and ``<sheet>-batch.json`` (the batch's record, used to continue an interrupted batch).

Nothing here prints: progress reaches the caller through a callback. Memory grows with the combined PDF's
compressed pages only (each order is drawn once and its pages finished at once; the summary is written in
openpyxl's write-only mode).
"""

from __future__ import annotations

import time
from dataclasses import dataclass, field
from pathlib import Path

from toolkit.errors import BadInput, CounterpoiseError

__all__ = ["ORDER_FORMATS", "BatchResult", "write_order", "order_files", "write_batch"]

#: The files a work order can have, in the order they are written.
ORDER_FORMATS = ("xlsx", "pdf")
#: Planes per row in the summary workbook (as many as a planner row has).
MAX_PLANES = 2


def _folder(out) -> Path:
    from toolkit.errors import OutputError
    from toolkit.fileio import describe

    out = Path(out)
    kind = describe(out)
    if kind is not None:
        raise OutputError(f"{out} is {kind}; the output must be a folder (it is created if missing)")
    return out


def _formats(formats) -> tuple[str, ...]:
    chosen = tuple(dict.fromkeys(str(f).strip().lower() for f in formats))
    bad = [f for f in chosen if f not in ORDER_FORMATS]
    if not chosen or bad:
        raise BadInput(f"formats: {list(formats)!r} is not allowed; give 'xlsx', 'pdf' or both")
    return chosen


def _render(fmt: str, order):
    """The bytes of one file of an order (the PDF also gives its pages, for a combined document)."""
    from toolkit.export import pdf, xlsx

    if fmt == "pdf":
        return pdf.render_order(order)
    return xlsx.to_bytes(order), None


def order_files(order, formats=ORDER_FORMATS) -> dict[str, bytes]:
    """The files of one work order as ``{file name: bytes}`` (``<order>.xlsx``, ``<order>.pdf``), in the
    order given, without writing anything."""
    from toolkit.fileio import safe_filename

    stem = safe_filename(order.ident.number)
    return {f"{stem}.{fmt}": _render(fmt, order)[0] for fmt in _formats(formats)}


def write_order(order, out=".", formats=ORDER_FORMATS, *, force: bool = False) -> list[str]:
    """Write the chosen files of one work order into the folder ``out``, together: nothing is written if
    any target exists (without ``force``), and two runs writing the same order never leave a mixed pair.
    Returns the paths written."""
    from toolkit.fileio import check_writable, output_error, safe_filename, write_together

    folder = _folder(out)
    formats = _formats(formats)
    stem = safe_filename(order.ident.number)
    paths = {fmt: folder / f"{stem}.{fmt}" for fmt in formats}
    for path in paths.values():
        check_writable(path, force)
    data = {}
    for fmt in ORDER_FORMATS:
        if fmt in paths:
            try:
                data[fmt] = _render(fmt, order)[0]
            except OSError as exc:  # a library's scratch space (a full temporary folder)
                raise output_error(paths[fmt], exc) from None
    written = write_together([(paths[fmt], data[fmt]) for fmt in formats], force=force)
    return [str(Path(p)) for p in written]


# -- planner batches -----------------------------------------------------------------------------------------

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


def write_batch(sheet: str | Path, out: str | Path = ".", *, force: bool = False, progress=None,
                carry_on: bool = False, paper: str | None = None, formats=("pdf",), template_for=None,
                prepare=None, written=None) -> BatchResult:
    """Turn every row of a planner sheet into a work order and write its files.

    Writes ``<order>.pdf`` per rotor (and ``<order>.xlsx`` beside it when ``formats`` holds ``"xlsx"``), the
    combined PDF, the summary workbook and the batch's record (``<sheet>-batch.json``) into ``out``
    (atomically; an existing file is replaced only with ``force``). A row that cannot be built is recorded
    with its row number and reason; the others go on. A row whose file name is taken by another row or by
    the batch's own files fails with that reason before anything of it is written.

    ``carry_on`` continues an interrupted batch: a row whose files are already in the folder, made from the
    same inputs (the record's hash) or, for the PDF, byte for byte what the row gives now, is kept as it is;
    the summary and the combined PDF are made over every row, and the batch's own files of the earlier run
    are replaced.

    ``progress(done, total, failed, final)`` hears of each row (see :func:`toolkit.workorder.batch.orders`);
    ``template_for(name)`` gives the job data of a stored rotor type for the ``rotor_type`` column.
    ``prepare(row, make)`` is called with each built :class:`~toolkit.workorder.batch.Row` instead of making
    its files: it calls ``make(order)`` with the order to write (for instance the order as a register
    numbered it) and returns what that returns, so that it can record the row around the making of its
    files (a row whose files fail is then not recorded); ``written(row, order, paths)`` is called after its
    files are in place. A refusal (:class:`~toolkit.errors.CounterpoiseError`) raised by ``prepare`` fails
    that row with its reason; any other error, and any error of ``written``, stops the batch.

    Raises :class:`~toolkit.errors.BadInput` only for problems of the whole sheet (missing, unreadable,
    unknown columns) and :class:`~toolkit.errors.OutputError` when the summary or combined files exist
    without ``force`` (or, with ``carry_on``, were not made by the recorded batch), or cannot be written.
    """
    from toolkit.fileio import safe_filename
    from toolkit.export import pdf
    from toolkit.workorder.batch import orders

    start = time.perf_counter()
    sheet = Path(sheet)
    out = _folder(out)
    formats = tuple(f for f in ("pdf", "xlsx") if f in _formats(formats))
    if "pdf" not in formats:
        raise BadInput("formats: a batch always writes the PDF of each order; add 'xlsx' to it for workbooks")
    stem = safe_filename(sheet.stem, "planner")
    combined_path = out / f"{stem}-orders.pdf"
    summary_path = out / f"{stem}-summary.xlsx"
    manifest_path = out / f"{stem}-batch.json"
    earlier = _load_manifest(manifest_path) if (carry_on and not force) else None
    batch_force = _check_own_files(combined_path, summary_path, manifest_path, earlier, force=force,
                                   carry_on=carry_on)
    here = [0]  # rows failed here (file names taken), beside those the rows' reader counted

    def report(done: int, total, failed: int, final: bool) -> None:
        progress(done, total, failed + here[0], final)

    rows = orders(sheet, paper=paper, progress=report if progress else None, template_for=template_for)
    first = next(rows, None)  # sheet-level problems surface before anything is written
    summary = _Summary()
    try:
        combined = pdf.Document()
    except OSError as exc:
        from toolkit.fileio import output_error

        summary.discard()
        raise output_error(combined_path, exc) from None
    batch = _Batch(sheet, out, formats, (combined_path, summary_path, manifest_path), earlier, here, summary,
                   combined, force=force, batch_force=batch_force, carry_on=carry_on, prepare=prepare,
                   written=written)
    count = 0
    try:
        if first is not None:
            for row in _chain(first, rows):
                count += 1
                batch.one(row)
        batch.finish()
    except BaseException:
        batch.abandon()
        raise
    finally:
        combined.close()
    return BatchResult(str(sheet), count, count - len(batch.failures), tuple(batch.failures),
                       tuple(batch.failing), tuple(batch.files), time.perf_counter() - start, tuple(batch.kept))


def _check_own_files(combined_path: Path, summary_path: Path, manifest_path: Path, earlier: dict | None, *,
                     force: bool, carry_on: bool) -> bool:
    """Check that the batch's own files (combined PDF, summary, record) may be written; return whether they
    may be replaced."""
    from toolkit.fileio import check_writable

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
    return batch_force


class _Batch:
    """One batch being written: each row's files, the batch's record, the summary and the combined PDF."""

    def __init__(self, sheet: Path, out: Path, formats: tuple[str, ...], own_paths: tuple[Path, Path, Path],
                 earlier: dict | None, here: list[int], summary, combined, *, force: bool, batch_force: bool,
                 carry_on: bool, prepare, written):
        self.sheet, self.out, self.formats = sheet, out, formats
        self.combined_path, self.summary_path, self.manifest_path = own_paths
        self.own = {p.name.casefold(): p.name for p in own_paths}
        self.recorded = earlier.get("orders", {}) if earlier else {}
        self.here, self.summary, self.combined = here, summary, combined
        self.force, self.batch_force, self.carry_on = force, batch_force, carry_on
        self.prepare, self.written = prepare, written
        self.failures: list[tuple[int, str]] = []
        self.seen: dict[str, int] = {}
        self.failing: list[str] = []
        self.files: list[str] = []
        self.kept: list[str] = []
        self.record: dict[str, dict] = {}
        self.last_save = time.monotonic()
        self.saved = False

    def save_record(self, final: dict | None = None) -> None:
        """Write the batch's record (``<sheet>-batch.json``): the rows done so far, or the finished batch."""
        import json

        from toolkit.fileio import write_atomic

        data = {"format": MANIFEST_FORMAT, "version": 1, "sheet": str(self.sheet), "orders": self.record,
                **(final or {"complete": False})}
        text = json.dumps(data, indent=1, ensure_ascii=True) + "\n"
        write_atomic(self.manifest_path, text, force=self.saved or self.batch_force)
        self.saved = True

    def fail(self, row, reason: str) -> None:
        """Record a row that gave no order, with its reason."""
        self.failures.append((row.number, reason))
        self.summary.failed(row.number, row.cells, reason)

    def one(self, row) -> None:
        """Write one row's files, or record why it failed; add it to the combined PDF, summary and record."""
        from toolkit.fileio import output_error
        from toolkit.workorder.batch import reason_of

        if row.failed:
            self.fail(row, row.reason)
            return
        try:
            order, paths, pages, digests, placed = self._write_files(row)
        except CounterpoiseError as exc:
            self.here[0] += 1
            self.fail(row, reason_of(exc, row.origin))
            return
        try:
            self.combined.add_pages(pages)
        except OSError as exc:  # the combined document's temporary storage: the batch cannot go on
            raise output_error(self.combined_path, exc) from None
        for fmt in self.formats:
            (self.files if str(paths[fmt]) in placed else self.kept).append(str(paths[fmt]))
        self.record[paths["pdf"].name] = {"row": row.number, "inputs": row.inputs, **digests}
        self.summary.ok(row.number, order, ", ".join(paths[fmt].name for fmt in self.formats))
        if not order.passed:
            self.failing.append(order.ident.number)
        if self.written:
            self.written(row, order, [str(paths[fmt]) for fmt in self.formats])
        if time.monotonic() - self.last_save >= MANIFEST_EVERY:
            self.save_record()
            self.last_save = time.monotonic()

    def _write_files(self, row):
        """Make a built row's files and write those not kept from an earlier run; return the order, the
        paths, the PDF's pages, the files' digests and the paths written now."""
        if self.prepare:
            return self.prepare(row, lambda order: self._make(row, order))
        return self._make(row, row.order)

    def _make(self, row, order):
        """:meth:`_write_files` for the order to write."""
        from toolkit.fileio import safe_filename, write_together

        name = safe_filename(order.ident.number)
        key = f"{name}.pdf".casefold()
        if key in self.own:
            raise BadInput(f"order number {order.ident.number!r} gives the file name {name}.pdf, which is "
                           f"the batch's own {self.own[key]}")
        if key in self.seen:
            raise BadInput(f"order number {order.ident.number!r} gives the same file name as row {self.seen[key]}")
        self.seen[key] = row.number
        made = {fmt: _render(fmt, order) for fmt in self.formats}
        pages = made["pdf"][1]
        paths = {fmt: self.out / f"{name}.{fmt}" for fmt in self.formats}
        digests = {fmt: _digest(made[fmt][0]) for fmt in self.formats}
        keep = self._kept(row, paths, digests)
        new = [(paths[fmt], made[fmt][0]) for fmt in self.formats if not keep[fmt]]
        placed = {str(p) for p in write_together(new, force=self.force)} if new else set()
        return order, paths, pages, digests, placed

    def _kept(self, row, paths: dict, digests: dict) -> dict[str, bool]:
        """Which of a row's files an interrupted batch keeps (same inputs, or the same PDF); a kept file's
        digest becomes the one on disk."""
        entry = self.recorded.get(paths["pdf"].name)
        keep = {}
        for fmt in self.formats:
            keep[fmt] = False
            if self.carry_on and paths[fmt].exists():
                on_disk = _file_digest(paths[fmt])
                same_inputs = entry is not None and entry.get("inputs") == row.inputs
                keep[fmt] = (fmt == "pdf" and on_disk == digests[fmt]) or (same_inputs and
                                                                          entry.get(fmt) == on_disk)
                if keep[fmt]:
                    digests[fmt] = on_disk
        return keep

    def finish(self) -> None:
        """Write the combined PDF (if any order was made), the summary workbook and the finished record."""
        from toolkit.fileio import write_atomic

        final = {"complete": True, "combined": None, "summary": None}
        # the record on disk says "not finished" before the batch's own files are replaced: a run stopped
        # between them (even by SIGKILL) leaves files that the next run may replace, never a record that
        # vouches for files it did not make
        self.save_record()
        if self.combined.orders:
            self.files.append(str(write_atomic(self.combined_path, self.combined.write_to, force=self.batch_force)))
            final["combined"] = _file_digest(self.combined_path)
        summary_bytes = self.summary.finish()
        self.files.append(str(write_atomic(self.summary_path, summary_bytes, force=self.batch_force)))
        final["summary"] = _digest(summary_bytes)
        self.save_record(final)
        self.files.append(str(self.manifest_path))

    def abandon(self) -> None:
        """After an error: drop the summary and record the rows written so far, so the batch can go on later."""
        self.summary.discard()
        if self.record:
            try:  # what was written so far, so that the batch can be continued
                self.save_record()
            except BaseException:
                pass


def _chain(first, rest):
    yield first
    yield from rest


class _Summary:
    """The summary workbook, written row by row in openpyxl's write-only mode.

    Printing: landscape, fitted to the page width only (as many pages down as the rows need), the header
    row repeated on every page, A4 unless most of the rotors built are in inch-pound units (then Letter).
    Every text cell wraps, top-aligned, and every row gets its height from its text (the work order's
    font-width model, :func:`toolkit.export.xlsx.wrapped_lines`). Each row states its own angle
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

        from toolkit.export.xlsx import in_memory

        from openpyxl.styles import Alignment, Font

        self._align = {wrap: Alignment(wrap_text=wrap, vertical="top") for wrap in (False, True)}
        self._bold = Font(bold=True)
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

        from toolkit.export.xlsx import FORMULA_START, clean_text

        value = clean_text(value) if isinstance(value, str) else value
        cell = WriteOnlyCell(self.ws, value=value)
        cell.alignment = self._align[isinstance(value, str)]  # one style object per kind (made once)
        if isinstance(value, (int, float)) and not isinstance(value, bool):
            # room of a ")" on the right, so that a number never touches the text of the next column
            cell.number_format = ("0" if isinstance(value, int) else "0.0##") + "_)"
        if bold:
            cell.font = self._bold
        if isinstance(value, str) and value.startswith(FORMULA_START):
            cell.data_type = "s"
        return cell

    def _append(self, values, bold: bool = False) -> None:
        """Append one row, every value as a top-aligned cell, with the height its wrapped text needs."""
        from toolkit.export.xlsx import row_height, wrapped_lines

        cells, lines = [], 1
        for width, value in zip(self.WIDTHS, values):
            cell = value if hasattr(value, "value") else self._text(value, bold)
            if bold and hasattr(value, "value"):
                cell.font = self._bold
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
        from toolkit.export.xlsx import save_bytes

        from openpyxl.worksheet.worksheet import Worksheet

        letter = self.paper() == "Letter"
        self.ws.page_setup.paperSize = Worksheet.PAPERSIZE_LETTER if letter else Worksheet.PAPERSIZE_A4
        return save_bytes(self.wb)
