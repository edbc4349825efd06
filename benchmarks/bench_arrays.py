"""Array path: U_per and the bearing-plane allowances for many rotors, ours against plain numpy, same run.

    python benchmarks/bench_arrays.py [--rotors 1000000] [--runs 7]

Our path takes quantity arrays (pint) through the public functions of ``toolkit.tolerance``:
``permissible_unbalance(grade, masses, speeds)`` then ``bearing_allowances(u_per, spans, centres)``. The
baseline is plain numpy on the same magnitudes: U_per = 9549.297 * G * m / n (ISO 21940-11:2016, 6.3.3, shop
form) and the lever rule with shares bounded to 0.3..0.7, with no unit handling and no input checks.
Target: ours at most 2x the baseline (issue 6). Both are timed alternately; the figure is the median.

A second line gives the same with masses in lb, speeds in Hz and lengths in inches, so the unit
conversion at the boundary is in the timing too; the baseline then starts from the same imperial numbers
and converts them with plain multiplications. The data are random, invented rotors.
"""

from __future__ import annotations

import argparse
import statistics
import sys
import time

import numpy as np

SHOP_CONSTANT = 60000.0 / (2.0 * np.pi)  # 9549.297: ISO 21940-11 shop form, U_per = 9549 G m / n
LB_KG = 0.45359237                        # exact, international pound (1959)
IN_MM = 25.4                              # exact, international inch (1959)


def rotors(count: int, seed: int = 1):
    """Invented rotors: mass [kg], speed [r/min], bearing span [mm], centre of mass from A [mm]."""
    rng = np.random.default_rng(seed)
    mass = rng.uniform(1.0, 5000.0, count)
    speed = rng.uniform(300.0, 12000.0, count)
    span = rng.uniform(100.0, 3000.0, count)
    com = span * rng.uniform(0.1, 0.9, count)
    return mass, speed, span, com


def baseline(grade: float, mass, speed, span, com, *, imperial: bool = False):
    if imperial:  # lb, Hz (revolutions per second), in -> kg, r/min, mm
        mass, speed, span, com = mass * LB_KG, speed * 60.0, span * IN_MM, com * IN_MM
    u = SHOP_CONSTANT * grade * mass / speed
    share_a = np.clip((span - com) / span, 0.3, 0.7)
    u_a = u * share_a
    return u, u_a, u - u_a


def ours(grade: str, mass_q, speed_q, span_q, com_q):
    from toolkit.tolerance import bearing_allowances, permissible_unbalance

    u = permissible_unbalance(grade, mass_q, speed_q)
    u_a, u_b = bearing_allowances(u, span_q, com_q)
    return u, u_a, u_b


def timed(fn, *args, **kwargs):
    start = time.perf_counter()
    result = fn(*args, **kwargs)
    return time.perf_counter() - start, result


def compare(label: str, count: int, runs: int, imperial: bool, target: float) -> bool:
    from toolkit.units import Q_

    mass, speed, span, com = rotors(count)
    if imperial:
        mass, speed, span, com = mass / LB_KG, speed / 60.0, span / IN_MM, com / IN_MM
        units = ("lb", "Hz", "in", "in")
    else:
        units = ("kg", "rpm", "mm", "mm")
    quantities = [Q_(a, u) for a, u in zip((mass, speed, span, com), units)]
    ours("G6.3", *quantities), baseline(6.3, mass, speed, span, com, imperial=imperial)  # warm-up
    t_ours, t_base = [], []
    for _ in range(runs):
        t, result = timed(ours, "G6.3", *quantities)
        t_ours.append(t)
        t, expected = timed(baseline, 6.3, mass, speed, span, com, imperial=imperial)
        t_base.append(t)
    same = all(np.allclose(r.m_as("g*mm"), e, rtol=1e-12, atol=0) for r, e in zip(result, expected))
    a, b = statistics.median(t_ours), statistics.median(t_base)
    ratio = a / b
    verdict = "meets" if ratio <= target and same else "MISSES"
    print(f"{label:<46} {a * 1000:8.1f} ms  baseline {b * 1000:8.1f} ms  ratio {ratio:5.2f}  "
          f"(target <= {target}: {verdict}; same numbers: {'yes' if same else 'NO'})")
    return ratio <= target and same


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rotors", type=int, default=1_000_000)
    parser.add_argument("--runs", type=int, default=7)
    args = parser.parse_args(argv)
    print(f"python {sys.version.split()[0]}, numpy {np.__version__}; {args.rotors:,} invented rotors; "
          f"median of {args.runs} runs")
    ok = [compare(f"U_per + plane allowances, {args.rotors:,} rotors (SI)", args.rotors, args.runs, False, 2.0),
          compare(f"same from lb, Hz, in", args.rotors, args.runs, True, 2.0)]
    return 0 if all(ok) else 1


if __name__ == "__main__":
    sys.exit(main())
