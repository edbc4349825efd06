"""Stored influence coefficients: save them from a solved job, reuse them on later rotors of the same type.

A shop that balances many rotors of one type measures the influence coefficients once (with trial runs)
and then corrects each later rotor from its original run alone. After the correction a trim run shows how
well the stored coefficients still describe the rotor; the coefficients are then updated by the
least-change (Broyden) rank-one update A' = A + (ΔV − A·ΔU)·ΔUᴴ / (ΔUᴴ·ΔU), which reproduces the trim run
exactly and leaves the response to any correction orthogonal to ΔU unchanged [D]. With one plane this is
α' = ΔV/ΔU, the one-plane formula of docs/methods.md §2.

The file is JSON of our own design (``"format": "counterpoise-influence"``, ``"version": 1``)::

    {"format": "counterpoise-influence", "version": 1, "saved": "2026-12-01T22:00:00Z",
     "note": "...", "speed_rpm": 1480.0, "sensors": ["drive end"], "planes": ["near"],
     "weight_angles": "against rotation", "phase": "lag", "reading_unit": "mm/s", "mass_unit": "g",
     "radius_mm": {"near": 150.0},
     "coefficients": [[{"amount": 0.35, "angle_deg": 210.0}]]}

``coefficients[i][j]`` is the reading at sensor i per gram at 0° in plane j, in reading unit per gram, with
its angle in the weight-angle frame (readings conjugated first when the two senses disagree). Readings of a
later rotor are taken in the senses stored in the file.
"""

from __future__ import annotations

import json
import math
from dataclasses import dataclass, replace
from pathlib import Path

import numpy as np

from toolkit.errors import BadInput
from toolkit.influence import Settings, Solution, correct, finish_solution
from toolkit.runs import Run, RunSet, conjugate_needed, phase_sense, weight_sense
from toolkit.vectors import parse_reading, polar

__all__ = ["Coefficients", "coefficients_from", "save_coefficients", "load_coefficients",
           "solve_with_coefficients", "trim_update", "trim_correction", "Trim", "FORMAT"]

FORMAT = "counterpoise-influence"


@dataclass(frozen=True)
class Coefficients:
    """Influence coefficients of a rotor type with the conditions they were measured under."""

    sensors: tuple[str, ...]
    planes: tuple[str, ...]
    matrix: tuple[tuple[complex, ...], ...]
    weight_angles: str
    phase: str
    reading_unit: str
    reading_kind: str
    speed_rpm: float | None = None
    radius_mm: tuple[tuple[str, float], ...] = ()
    saved: str = ""
    note: str = ""

    def array(self) -> np.ndarray:
        return np.array(self.matrix, dtype=complex)

    def to_dict(self) -> dict:
        return {"format": FORMAT, "version": 1, "saved": self.saved, "note": self.note,
                "speed_rpm": self.speed_rpm, "sensors": list(self.sensors), "planes": list(self.planes),
                "weight_angles": self.weight_angles, "phase": self.phase, "reading_unit": self.reading_unit,
                "mass_unit": "g", "radius_mm": dict(self.radius_mm),
                "coefficients": [[dict(zip(("amount", "angle_deg"), polar(z))) for z in row]
                                 for row in self.matrix]}


def _now() -> str:
    import datetime

    return datetime.datetime.now(datetime.timezone.utc).strftime("%Y-%m-%dT%H:%M:%SZ")


def coefficients_from(solution: Solution, note: str = "") -> Coefficients:
    """The coefficients of a solved job, ready to save.

    >>> from toolkit.influence import solve_one_plane
    >>> c = coefficients_from(solve_one_plane("4.20 mm/s@285", "10 g@0", "6.1237 mm/s@251.49"))
    >>> amount, angle = polar(c.matrix[0][0]); f"{amount:.3f} {c.reading_unit} per g @ {angle:.1f}"
    '0.350 mm/s per g @ 210.0'
    """
    rs = solution.runset
    return Coefficients(sensors=rs.sensors, planes=rs.planes, matrix=solution.influence,
                        weight_angles=rs.weight_angles, phase=rs.phase, reading_unit=rs.reading_unit,
                        reading_kind=rs.reading_kind, speed_rpm=rs.speed_rpm, radius_mm=rs.radius_mm,
                        saved=_now(), note=note)


def save_coefficients(coefficients: Coefficients, path, *, force: bool = False) -> Path:
    """Write the coefficients file atomically (never over an existing file without ``force``)."""
    from toolkit.fileio import write_atomic

    return write_atomic(path, json.dumps(coefficients.to_dict(), indent=2, ensure_ascii=False) + "\n",
                        force=force)


_KIND_OF_UNIT = {"mm/s": "vibration velocity", "um": "displacement", "m/s^2": "acceleration"}


def _names(value, field: str) -> tuple[str, ...]:
    """A list of distinct non-empty names from a coefficients file, or BadInput naming the field."""
    if not isinstance(value, list) or not value or not all(isinstance(v, str) and v.strip() for v in value):
        raise BadInput(f"{field}: need a list of names")
    if len(set(value)) != len(value):
        raise BadInput(f"{field}: names must differ")
    return tuple(value)


#: Bounds of our own [CP] on a stored coefficient's amount other than zero (reading units per gram).
AMOUNT_BOUNDS = (1e-12, 1e12)


def _is_number(value) -> bool:
    return isinstance(value, (int, float)) and not isinstance(value, bool)


def load_coefficients(path) -> Coefficients:
    """Read a coefficients file; every error names the file and the field."""
    from toolkit.fileio import parse_json, read_text

    p = Path(path)
    data = parse_json(read_text(p, "coefficients file", 1_000_000), str(p))
    if not isinstance(data, dict) or data.get("format") != FORMAT:
        raise BadInput(f"{p}: format: not a counterpoise influence-coefficient file")
    if data.get("version") != 1:
        raise BadInput(f"{p}: version: {data.get('version')!r} is not supported; this program reads version 1")
    try:
        sensors = _names(data["sensors"], f"{p}: sensors")
        planes = _names(data["planes"], f"{p}: planes")
        unit = data["reading_unit"]
        rows = data["coefficients"]
        weight_angles = weight_sense(data["weight_angles"], f"{p}: weight_angles")
        phase = phase_sense(data["phase"], f"{p}: phase")
    except KeyError as exc:
        raise BadInput(f"{p}: {exc.args[0]}: missing") from None
    if not isinstance(unit, str) or unit not in _KIND_OF_UNIT:
        raise BadInput(f"{p}: reading_unit: {unit!r} is not one of {', '.join(_KIND_OF_UNIT)}")
    if not isinstance(rows, list) or len(rows) != len(sensors) or not sensors or not planes:
        raise BadInput(f"{p}: coefficients: need one row per sensor ({len(sensors)})")
    matrix = []
    for i, row in enumerate(rows):
        if not isinstance(row, list) or len(row) != len(planes):
            raise BadInput(f"{p}: coefficients[{i + 1}]: need one entry per plane ({len(planes)})")
        out = []
        for j, cell in enumerate(row):
            where = f"{p}: coefficients[{i + 1}][{j + 1}]"
            try:
                amount, angle = cell["amount"], cell["angle_deg"]
            except (TypeError, KeyError):
                raise BadInput(f"{where}: need amount and angle_deg numbers") from None
            if not (_is_number(amount) and _is_number(angle)):  # "1_000" or "1e3" as text is not read
                raise BadInput(f"{where}: need amount and angle_deg numbers")
            amount, angle = float(amount), float(angle)
            if not (math.isfinite(amount) and math.isfinite(angle)):
                raise BadInput(f"{where}: not finite")
            if not (amount == 0 or AMOUNT_BOUNDS[0] <= abs(amount) <= AMOUNT_BOUNDS[1]) or abs(angle) > 1e6:
                raise BadInput(f"{where}: amount {amount!r} or angle {angle!r} is out of range (an amount from "
                               f"{AMOUNT_BOUNDS[0]:g} to {AMOUNT_BOUNDS[1]:g}, or 0, and an angle within ±1e6 "
                               "degrees: bounds of our own [CP])")
            out.append(amount * complex(math.cos(math.radians(angle)), math.sin(math.radians(angle))))
        matrix.append(tuple(out))
    from toolkit.units import KINDS

    length, rotation = KINDS["length"], KINDS["speed"]
    radius = data.get("radius_mm") or {}
    if not isinstance(radius, dict) or not all(
            _is_number(v) and length.lower <= v <= length.upper for v in radius.values()):
        raise BadInput(f"{p}: radius_mm: need a table of plane names and positive radii in mm (from "
                       f"{length.lower:g} to {length.upper:g} mm)")
    speed = data.get("speed_rpm")
    if speed is not None and not (_is_number(speed) and rotation.lower <= speed <= rotation.upper):
        raise BadInput(f"{p}: speed_rpm: {speed!r} is not a positive number of r/min (from {rotation.lower:g} "
                       f"to {rotation.upper:g})")
    return Coefficients(sensors=sensors, planes=planes, matrix=tuple(matrix), weight_angles=weight_angles,
                        phase=phase, reading_unit=unit, reading_kind=_KIND_OF_UNIT[unit],
                        speed_rpm=speed, radius_mm=tuple((k, float(v)) for k, v in radius.items()),
                        saved=str(data.get("saved", "")), note=str(data.get("note", "")))


def _readings(coefficients: Coefficients, readings, name: str) -> np.ndarray:
    if isinstance(readings, str):
        readings = [readings]
    if not isinstance(readings, (list, tuple)) or len(readings) != len(coefficients.sensors):
        raise BadInput.about(name, f"give {len(coefficients.sensors)} reading(s), one per sensor "
                                   f"({', '.join(coefficients.sensors)})")
    out = []
    for i, text in enumerate(readings):
        z, kind, unit = parse_reading(text, f"{name} {i + 1}")  # "original 2": the parameter, then the item
        if kind != coefficients.reading_kind:
            raise BadInput.about(f"{name} {i + 1}", f"{text!r} is a {kind}; the coefficients are for "
                                                  f"{coefficients.reading_kind} ({coefficients.reading_unit})")
        out.append(z)
    v = np.array(out, dtype=complex)
    return np.conj(v) if conjugate_needed(coefficients.weight_angles, coefficients.phase) else v


def solve_with_coefficients(coefficients: Coefficients, original, *, method: str = "least squares",
                            weights=None, settings: Settings | None = None, origin: str = "stored coefficients"
                            ) -> Solution:
    """Corrections for a later rotor from its original readings alone (one per sensor, in the senses stored
    with the coefficients), by the weighted least squares of :func:`toolkit.influence.correct`.

    >>> from toolkit.influence import solve_one_plane
    >>> c = coefficients_from(solve_one_plane("4.20 mm/s@285", "10 g@0", "6.1237 mm/s@251.49"))
    >>> s = solve_with_coefficients(c, ["2.1 mm/s@285"]); k = s.corrections[0]
    >>> f"{k.action} {k.mass.m_as('g'):.2f} g@{k.angle_deg:.1f}"
    'add 6.00 g@255.0'
    """
    settings = settings or Settings()
    o = _readings(coefficients, original, "original")
    a = coefficients.array()
    w = np.ones(len(o)) if weights is None else np.asarray(weights, dtype=float)
    if w.shape != o.shape or not np.all(np.isfinite(w)) or np.any(w <= 0):
        raise BadInput.about("weights", f"need {len(o)} numbers greater than zero, one per sensor")
    try:
        x, penalty = correct(o, a, w, method)
    except BadInput as exc:
        raise BadInput(f"{origin}: {exc}") from None
    warnings = [f"stored coefficients saved {coefficients.saved or 'at an unknown date'}: they hold for the same "
                f"rotor type, speed, sensors and mounting only; confirm with a trim run"]
    conj = conjugate_needed(coefficients.weight_angles, coefficients.phase)
    runset = RunSet(origin=origin, sensors=coefficients.sensors, planes=coefficients.planes,
                    weight_angles=coefficients.weight_angles, phase=coefficients.phase,
                    reading_kind=coefficients.reading_kind, reading_unit=coefficients.reading_unit,
                    runs=(Run("original", (), tuple(map(complex, np.conj(o) if conj else o))),),
                    weights=tuple(map(float, w)), radius_mm=coefficients.radius_mm, method=method,
                    speed_rpm=coefficients.speed_rpm)
    return finish_solution(runset, o, a, x, w, left=np.zeros(len(x), dtype=complex), method=method,
                           settings=settings, warnings=warnings, penalty=penalty,
                           source="stored influence coefficients; weighted least squares (Goodman 1964)")


def trim_update(coefficients: Coefficients, before, installed, after) -> Coefficients:
    """Coefficients updated from a trim run: readings ``before`` and ``after`` installing the masses
    ``installed`` (plane → mass vector, e.g. ``{"near": "6 g@255"}``, in the weight-angle sense).

    Source: least-change rank-one (Broyden) update A' = A + (ΔV − A·ΔU)·ΔUᴴ/(ΔUᴴ·ΔU) [D].

    >>> from toolkit.influence import solve_one_plane
    >>> c = coefficients_from(solve_one_plane("4.20 mm/s@285", "10 g@0", "6.1237 mm/s@251.49"))
    >>> new = trim_update(c, ["2.1 mm/s@285"], {"plane": "6 g@255"}, ["0.4 mm/s@285"])
    >>> amount, angle = polar(new.matrix[0][0]); f"{amount:.4f} @ {angle:.1f}"
    '0.2833 @ 210.0'
    """
    from toolkit.vectors import to_complex

    v0 = _readings(coefficients, before, "before")
    v1 = _readings(coefficients, after, "after")
    if not isinstance(installed, dict) or not installed:
        raise BadInput.about("installed", "give the masses installed by plane, e.g. {'near': '6 g@255'}")
    du = np.zeros(len(coefficients.planes), dtype=complex)
    for plane, vec in installed.items():
        if plane not in coefficients.planes:
            raise BadInput.about("installed", f"unknown plane {plane!r}; planes are {', '.join(coefficients.planes)}")
        du[coefficients.planes.index(plane)] = to_complex(vec, "mass", f"installed {plane}") * 1000.0
    norm = float(np.vdot(du, du).real)
    if norm == 0:
        raise BadInput.about("installed", "all masses are zero; a trim run needs a correction installed")
    dv = v1 - v0
    if np.abs(dv).max() == 0:
        raise BadInput.about("after", "identical to {before}; the installed correction changed nothing",
                             mentions=("before",))
    a = coefficients.array()
    a_new = a + np.outer(dv - a @ du, np.conj(du)) / norm
    return replace(coefficients, matrix=tuple(tuple(map(complex, row)) for row in a_new), saved=_now(),
                   note=(coefficients.note + "; " if coefficients.note else "") + "updated by a trim run")


@dataclass(frozen=True)
class Trim:
    """A trim run worked out in one step: the coefficients updated by it and the trim correction solved
    from the readings after the installed correction with them (its predicted residual starts from those
    readings as measured)."""

    updated: Coefficients
    solution: Solution

    def to_dict(self) -> dict:
        return {"updated_coefficients": self.updated.to_dict(), "trim": self.solution.to_dict()}


def trim_correction(coefficients: Coefficients, before, installed, after, *, method: str = "least squares",
                    settings: Settings | None = None, origin: str = "stored coefficients") -> Trim:
    """The trim correction after a first correction: update the coefficients from the trim run
    (:func:`trim_update`), then solve the readings ``after`` with the updated coefficients
    (:func:`solve_with_coefficients`). Nothing is saved here.

    >>> from toolkit.influence import solve_one_plane
    >>> c = coefficients_from(solve_one_plane("4.20 mm/s@285", "10 g@0", "6.1237 mm/s@251.49"))
    >>> t = trim_correction(c, ["2.1 mm/s@285"], {"plane": "6 g@255"}, ["0.4 mm/s@285"])
    >>> k = t.solution.corrections[0]; f"{k.action} {k.mass.m_as('g'):.3f} g@{k.angle_deg:.1f}"
    'add 1.412 g@255.0'
    >>> round(t.solution.predicted_residual[0]["original_amount"], 6)  # the reading after, as measured
    0.4
    """
    updated = trim_update(coefficients, before, installed, after)
    solution = solve_with_coefficients(updated, after, method=method, settings=settings,
                                       origin=f"{origin}, updated by the trim run")
    return Trim(updated, solution)
