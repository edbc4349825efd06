"""Min-max with plane mass limits: the constrained optimum (scipy linprog, polished by SLSQP) checked against
a brute-force search over the allowed corrections, written here without scipy, and against feasible points
of other methods. Check values are derived here (D; source: our own brute force): they check our implementation, not published numbers."""

import json
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

from toolkit.cli import main
from toolkit.influence import _minmax, correct, minmax_limited, runs_from_dict, solve_runs


EXAMPLES = Path(__file__).resolve().parent.parent / "examples"


def worst(o, a, x):
    return float(np.abs(o + a @ x).max())


def disc_points(limit, n):
    """A Cartesian grid of spacing 2*limit/(n-1) inside the disc |x| <= limit, plus 96 points on its rim."""
    g = np.linspace(-limit, limit, n)
    xr, xi = np.meshgrid(g, g)
    z = (xr + 1j * xi).ravel()
    z = z[np.abs(z) <= limit]
    rim = limit * np.exp(2j * np.pi * np.arange(96) / 96)
    return np.concatenate([z, rim]), g[1] - g[0]


def random_case(seed, m, p):
    rng = np.random.default_rng(seed)
    o = rng.normal(size=m) + 1j * rng.normal(size=m)
    a = rng.normal(size=(m, p)) + 1j * rng.normal(size=(m, p))
    return o, a


@pytest.mark.parametrize("seed", [1, 2, 3, 4])
def test_one_plane_against_a_brute_force_grid(seed):
    o, a = random_case(seed, 5, 1)
    free = _minmax(o, a, np.ones(5))
    limit = 0.6 * abs(free[0])  # the limit binds
    x = minmax_limited(o, a, np.ones(5), np.array([limit]))
    assert abs(x[0]) <= limit * (1 + 1e-12)
    pts, h = disc_points(limit, 801)
    values = np.abs(o[None, :] + pts[:, None] * a[None, :, 0]).max(axis=1)
    best = float(values.min())
    lip = float(np.abs(a[:, 0]).max())
    ours = worst(o, a, x)
    assert ours <= best + 1e-9  # no allowed grid point does better
    assert ours >= best - lip * h * np.sqrt(2)  # and ours is not below what the grid can resolve


@pytest.mark.parametrize("seed", [5, 6, 7])
def test_two_planes_against_a_brute_force_grid(seed):
    o, a = random_case(seed, 6, 2)
    free = _minmax(o, a, np.ones(6))
    limits = 0.5 * np.abs(free)
    x = minmax_limited(o, a, np.ones(6), limits)
    assert np.all(np.abs(x) <= limits * (1 + 1e-12))
    p1, h1 = disc_points(limits[0], 31)
    p2, h2 = disc_points(limits[1], 31)
    best = np.inf
    for chunk in np.array_split(p1, 8):  # every pair of allowed points, in chunks to keep memory small
        r = o[None, None, :] + chunk[:, None, None] * a[None, None, :, 0] + p2[None, :, None] * a[None, None, :, 1]
        best = min(best, float(np.abs(r).max(axis=2).min()))
    lip = float((np.abs(a[:, 0]) * h1 + np.abs(a[:, 1]) * h2).max()) * np.sqrt(2)
    ours = worst(o, a, x)
    assert ours <= best + 1e-9
    assert ours >= best - lip


@settings(max_examples=40, deadline=None)
@given(seed=st.integers(0, 10_000), frac=st.floats(0.05, 1.5), m=st.integers(2, 8))
def test_limits_hold_and_no_feasible_alternative_is_better(seed, frac, m):
    o, a = random_case(seed, m, 2)
    w = np.random.default_rng(seed + 1).uniform(0.5, 2.0, size=m)
    free = _minmax(o, a, w)
    limits = frac * np.abs(free) + 1e-6
    x = minmax_limited(o, a, w, limits)
    assert np.all(np.abs(x) <= limits * (1 + 1e-12))
    ours = float(np.abs(w * (o + a @ x)).max())
    # other allowed corrections: the free min-max pulled onto the limits, the penalised least squares
    clipped = np.where(np.abs(free) > limits, free / np.abs(free) * limits, free)
    penalised, _ = correct(o, a, w, "least squares", limits)
    scale = float(np.abs(w * o).max())
    for alt in (clipped, penalised, np.zeros(2)):
        # the polygon programme is exact to 1 - cos(pi/180) = 1.5e-4 of the scale before the polish (D)
        assert ours <= float(np.abs(w * (o + a @ alt)).max()) * (1 + 1e-6) + 2e-4 * scale
    if frac >= 1.0:  # the limits do not bind: the free min-max value
        assert ours == pytest.approx(float(np.abs(w * (o + a @ free)).max()), rel=1e-5)


def test_infinite_limits_give_the_free_min_max():
    o, a = random_case(9, 6, 2)
    x = minmax_limited(o, a, np.ones(6), np.array([np.inf, np.inf]))
    free = _minmax(o, a, np.ones(6))
    assert worst(o, a, x) == pytest.approx(worst(o, a, free), rel=1e-5)


def vec(amount, angle):
    return amount * np.exp(1j * np.radians(angle))


def two_plane_runs():
    """Invented rotor: readings made from a chosen linear model (numbers chosen for the check)."""
    A = np.array([[vec(0.8, 200), vec(0.5, 210)], [vec(0.45, 300), vec(0.7, 296)], [vec(0.6, 100), vec(0.6, 40)]])
    U0 = np.array([vec(40, 30), vec(25, 250)])
    trials = [np.zeros(2), np.array([20 + 0j, 0]), np.array([0, vec(20, 90)])]
    runs = []
    for k, t in enumerate(trials):
        v = A @ (U0 + t)
        run = {"name": f"run {k}", "readings": [f"{float(abs(r))!r} mm/s@{float(np.degrees(np.angle(r)) % 360)!r}" for r in v]}
        if k:
            run["trial"] = {p: f"{float(abs(m))!r} g@{float(np.degrees(np.angle(m)) % 360)!r}" for p, m in zip(("P1", "P2"), t) if m}
        runs.append(run)
    return {"planes": ["P1", "P2"], "sensors": ["s1", "s2", "s3"], "phase": "lag",
            "weight_angles": "against rotation", "run": runs}


def test_solve_runs_min_max_with_limits():
    data = two_plane_runs()
    free = solve_runs(runs_from_dict(data, "x"), method="min-max")
    biggest = max(c.mass.m_as("g") for c in free.corrections)
    limit = 0.5 * biggest
    held = solve_runs(runs_from_dict(data, "x"), method="min-max", limits={"P1": f"{limit} g", "P2": f"{limit} g"})
    assert all(c.mass.m_as("g") <= limit * (1 + 1e-6) for c in held.corrections)
    assert any("min-max with the limits as constraints" in w for w in held.warnings)
    assert max(r["amount"] for r in held.predicted_residual) > max(r["amount"] for r in free.predicted_residual)


def test_solve_command_accepts_min_max_with_a_limit(capsys):
    # refused before ("limits work with the least-squares method only"); the invented example's free
    # min-max puts 33.96 g in the near plane, so a 20 g limit binds
    runs = str(EXAMPLES / "runs-two-plane.toml")
    status = main(["solve", runs, "--method", "min-max", "--limit", "near=20 g", "--json"])
    out, err = capsys.readouterr()
    assert status == 0, err
    data = json.loads(out)
    masses = {c["plane"]: c["mass_g"] for c in data["corrections"]}
    assert masses["near"] == pytest.approx(20, rel=1e-6)
    assert any("min-max with the limits as constraints" in w for w in data["warnings"])
