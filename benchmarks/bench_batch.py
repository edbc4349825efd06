"""Planner batches: our 1,000-rotor batch against a plain openpyxl + reportlab writer, and peak memory.

    python benchmarks/bench_batch.py [--rotors 1000] [--runs 3] [--memory-rows 10000] [--format xlsx]

1. Time. ``counterpoise batch`` on a planner sheet of invented rotors (the rows of examples/planner.csv
   repeated with their own order numbers and readings varied) is timed end to end in a child process. The
   baseline, run alternately in the same session, writes the same output with openpyxl and reportlab
   directly: the same cells in the summary workbook (read back from our summary), and, for every work order,
   the same pages carrying the same text runs at the same places and sizes (extracted from our PDFs with
   pypdf) and a polar diagram's worth of vector drawing per plane (rings, 36 ticks, labels, 4 vectors),
   both as one PDF per rotor and as the combined PDF. The baseline parses nothing, computes nothing and lays
   nothing out: it is the floor of writing these files. Target: ours at most 1.5x the baseline (issue 6),
   median of ``--runs``. CPU time (user + system, from each child's own rusage) is printed first: it hardly
   moves when other work shares the machine; wall time follows, and then where wall time above CPU time
   went: waiting for a CPU (the run queue, from /proc/self/schedstat: other work on the 2 cores) or blocked
   (the rest: disk syncs, sleeps).
2. Memory. ``counterpoise batch`` on a ``--memory-rows`` sheet in a child process that reports its own peak
   resident set (VmHWM). Target: under 500 MB (issue 6). The floor, a child that imports the same
   modules and does nothing, is printed beside it.

Every rotor in these sheets is an invented example. The timing run needs pypdf (the test extra).
"""

from __future__ import annotations

import argparse
import csv
import math
import random
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
EXAMPLES = ROOT / "examples"

#: Peak resident set of the child itself: VmHWM from /proc (fresh at exec), not ru_maxrss, which on Linux
#: carries the parent's peak at fork into the child.
PEAK = ("def peak_kb():\n"
        "    try:\n"
        "        for line in open('/proc/self/status'):\n"
        "            if line.startswith('VmHWM:'):\n"
        "                return int(line.split()[1])\n"
        "    except OSError:\n"
        "        pass\n"
        "    import resource\n"
        "    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss\n"
        "def queued_s():\n"  # time runnable but waiting for a CPU (Linux schedstat; nan elsewhere)
        "    try:\n"
        "        return int(open('/proc/self/schedstat').read().split()[1]) / 1e9\n"
        "    except (OSError, IndexError, ValueError):\n"
        "        return float('nan')\n")
CHILD_BATCH = PEAK + (
    "import resource, sys, time\n"
    "start = time.perf_counter()\n"
    "from toolkit.cli import main\n"
    "rc = main(['batch', sys.argv[1], '--out', sys.argv[2], '--force', '--json'])\n"
    "use = resource.getrusage(resource.RUSAGE_SELF)\n"
    "sys.stderr.write(f'elapsed {time.perf_counter() - start} cpu {use.ru_utime + use.ru_stime} '\n"
    "                 f'queued {queued_s()} peak-kB {peak_kb()}\\n')\n"
    "sys.exit(0 if rc in (0, 1) else rc)\n"
)
CHILD_FLOOR = PEAK + (
    "import resource, sys\n"
    "import toolkit.cli, toolkit.export.files, toolkit.workorder.batch, toolkit.workorder.build\n"
    "import toolkit.export.pdf, openpyxl\n"
    "sys.stderr.write(f'peak-kB {peak_kb()}\\n')\n"
)
CHILD_BASELINE = PEAK + (
    "import pickle, resource, sys, time\n"
    "start = time.perf_counter()\n"
    "sys.path.insert(0, sys.argv[3])\n"
    "from bench_batch import write_baseline\n"
    "with open(sys.argv[1], 'rb') as handle:\n"
    "    plan = pickle.load(handle)\n"
    "write_baseline(plan, sys.argv[2])\n"
    "use = resource.getrusage(resource.RUSAGE_SELF)\n"
    "sys.stderr.write(f'elapsed {time.perf_counter() - start} cpu {use.ru_utime + use.ru_stime} '\n"
    "                 f'queued {queued_s()} peak-kB {peak_kb()}\\n')\n"
)


# -- the invented planner sheet ---------------------------------------------------------------------------------

def _vary(reading: str, rng: random.Random) -> str:
    amount, angle = reading.split("@")
    number, unit = amount.split(" ", 1)
    return f"{float(number) * rng.uniform(0.8, 1.2):.4g} {unit}@{(float(angle) + rng.uniform(-40, 40)) % 360:.1f}"


def planner_rows(rotors: int, seed: int, prefix: str, own_columns_only: bool = False):
    """(header, rows): ``rotors`` invented rotors made from the rows of examples/planner.csv in turn (only
    those holding the rotor in their own columns when ``own_columns_only``), each with its own order number
    ``PREFIX-00001``... and its readings varied."""
    rng = random.Random(seed)
    with (EXAMPLES / "planner.csv").open(encoding="utf-8", newline="") as handle:
        header, *examples = list(csv.reader(handle))
    if own_columns_only:
        examples = [row for row in examples if not row[header.index("job")].strip()]
    rows = []
    for i in range(rotors):
        row = list(examples[i % len(examples)])
        row[header.index("order")] = f"{prefix}-{i + 1:05d}"
        for column in ("plane1_reading", "plane2_reading"):
            j = header.index(column)
            if row[j]:
                row[j] = _vary(row[j], rng)
        rows.append(row)
    return header, rows


def planner(path: Path, rotors: int, seed: int = 7) -> Path:
    """A planner sheet (.csv or .xlsx by suffix) of ``rotors`` invented rotors, with the example job files
    its rows refer to copied beside it."""
    header, rows = planner_rows(rotors, seed, "BENCH")
    for job in EXAMPLES.glob("job-*.toml"):
        shutil.copy(job, path.parent / job.name)
    if path.suffix == ".csv":
        with path.open("w", encoding="utf-8", newline="") as handle:
            csv.writer(handle).writerows([header, *rows])
    else:
        from openpyxl import Workbook

        book = Workbook(write_only=True)
        sheet = book.create_sheet("planner")
        sheet.append(header)
        for row in rows:
            sheet.append(row)
        book.save(path)
    return path


# -- what our batch wrote, as plain data for the baseline ---------------------------------------------------------

def plan_from_output(out: Path) -> dict:
    """The cells of our summary workbook and, per PDF, the text of every page and the count of diagrams."""
    from openpyxl import load_workbook

    try:
        from pypdf import PdfReader
    except ImportError:  # a test dependency: the plain install has no PDF reader
        raise SystemExit("bench_batch.py: the timing run reads our PDFs with pypdf; install the project with "
                         "its test extra (pip install '.[test]') or give --rotors 0 for the memory run alone") from None

    summary = next(out.glob("*-summary.xlsx"))
    book = load_workbook(summary, read_only=True)
    cells = [list(row) for row in book.worksheets[0].iter_rows(values_only=True)]
    book.close()
    orders = []
    for pdf in sorted(out.glob("*.pdf")):
        if pdf.name.endswith("-orders.pdf"):
            continue
        reader = PdfReader(pdf)
        pages = []
        for page in reader.pages:
            runs: list = []

            def visit(text, cm, tm, font, size, runs=runs):
                if text.strip():
                    runs.append((tm[4] * cm[0] + cm[4], tm[5] * cm[3] + cm[5], abs(size * tm[3]) or 8.0,
                                 text.strip("\n")))

            page.extract_text(visitor_text=visit)
            pages.append(runs)
        first = " ".join(r[3] for r in pages[0]) if pages else ""
        orders.append({"name": pdf.name, "pages": pages, "diagrams": min(first.count("Plane ") or 2, 2)})
    return {"summary": cells, "orders": orders}


def _page(canvas, runs: list, diagrams: int, page_number: int) -> None:
    """One page: every text run of our page at its place and size, then the diagrams' vector drawing."""
    current = None
    for x, y, size, text in runs:
        size = min(max(size, 4.0), 24.0)
        if size != current:  # a font change only where the size changes, as a careful writer would
            canvas.setFont("Helvetica", size)
            current = size
        canvas.drawString(x, y, text)
    if page_number == 0:
        canvas.setFont("Helvetica", 6.5)
        for k in range(diagrams):  # a polar diagram: rings, ticks, labels, vectors (one path for the ticks)
            cx, cy, r = 150 + 260 * k, 200, 90
            canvas.circle(cx, cy, r)
            canvas.circle(cx, cy, r * 0.4)
            ticks = canvas.beginPath()
            for a in range(0, 360, 10):
                t = math.radians(a)
                inner = r * (0.92 if a % 30 else 0.85)
                ticks.moveTo(cx + inner * math.cos(t), cy + inner * math.sin(t))
                ticks.lineTo(cx + r * math.cos(t), cy + r * math.sin(t))
                if a % 30 == 0:
                    canvas.drawString(cx + (r + 6) * math.cos(t), cy + (r + 6) * math.sin(t), f"{a}°")
            canvas.drawPath(ticks)
            for a in (40, 130, 220, 310):
                t = math.radians(a)
                canvas.line(cx, cy, cx + 0.7 * r * math.cos(t), cy + 0.7 * r * math.sin(t))
                canvas.rect(cx + 0.7 * r * math.cos(t) - 3, cy + 0.7 * r * math.sin(t) - 3, 6, 6, fill=1)
    canvas.showPage()


def write_baseline(plan: dict, out: str) -> None:
    """Write the same cells and pages with openpyxl and reportlab directly (plain files, no checks)."""
    from openpyxl import Workbook
    from reportlab.lib.pagesizes import A4
    from reportlab.pdfgen.canvas import Canvas

    folder = Path(out)
    folder.mkdir(parents=True, exist_ok=True)
    combined = Canvas(str(folder / "baseline-orders.pdf"), pagesize=A4)
    for order in plan["orders"]:
        single = Canvas(str(folder / order["name"]), pagesize=A4)
        for i, runs in enumerate(order["pages"]):
            _page(single, runs, order["diagrams"], i)
            _page(combined, runs, order["diagrams"], i)
        single.save()
    combined.save()
    book = Workbook(write_only=True)
    sheet = book.create_sheet("Summary")
    for row in plan["summary"]:
        sheet.append(row)
    book.save(folder / "baseline-summary.xlsx")


# -- running and measuring -------------------------------------------------------------------------------------------

def _child(code: str, *args: str) -> tuple[float, float, float, float]:
    """Run a child; return its wall time [s], CPU time [s] (user + system), peak resident set [MB] and the
    time it was runnable but waiting for a CPU [s] (the run queue: other work on the machine)."""
    # -P: the child does not put the current folder first on its path, so run from the repository's root it
    # still times the installed package, not the source tree
    result = subprocess.run([sys.executable, "-P", "-c", code, *args], capture_output=True, text=True, timeout=3600)
    if result.returncode != 0:
        raise SystemExit(f"child failed ({result.returncode}): {result.stderr.strip()[-800:]}")
    line = [ln for ln in result.stderr.splitlines() if "peak-kB" in ln][-1].split()
    elapsed = float(line[line.index("elapsed") + 1]) if "elapsed" in line else math.nan
    cpu = float(line[line.index("cpu") + 1]) if "cpu" in line else math.nan
    queued = float(line[line.index("queued") + 1]) if "queued" in line else math.nan
    return elapsed, cpu, int(line[line.index("peak-kB") + 1]) / 1024, queued


def _installed() -> str:
    """Where the children import the toolkit from, and whether that is what a user installs."""
    found = subprocess.run([sys.executable, "-P", "-c", "import toolkit; print(toolkit.__file__)"],
                           capture_output=True, text=True, timeout=120).stdout.strip()
    if not found:
        raise SystemExit("the toolkit is not installed for this interpreter; pip install . first")
    if Path(found).resolve().is_relative_to(ROOT):
        return (f"{Path(found).parent} (the source tree: an editable install; for figures to quote, "
                "pip install . into a fresh virtual environment)")
    return f"{Path(found).parent} (installed, not editable)"


def time_batch(rotors: int, runs: int, fmt: str) -> bool:
    import pickle

    with tempfile.TemporaryDirectory() as tmp:
        tmp = Path(tmp)
        sheet = planner(tmp / f"planner.{fmt}", rotors)
        ours_out, base_out = tmp / "ours", tmp / "baseline"
        _child(CHILD_BATCH, str(sheet), str(ours_out))  # warm-up, and the output the baseline copies
        plan = plan_from_output(ours_out)
        pages = sum(len(o["pages"]) for o in plan["orders"])
        plan_file = tmp / "plan.pickle"
        plan_file.write_bytes(pickle.dumps(plan))
        ours, base = [], []
        for _ in range(runs):
            ours.append(_child(CHILD_BATCH, str(sheet), str(ours_out)))
            shutil.rmtree(base_out, ignore_errors=True)
            base.append(_child(CHILD_BASELINE, str(plan_file), str(base_out), str(Path(__file__).parent)))
    print(f"batch of {rotors:,} rotors ({fmt}; {len(plan['orders']):,} orders, {pages:,} pages each in the "
          f"per-rotor and combined PDFs, {len(plan['summary']):,} summary rows)")
    ok = True
    for i, what in ((1, "CPU time"), (0, "wall time")):
        a, b = statistics.median(r[i] for r in ours), statistics.median(r[i] for r in base)
        ratio = a / b
        verdict = "meets" if ratio <= 1.5 else "MISSES"
        ok = ok and ratio <= 1.5
        print(f"  {what:<9} counterpoise batch {a:8.2f} s   plain openpyxl + reportlab {b:8.2f} s   "
              f"ratio {ratio:5.2f}  (target <= 1.5: {verdict})")
    # where wall time above CPU time went: waiting for a CPU (other work on the machine), or blocked (disk
    # syncs, sleeps): wall - CPU - queued
    waits = [(statistics.median(r[3] for r in rs), statistics.median(r[0] - r[1] - r[3] for r in rs))
             for rs in (ours, base)]
    print(f"  waiting   counterpoise batch {waits[0][0]:8.2f} s for a CPU, {waits[0][1]:5.2f} s blocked   "
          f"plain openpyxl + reportlab {waits[1][0]:8.2f} s for a CPU, {waits[1][1]:5.2f} s blocked")
    return ok


def memory_batch(rows: int, fmt: str) -> bool:
    with tempfile.TemporaryDirectory() as tmp:
        tmp = Path(tmp)
        sheet = planner(tmp / f"planner.{fmt}", rows)
        elapsed, _cpu, peak, _queued = _child(CHILD_BATCH, str(sheet), str(tmp / "out"))
        _none, _cpu, floor, _queued = _child(CHILD_FLOOR)
    verdict = "meets" if peak < 500 else "MISSES"
    print(f"peak memory, batch of {rows:,} rows ({fmt}): {peak:7.1f} MB  (imports alone {floor:6.1f} MB; "
          f"{elapsed:.1f} s; target < 500 MB: {verdict})")
    return peak < 500


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rotors", type=int, default=1000, help="0 to skip the timing run")
    parser.add_argument("--runs", type=int, default=3)
    parser.add_argument("--memory-rows", type=int, default=10_000, help="0 to skip the memory run")
    parser.add_argument("--format", choices=("xlsx", "csv"), default="xlsx")
    args = parser.parse_args(argv)
    print(f"python {sys.version.split()[0]}; median of {args.runs} runs, alternating; invented rotors")
    print(f"timing {_installed()}")
    ok = [time_batch(args.rotors, args.runs, args.format)] if args.rotors else []
    if args.memory_rows:
        ok.append(memory_batch(args.memory_rows, args.format))
    return 0 if all(ok) else 1


if __name__ == "__main__":
    sys.exit(main())
