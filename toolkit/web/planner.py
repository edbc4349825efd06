"""Planner batches through the browser: an uploaded sheet runs in the background through the same
:func:`toolkit.export.files.write_batch` as ``counterpoise batch``; the page shows its progress, every
failed row with its row number and reason, and the orders as one zip download.

An uploaded sheet is read with the command line's own bounded readers. A row that names a job file (the
``job`` column) is refused for an upload: such a file would be looked for on the server.
"""

from __future__ import annotations

import secrets
import shutil
import tempfile
import threading
import zipfile
from dataclasses import dataclass, field
from pathlib import Path

from toolkit.errors import BadInput, CounterpoiseError

__all__ = ["Batches", "SUFFIXES"]

SUFFIXES = (".csv", ".xlsx")
KEEP = 20  # batches kept per server; the oldest are removed (common practice, no source)


@dataclass
class Batch:
    ident: str
    owner: str
    sheet: str
    folder: Path
    done: int = 0
    total: int | None = None
    failed: int = 0
    finished: bool = False
    result: dict | None = None
    error: str | None = None
    lock: threading.Lock = field(default_factory=threading.Lock)

    def state(self) -> dict:
        with self.lock:
            return {"id": self.ident, "done": self.done, "total": self.total, "failed": self.failed,
                    "finished": self.finished, "error": self.error,
                    "failures": (self.result or {}).get("failures", []),
                    "orders": len((self.result or {}).get("files", []))}


class Batches:
    """The batches of one server, each in its own temporary folder."""

    def __init__(self):
        self._all: dict[str, Batch] = {}
        self._lock = threading.Lock()
        self.root = Path(tempfile.mkdtemp(prefix="counterpoise-web-batches-"))

    def start(self, owner: str, filename: str, data: bytes, paper: str | None) -> Batch:
        suffix = Path(filename or "").suffix.lower()
        if suffix not in SUFFIXES:
            raise BadInput(f"planner sheet: {Path(filename or '').name[:80]!r} is not a .csv or .xlsx file")
        ident = secrets.token_urlsafe(12)
        folder = self.root / ident
        (folder / "out").mkdir(parents=True)
        sheet = folder / f"planner{suffix}"
        sheet.write_bytes(data)
        from toolkit.workorder.batch import read_rows

        try:
            for row, cells in read_rows(sheet):
                if str(cells.get("job", "") or "").strip():
                    raise BadInput(f"planner sheet row {row}: names a job file (column job); an uploaded sheet "
                                   "must hold every rotor in its own columns")
        except CounterpoiseError:
            shutil.rmtree(folder, ignore_errors=True)
            raise
        batch = Batch(ident, owner, Path(filename).name[:120], folder)
        with self._lock:
            self._all[ident] = batch
            for old in list(self._all)[:-KEEP]:
                shutil.rmtree(self._all.pop(old).folder, ignore_errors=True)
        threading.Thread(target=self._run, args=(batch, sheet, paper), daemon=True).start()
        return batch

    def _run(self, batch: Batch, sheet: Path, paper: str | None) -> None:
        from toolkit.export.files import write_batch

        def progress(done, total, failed, final=False):
            with batch.lock:
                batch.done, batch.total, batch.failed = done, total, failed

        try:
            result = write_batch(sheet, batch.folder / "out", progress=progress, paper=paper).to_dict()
            with batch.lock:
                batch.result = result
        except CounterpoiseError as exc:
            with batch.lock:
                batch.error = str(exc).replace(str(sheet), batch.sheet)
        except Exception as exc:  # a bug: one line on the page, never a traceback
            with batch.lock:
                batch.error = f"internal error ({type(exc).__name__}); please report it"
        finally:
            with batch.lock:
                batch.finished = True

    def get(self, ident: str, owner: str) -> Batch | None:
        with self._lock:
            batch = self._all.get(ident)
        return batch if batch is not None and batch.owner == owner else None

    def zip_bytes(self, batch: Batch) -> bytes:
        """The batch's files in one zip (names only, no folders). PDFs and workbooks are stored as they are:
        their contents are compressed already (deflating a work order's PDF saved a tenth of it and cost a
        few seconds for a 1,000-rotor batch); the rest is deflated."""
        import io

        buffer = io.BytesIO()
        out = (batch.folder / "out").resolve()
        with zipfile.ZipFile(buffer, "w", zipfile.ZIP_DEFLATED) as z:
            for path in sorted(out.iterdir()):
                if path.is_file() and path.resolve().parent == out:
                    stored = path.suffix.lower() in (".pdf", ".xlsx")
                    z.write(path, arcname=path.name, compress_type=zipfile.ZIP_STORED if stored else None)
        return buffer.getvalue()
