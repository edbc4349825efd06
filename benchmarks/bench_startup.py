"""Start-up time of the command line against plain baselines, measured in the same run.

    python benchmarks/bench_startup.py [--runs 15]

Targets (ratios of medians):
- ``counterpoise --help`` and an argument error: at most 4x ``python -c pass``;
- a calculator command (``tolerance``, ``drill``): at most 1.15x the floor
  ``python -c "import pint; pint.UnitRegistry(cache_folder=':auto:')"``.

Each command is run alternately with its baseline, so that drifts in machine load hit both alike. Wall time
is what the operator waits; CPU time (user + system of the child) is printed under it because it hardly
moves when other work shares the machine.
"""

from __future__ import annotations

import argparse
import os
import resource
import shutil
import statistics
import subprocess
import sys
import time

PASS = [sys.executable, "-c", "pass"]
PINT_FLOOR = [sys.executable, "-c", "import pint; pint.UnitRegistry(cache_folder=':auto:')"]


def counterpoise() -> list[str]:
    script = shutil.which("counterpoise", path=os.path.dirname(sys.executable)) or shutil.which("counterpoise")
    return [script] if script else [sys.executable, "-m", "toolkit"]


#: Children run with Python's bytecode cache on, as an installed package has it (pip compiles on install):
#: with PYTHONDONTWRITEBYTECODE set, every run would compile our modules from source while pint and numpy,
#: compiled at their install, would not, and the ratios would measure that instead of our imports.
ENV = {k: v for k, v in os.environ.items() if k != "PYTHONDONTWRITEBYTECODE"}


def elapsed(cmd: list[str]) -> tuple[float, float]:
    """Wall time and CPU time (user + system, from the children's rusage) of one run [s]."""
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    start = time.perf_counter()
    subprocess.run(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, check=False, env=ENV)
    wall = time.perf_counter() - start
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    return wall, (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)


def compare(label: str, cmd: list[str], baseline: list[str], runs: int, target: float) -> bool:
    for _ in range(2):  # warm the file cache and pint's registry cache
        elapsed(cmd), elapsed(baseline)
    ours, base = [], []
    for _ in range(runs):
        ours.append(elapsed(cmd))
        base.append(elapsed(baseline))
    ok = True
    for i, what in ((0, "wall"), (1, "CPU")):
        a, b = statistics.median(r[i] for r in ours), statistics.median(r[i] for r in base)
        ratio = a / b
        verdict = "meets" if ratio <= target else "MISSES"
        ok = ok and ratio <= target
        print(f"{label if i == 0 else '':<44} {what:>4} {a * 1000:7.1f} ms  baseline {b * 1000:7.1f} ms  "
              f"ratio {ratio:5.2f}  (target <= {target}: {verdict})")
    return ok


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--runs", type=int, default=15)
    args = parser.parse_args(argv)
    cp = counterpoise()
    print(f"python {sys.version.split()[0]}; command: {' '.join(cp)}; median of {args.runs} runs")
    if "PYTHONDONTWRITEBYTECODE" in os.environ:
        print("note: PYTHONDONTWRITEBYTECODE is set in this shell; the runs below have the bytecode cache on, "
              "as an installed package does")
    checks = [
        ("counterpoise --help  vs  python -c pass", cp + ["--help"], PASS, 4.0),
        ("argument error  vs  python -c pass", cp + ["tolerance", "--mass"], PASS, 4.0),
        ("tolerance  vs  pint registry floor",
         cp + ["tolerance", "--grade", "G6.3", "--mass", "100 kg", "--speed", "3000 rpm"], PINT_FLOOR, 1.15),
        ("drill  vs  pint registry floor",
         cp + ["drill", "--unbalance", "2400 g*mm", "--radius", "150 mm", "--axial", "--diameter", "10 mm",
               "--material", "steel"], PINT_FLOOR, 1.15),
    ]
    ok = [compare(label, cmd, base, args.runs, target) for label, cmd, base, target in checks]
    return 0 if all(ok) else 1


if __name__ == "__main__":
    sys.exit(main())
