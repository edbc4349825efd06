"""Where a batch's wall time above its CPU time goes: syncing each file, or waiting for a CPU.

    python benchmarks/bench_batch_waits.py [--rotors 1000] [--rounds 3]

``counterpoise batch`` on the invented planner sheet of ``bench_batch.py`` runs in a child process, in
rounds that alternate two children: one as installed, one with ``os.fsync`` made a no-op (a measurement
only: the toolkit itself always syncs). Each child reports its wall and CPU time, the time it spent inside
``os.fsync`` and ``os.replace`` (wall clock around each call), its run-queue wait (runnable but waiting for a
CPU, from /proc/self/schedstat, Linux) and what is left, "blocked" (wall - CPU - run-queue wait: disk,
sleeps), with its voluntary and involuntary context switches. Every rotor in the sheet is invented.
"""

from __future__ import annotations

import argparse
import subprocess
import sys
import tempfile
from pathlib import Path

CHILD = r"""
import contextlib, io, os, resource, sys, time
mode, sheet, out = sys.argv[1:4]
spent = {"fsync": [0.0, 0], "replace": [0.0, 0]}
def timed(name, call):
    def wrapper(*args, **kwargs):
        start = time.perf_counter()
        try:
            return call(*args, **kwargs)
        finally:
            spent[name][0] += time.perf_counter() - start
            spent[name][1] += 1
    return wrapper
os.fsync = timed("fsync", (lambda fd: None) if mode == "no-sync" else os.fsync)
os.replace = timed("replace", os.replace)
start = time.perf_counter()
from toolkit.cli import main
with contextlib.redirect_stdout(io.StringIO()):
    rc = main(["batch", sheet, "--out", out, "--force", "--json"])
wall = time.perf_counter() - start
use = resource.getrusage(resource.RUSAGE_SELF)
try:
    queued = int(open("/proc/self/schedstat").read().split()[1]) / 1e9
except (OSError, IndexError, ValueError):
    queued = float("nan")
cpu = use.ru_utime + use.ru_stime
print(f"{mode:<9} rc {rc}  wall {wall:6.2f} s  CPU {cpu:6.2f} s  wall - CPU {wall - cpu:5.2f} s: "
      f"waiting for a CPU {queued:5.2f} s, blocked {wall - cpu - queued:5.2f} s;  "
      f"in fsync {spent['fsync'][0]:4.2f} s ({spent['fsync'][1]} calls), in replace {spent['replace'][0]:4.2f} s;  "
      f"context switches voluntary {use.ru_nvcsw}, involuntary {use.ru_nivcsw}")
"""


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rotors", type=int, default=1000)
    parser.add_argument("--rounds", type=int, default=3)
    args = parser.parse_args(argv)
    sys.path.insert(0, str(Path(__file__).resolve().parent))
    from bench_batch import _installed, planner

    print(f"python {sys.version.split()[0]}; {args.rotors:,} invented rotors; timing {_installed()}")
    with tempfile.TemporaryDirectory() as tmp:
        sheet = planner(Path(tmp) / "planner.xlsx", args.rotors)
        for _ in range(args.rounds):
            for mode in ("as-is", "no-sync"):
                # -P: the child imports the installed package even when run from the repository's root
                done = subprocess.run([sys.executable, "-P", "-c", CHILD, mode, str(sheet), str(Path(tmp) / mode)],
                                      capture_output=True, text=True, timeout=3600)
                if done.returncode != 0:
                    raise SystemExit(f"child failed ({done.returncode}): {done.stderr.strip()[-800:]}")
                print(done.stdout.strip())
    return 0


if __name__ == "__main__":
    sys.exit(main())
