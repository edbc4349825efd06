"""The runs file: trial-mass runs described in TOML (or a table inside a job file), validated into a
:class:`RunSet` that the solvers in :mod:`toolkit.influence` take.

A runs description declares its sensors and correction planes, both angle senses (weight angles with or
against rotation, instrument phase lag or lead: never assumed), and one ``[[run]]`` table per run with the
trial masses on the rotor and one reading per sensor. Every error names the origin (file or job table), the
run and the field. The angle-sense rule, :func:`conjugate_needed`, is in docs/methods.md §2 [D].
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from toolkit.errors import BadInput
from toolkit.vectors import parse_reading, to_complex

__all__ = ["Run", "RunSet", "METHODS", "MAX_RUNS_BYTES", "conjugate_needed", "weight_sense", "phase_sense",
           "runs_from_dict", "load_runs"]

_WEIGHT_SENSES = {"with": "with rotation", "with rotation": "with rotation",
                  "against": "against rotation", "against rotation": "against rotation"}
_PHASE_SENSES = {"lag": "lag", "phase lag": "lag", "lead": "lead", "phase lead": "lead"}


def weight_sense(value, name: str = "weight_angles") -> str:
    key = " ".join(str(value).strip().lower().split())
    if key not in _WEIGHT_SENSES:
        raise BadInput.about(name, f"{value!r} is not an angle sense; use 'with rotation' or 'against rotation'")
    return _WEIGHT_SENSES[key]


def phase_sense(value, name: str = "phase") -> str:
    key = " ".join(str(value).strip().lower().split())
    if key not in _PHASE_SENSES:
        raise BadInput.about(name, f"{value!r} is not a phase sense; use 'lag' or 'lead'")
    return _PHASE_SENSES[key]


def conjugate_needed(weight_angles: str, phase: str) -> bool:
    """Whether readings must be conjugated before solving [D, docs/methods.md §2].

    Phase lag grows in the same sense as angles measured against rotation.

    >>> conjugate_needed("against rotation", "lag"), conjugate_needed("with rotation", "lag")
    (False, True)
    >>> conjugate_needed("with rotation", "lead"), conjugate_needed("against", "lead")
    (False, True)
    """
    return (weight_sense(weight_angles) == "with rotation") == (phase_sense(phase) == "lag")


@dataclass(frozen=True)
class Run:
    """One run: its name, the trial masses on the rotor during it (plane → complex grams, in the weight
    angle sense) and one reading per sensor (complex, in the reading unit, as the instrument wrote it)."""

    name: str
    trials: tuple[tuple[str, complex], ...]
    readings: tuple[complex, ...]


@dataclass(frozen=True)
class RunSet:
    """A validated set of runs with everything needed to solve it (see :func:`runs_from_dict`)."""

    origin: str
    sensors: tuple[str, ...]
    planes: tuple[str, ...]
    weight_angles: str
    phase: str
    reading_kind: str
    reading_unit: str
    runs: tuple[Run, ...]
    weights: tuple[float, ...]
    radius_mm: tuple[tuple[str, float], ...] = ()
    limits_g: tuple[tuple[str, float], ...] = ()
    actions: tuple[tuple[str, str], ...] = ()
    trials_left_on: bool = False
    method: str = "least squares"
    speed_rpm: float | None = None

    def trial_matrix(self) -> np.ndarray:
        """U: one row per run, one column per plane, complex grams."""
        u = np.zeros((len(self.runs), len(self.planes)), dtype=complex)
        for k, run in enumerate(self.runs):
            for plane, z in run.trials:
                u[k, self.planes.index(plane)] = z
        return u

    def reading_matrix(self) -> np.ndarray:
        """V: one row per run, one column per sensor, in the weight-angle frame (conjugated if needed)."""
        v = np.array([run.readings for run in self.runs], dtype=complex)
        return np.conj(v) if conjugate_needed(self.weight_angles, self.phase) else v


METHODS = ("least squares", "min-max")


def _at(origin: str, name: str) -> str:
    """A field's name after the origin (none when the origin is empty: a job names the table itself)."""
    return f"{origin}: {name}" if origin else name


def _names(data: dict, key: str, origin: str) -> tuple[str, ...]:
    value = data.get(key)
    if value is None:
        raise BadInput.about(origin, f"{key}: missing; give a list of names, e.g. {key} = [\"A\", \"B\"]")
    if not isinstance(value, list) or not value or not all(isinstance(v, str) and v.strip() for v in value):
        raise BadInput.about(origin, f"{key}: {value!r} must be a non-empty list of names")
    names = tuple(v.strip() for v in value)
    if len(set(names)) != len(names):
        raise BadInput.about(origin, f"{key}: {value!r} names one twice")
    return names


def _per_plane(data: dict, key: str, planes, origin: str, kind: str, unit: str):
    value = data.get(key)
    if value is None:
        return ()
    if not isinstance(value, dict):
        raise BadInput.about(origin, f"{key}: {value!r} must be a table by plane, e.g. {{ {planes[0]} = ... }}")
    from toolkit.units import magnitude

    out = []
    for plane, v in value.items():
        if plane not in planes:
            raise BadInput.about(origin, f"{key}: unknown plane {plane!r}; planes are {', '.join(planes)}")
        out.append((plane, float(magnitude(v, kind, unit, name=_at(origin, f"{key}.{plane}"), positive=True))))
    return tuple(out)


def _trial_mass(value, plane: str, radius: dict, name: str) -> complex:
    """A trial vector in grams: a mass ``"20 g@0"`` or an unbalance ``"3000 g*mm@0"`` (needs the radius)."""
    text = value if isinstance(value, str) else None
    if text is None:
        raise BadInput(f"{name}: {value!r} is not a vector; write AMOUNT@ANGLE, e.g. '20 g@0'")
    amount_part = text.split("@")[0]
    if "*" in amount_part or "·" in amount_part:
        if plane not in radius:
            raise BadInput(f"{name}: {text!r} is an unbalance; give the plane's radius to turn it into a mass")
        return to_complex(text, "unbalance", name) / radius[plane]
    return to_complex(text, "mass", name) * 1000.0  # kernel kg -> g


def runs_from_dict(data: dict, origin: str) -> RunSet:
    """Validate a runs description (the parsed runs file, or a table inside a job file) into a
    :class:`RunSet`. Every error names ``origin``, the run and the field.

    Keys: ``sensors`` and ``planes`` (lists of names); ``weight_angles`` ("with rotation" or "against
    rotation") and ``phase`` ("lag" or "lead"), both required; ``run``, a list of tables each with
    ``name``, ``trial`` (plane → mass vector on the rotor during the run; empty or absent for the original
    run) and ``readings`` (one vector per sensor, in order). Optional: ``radius`` and ``limits`` (plane →
    length / mass), ``weights`` (one number per sensor, default 1), ``action`` ("add", "remove", or plane →
    either), ``trials_left_on`` (the trials of the last run stay on the rotor), ``method`` ("least squares"
    or "min-max"), ``speed``.

    >>> rs = runs_from_dict({"sensors": ["brg"], "planes": ["p"], "weight_angles": "against rotation",
    ...     "phase": "lag", "run": [{"name": "original", "readings": ["4.2 mm/s@285"]},
    ...     {"name": "trial", "trial": {"p": "10 g@0"}, "readings": ["6.1237 mm/s@251.49"]}]}, "invented")
    >>> rs.reading_unit, len(rs.runs)
    ('mm/s', 2)
    """
    if not isinstance(data, dict):
        raise BadInput.about(origin, f"expected a table of runs, got {type(data).__name__}")
    sensors = _names(data, "sensors", origin)
    planes = _names(data, "planes", origin)
    for key in ("weight_angles", "phase"):
        if key not in data:
            example = "'with rotation' or 'against rotation'" if key == "weight_angles" else "'lag' or 'lead'"
            raise BadInput.about(origin, f"{key}: missing; the sense must be declared, never assumed: give {example}")
    weight_angles = weight_sense(data["weight_angles"], _at(origin, f"weight_angles"))
    phase = phase_sense(data["phase"], _at(origin, f"phase"))
    radius = _per_plane(data, "radius", planes, origin, "length", "mm")
    limits = _per_plane(data, "limits", planes, origin, "mass", "g")
    radius_map = dict(radius)

    weights = data.get("weights", [1.0] * len(sensors))
    if not isinstance(weights, list) or len(weights) != len(sensors) or not all(
            isinstance(w, (int, float)) and not isinstance(w, bool) and math.isfinite(w) and w > 0
            for w in weights):
        raise BadInput.about(origin, f"weights: {weights!r} must be {len(sensors)} numbers greater than zero, "
                       f"one per sensor")

    action = data.get("action", "add")
    actions = {}
    if isinstance(action, str):
        actions = {p: action for p in planes}
    elif isinstance(action, dict):
        actions = {p: "add" for p in planes}
        for p, a in action.items():
            if p not in planes:
                raise BadInput.about(origin, f"action: unknown plane {p!r}; planes are {', '.join(planes)}")
            actions[p] = a
    else:
        raise BadInput.about(origin, f"action: {action!r} must be 'add', 'remove' or a table by plane")
    for p, a in actions.items():
        if a not in ("add", "remove"):
            raise BadInput.about(origin, f"action.{p}: {a!r} is not allowed; use 'add' or 'remove'")

    left_on = data.get("trials_left_on", False)
    if not isinstance(left_on, bool):
        raise BadInput.about(origin, f"trials_left_on: {left_on!r} must be true or false")
    method = data.get("method", "least squares")
    if method not in METHODS:
        raise BadInput.about(origin, f"method: {method!r} is not known; use {' or '.join(map(repr, METHODS))}")
    speed = None
    if data.get("speed") is not None:
        from toolkit.units import speed_rpm

        speed = speed_rpm(data["speed"], _at(origin, f"speed"))

    raw_runs = data.get("run")
    if raw_runs is None:
        raise BadInput.about(origin, f"run: missing; add [[run]] tables, the first usually the original run")
    if not isinstance(raw_runs, list) or not all(isinstance(r, dict) for r in raw_runs):
        raise BadInput.about(origin, f"run: must be an array of tables ([[run]])")
    runs: list[Run] = []
    kind = unit = None
    seen = set()
    for k, raw in enumerate(raw_runs, start=1):
        label = f"run {k}"
        name = raw.get("name")
        if not isinstance(name, str) or not name.strip():
            raise BadInput.about(origin, f"{label}: name: missing; give each run a name")
        name = name.strip()
        label = f"run {name!r}"
        if name in seen:
            raise BadInput.about(origin, f"{label}: name: used twice")
        seen.add(name)
        unknown = set(raw) - {"name", "trial", "readings", "note"}
        if unknown:
            raise BadInput.about(origin, f"{label}: unknown field(s) {', '.join(sorted(unknown))}; "
                           f"allowed: name, trial, readings, note")
        trial = raw.get("trial", {}) or {}
        if not isinstance(trial, dict):
            raise BadInput.about(origin, f"{label}: trial: {trial!r} must be a table by plane, e.g. "
                           f"{{ {planes[0]} = \"20 g@0\" }}")
        trials = []
        for plane, vec in trial.items():
            if plane not in planes:
                raise BadInput.about(origin, f"{label}: trial: unknown plane {plane!r}; planes are "
                               f"{', '.join(planes)}")
            trials.append((plane, _trial_mass(vec, plane, radius_map, _at(origin, f"{label}: trial.{plane}"))))
        readings = raw.get("readings")
        if not isinstance(readings, list):
            raise BadInput.about(origin, f"{label}: readings: missing; give one vector per sensor "
                           f"({', '.join(sensors)})")
        if len(readings) != len(sensors):
            raise BadInput.about(origin, f"{label}: readings: {len(readings)} given for {len(sensors)} sensors "
                           f"({', '.join(sensors)})")
        values = []
        for i, text in enumerate(readings):
            z, rk, ru = parse_reading(text, _at(origin, f"{label}: readings[{i + 1}]"))
            if kind is None:
                kind, unit = rk, ru
            elif rk != kind:
                raise BadInput.about(origin, f"{label}: readings[{i + 1}]: {text!r} is a {rk}; the runs use "
                               f"{kind} ({unit}): give every reading in one kind")
            values.append(z)
        runs.append(Run(name, tuple(trials), tuple(values)))
    return RunSet(origin=origin, sensors=sensors, planes=planes, weight_angles=weight_angles, phase=phase,
                  reading_kind=kind, reading_unit=unit, runs=tuple(runs), weights=tuple(map(float, weights)),
                  radius_mm=radius, limits_g=limits, actions=tuple(actions.items()), trials_left_on=left_on,
                  method=method, speed_rpm=speed)


#: A runs file larger than this is refused before it is read (a real one is a few kilobytes).
MAX_RUNS_BYTES = 1_000_000


def load_runs(path) -> RunSet:
    """Read a runs file (TOML) into a :class:`RunSet`; errors name the file, the run and the field, and
    malformed TOML names the line and column."""
    from pathlib import Path

    from toolkit.fileio import parse_toml, read_text

    p = Path(path)
    data = parse_toml(read_text(p, "runs file", MAX_RUNS_BYTES), str(p))
    return runs_from_dict(data, str(p))
