"""The work order: one immutable value that the exporters (spreadsheet, PDF, batch summary) only read.

Inside the work order every amount is a float in a fixed unit named in the field (``_g_mm``, ``_g``,
``_mm``, ``_deg``), converted once when the order is built; the properties without the suffix give pint
quantities. Angles are degrees in [0, 360) from the job's angle reference, counted in the job's sense
(``angle_sense``), which every exporter prints beside each angle.

An unbalance is the heavy spot. An operation says ``add`` (mass placed at its angle) or ``remove`` (mass
taken away at its angle); its effect on the rotor's unbalance is ``+U`` at the angle for ``add`` and ``-U``
(that is, ``+U`` at angle + 180°) for ``remove``.
"""

from __future__ import annotations

import cmath
import math
import copy
import functools
from dataclasses import dataclass, field, fields

from toolkit.errors import BadInput
from toolkit.vectors import polar
from toolkit.formatting import Formatter, unit_labels  # noqa: F401 - the one formatter, used through here

__all__ = [
    "Identification", "Tolerance", "Operation", "PlaneOrder", "Setting", "WorkOrder", "FieldRun", "Coefficient",
    "SensorCheck", "FieldRecord",
    "vector", "polar", "effect", "Formatter", "unit_labels",
]

ACTIONS = ("add", "remove")
KINDS = ("hole", "plate", "washers", "mass")


def vector(amount: float, angle_deg: float) -> complex:
    """The complex number ``amount * exp(i * angle)`` (angle in degrees).

    >>> abs(vector(2.0, 90.0) - 2j) < 1e-12
    True
    """
    return amount * cmath.exp(1j * math.radians(angle_deg))


def effect(action: str, amount_g_mm: float, angle_deg: float) -> complex:
    """The change of the rotor's unbalance caused by adding or removing ``amount_g_mm`` at ``angle_deg``.

    Adding mass puts unbalance at its angle; removing it takes unbalance away there (the same as adding at
    angle + 180°).  [D, docs/methods.md §2, helpers]

    >>> polar(effect("remove", 50.0, 30.0))
    (50.0..., 210.0...)
    """
    if action == "add":
        return vector(amount_g_mm, angle_deg)
    if action == "remove":
        return -vector(amount_g_mm, angle_deg)
    raise BadInput.about("action", f"{action!r} is not allowed; use 'add' or 'remove'")


def _q(value: float, unit: str):
    from toolkit.units import Q_

    return Q_(value, unit)


@dataclass(frozen=True)
class Identification:
    """Who and what the order is for. Free text, printed as given, never evaluated."""

    number: str
    rotor: str
    customer: str = ""
    drawing: str = ""
    serial: str = ""
    date: str = ""
    notes: str = ""
    #: SHA-256 (hex) of the job text the order was built from ("" when built from data without a text)
    input_sha256: str = ""


@dataclass(frozen=True)
class Tolerance:
    """The permissible residual unbalance of one correction plane and where it comes from."""

    u_per_g_mm: float
    method: str
    source: str

    @property
    def u_per(self):
        """The allowance as a pint quantity [unbalance]."""
        return _q(self.u_per_g_mm, "g*mm")


@dataclass(frozen=True)
class Operation:
    """One numbered step of the work order.

    ``kind`` is ``hole``, ``plate``, ``washers`` or ``mass``; ``action`` is ``add`` or ``remove``;
    ``description`` says in words what to do (for example ``"drill 2 holes Ø10.0 mm, 12.3 mm deep to full
    diameter"``); ``mass_g`` is the mass added or removed; ``unbalance_g_mm`` what the operation achieves at
    ``angle_deg``. ``details`` are extra (label, text) pairs for the shop floor.
    """

    number: int
    plane: str
    kind: str
    action: str
    description: str
    angle_deg: float
    mass_g: float
    unbalance_g_mm: float
    radius_mm: float
    details: tuple[tuple[str, str], ...] = ()

    def __post_init__(self):
        if self.action not in ACTIONS:
            raise BadInput(f"operation {self.number}: action {self.action!r} is not allowed; use add or remove")
        if self.kind not in KINDS:
            raise BadInput(f"operation {self.number}: kind {self.kind!r} is not allowed; use {', '.join(KINDS)}")
        if not 0.0 <= self.angle_deg < 360.0:
            raise BadInput(f"operation {self.number}: angle {self.angle_deg!r} must lie in [0, 360)")

    @property
    def mass(self):
        return _q(self.mass_g, "g")

    @property
    def effect(self) -> complex:
        """The change this operation makes to the plane's unbalance, g·mm as a complex vector."""
        return effect(self.action, self.unbalance_g_mm, self.angle_deg)


@dataclass(frozen=True)
class PlaneOrder:
    """Everything the work order says about one correction plane."""

    name: str
    position_mm: float
    radius_mm: float
    surface: str
    method: str
    tolerance: Tolerance
    initial_g_mm: float
    initial_deg: float
    correction_action: str
    correction_g_mm: float
    correction_deg: float
    operations: tuple[Operation, ...]
    predicted_g_mm: float
    predicted_deg: float
    notes: tuple[str, ...] = ()
    limit_g_mm: float | None = None
    #: The acceptance rule of the check run, in words (the rule that decided ``limit_g_mm``).
    rule: str = ""
    #: The share of the key mismatch in this plane (heavy spot, in service), None without key geometry. The
    #: correction covers it: ``correction`` and ``predicted`` include it, ``initial`` is as measured.
    key_g_mm: float | None = None
    key_deg: float | None = None

    @property
    def limit(self) -> float:
        """The acceptance limit in g·mm: the allowance, less the measurement error allowance if one was
        given (``limit_g_mm``)."""
        return self.tolerance.u_per_g_mm if self.limit_g_mm is None else self.limit_g_mm

    @property
    def passed(self) -> bool:
        """The predicted residual is within the acceptance limit."""
        return self.predicted_g_mm <= self.limit * (1 + 1e-9)

    @property
    def initial(self):
        return _q(self.initial_g_mm, "g*mm")

    @property
    def predicted(self):
        return _q(self.predicted_g_mm, "g*mm")


@dataclass(frozen=True)
class Setting:
    """A value the order used where docs/methods.md marks it [M] or [CP]: what, the value, its mark, whether the
    job gave it (``given``) or the default was used, and how to override it."""

    name: str
    value: str
    mark: str
    given: bool
    how: str


@dataclass(frozen=True)
class FieldRun:
    """One trial-mass run as measured: its name, the trial masses on the rotor during it (plane, mass [g],
    angle [deg] in the order's angle sense) and one reading per sensor (amount in the reading unit, phase
    [deg] in the instrument's own sense, as written in the job)."""

    name: str
    trials: tuple[tuple[str, float, float], ...]
    readings: tuple[tuple[float, float], ...]


@dataclass(frozen=True)
class Coefficient:
    """One influence coefficient: the reading at ``sensor`` caused by 1 g at 0° in ``plane`` (``amount`` in
    ``unit``, e.g. "um per g", at ``angle_deg`` in the solver's weight-angle frame)."""

    sensor: str
    plane: str
    amount: float
    angle_deg: float
    unit: str


@dataclass(frozen=True)
class SensorCheck:
    """What the check run should read at one sensor: the vibration predicted after this order's operations
    (``amount`` at ``angle_deg``, instrument phase sense) beside the original reading (``original``)."""

    sensor: str
    amount: float
    angle_deg: float
    original: float


@dataclass(frozen=True)
class FieldRecord:
    """A field job recorded in full: the runs, the influence coefficients, the condition number and the
    solver's warnings, which trial masses are on the rotor after the last run and whether they come off,
    and the check run's predicted vibration per sensor."""

    reading_unit: str
    phase: str
    sensors: tuple[str, ...]
    runs: tuple[FieldRun, ...]
    coefficients: tuple[Coefficient, ...]
    condition_number: float
    warnings: tuple[str, ...]
    trials_left_on: bool
    trials_on: tuple[tuple[str, float, float], ...]
    check: tuple[SensorCheck, ...]

    # The words every exporter prints (one wording, so that the PDF and the spreadsheet agree).

    def reading(self, amount: float, angle_deg: float) -> str:
        """A vibration reading with its unit and phase sense, e.g. ``17.50 um at 253.7° (lag)``."""
        return f"{Formatter.number(amount, 4)} {self.unit} at {angle_deg:.1f}° ({self.phase})"

    @property
    def unit(self) -> str:
        """The reading unit as printed (``um`` as ``µm``)."""
        from toolkit.units import METRIC

        return METRIC.symbol(self.reading_unit)

    def run_rows(self, fmt) -> list[list[str]]:
        """[run, trial masses, readings per sensor] for each run."""
        rows = []
        for run in self.runs:
            trials = "; ".join(f"{plane}: {fmt.mass(g)} at {fmt.where(a)}" for plane, g, a in run.trials) or "none"
            readings = "; ".join(f"{s}: {self.reading(amount, a)}"
                                 for s, (amount, a) in zip(self.sensors, run.readings))
            rows.append([run.name, trials, readings])
        return rows

    def coefficient_rows(self) -> list[list[str]]:
        """[sensor, plane, coefficient] with its unit: the reading caused by 1 g at 0° in the plane."""
        return [[c.sensor, c.plane, f"{Formatter.number(c.amount, 4)} {self.unit} per g at {c.angle_deg:.1f}° "
                 f"({self.phase})"]
                for c in self.coefficients]

    def conditioning(self) -> str:
        """The condition number in words."""
        return (f"Condition number of the coefficient matrix: {self.condition_number:.3g} (1 is ideal; large values "
                f"mean the planes fight each other and small reading errors move the corrections a lot).")

    def trial_steps(self, fmt) -> list[str]:
        """The trial-mass step before the operations: what comes off (or stays on), one line per mass."""
        if not self.trials_on:
            return []
        if self.trials_left_on:
            return [f"Leave the trial mass on plane {plane} ({fmt.mass(g)} at {fmt.where(a)}): the corrections "
                    f"count it" for plane, g, a in self.trials_on]
        return [f"Remove the trial mass from plane {plane}: {fmt.mass(g)} at {fmt.where(a)}"
                for plane, g, a in self.trials_on]

    def check_rows(self) -> list[list[str]]:
        """[sensor, original reading, predicted after the operations] for the check run."""
        return [[c.sensor, f"{Formatter.number(c.original, 4)} {self.unit}",
                 self.reading(c.amount, c.angle_deg)] for c in self.check]


#: The paper sizes a work order prints on, in words.
PAPERS = {"A4": "A4 (210 mm × 297 mm)", "Letter": "Letter (8.5 in × 11 in)"}


def rule_words(rules) -> str:
    """The check-run rule of an order in words from its planes' rules (each said once, in plane order); the
    plain rule when no plane has one. :attr:`WorkOrder.acceptance_rule` and the register's certificate use it.

    >>> rule_words(["pass when residual <= 1", "", "pass when residual <= 1"])
    'pass when residual <= 1'
    """
    return "; ".join(dict.fromkeys(r for r in rules if r)) or "pass when residual <= allowance"


def default_paper(units: str) -> str:
    """Letter for the inch unit systems, A4 for metric."""
    from toolkit.units import unit_system

    return "Letter" if unit_system(units).inch else "A4"


def paper_setting(paper: str, units: str, given_by: str = "") -> Setting:
    """The values-used entry for the paper: ``paper`` (empty: the unit system's default) and who chose it
    (``given_by``, e.g. "job file"; empty: the default)."""
    name = paper or default_paper(units)
    why = f"from the {given_by}" if given_by else f"the default for {units} units"
    return Setting("paper", f"{PAPERS[name]}, {why}", "CP", bool(given_by), '[shop] paper = "A4" or "Letter"')


def with_paper(order: "WorkOrder", paper: str, given_by: str) -> "WorkOrder":
    """The order printed on another paper ("A4" or "Letter"), its values-used list saying who chose it."""
    import dataclasses

    if paper not in PAPERS:
        raise BadInput(f"paper {paper!r} is not allowed; give A4 or Letter")
    settings = tuple(s for s in order.settings if s.name != "paper") + (paper_setting(paper, order.units, given_by),)
    return dataclasses.replace(order, paper=paper, settings=settings)


@dataclass(frozen=True)
class WorkOrder:
    """A finished work order. Exporters only read it.

    ``angle_sense`` is ``"against rotation"`` or ``"with rotation"``; ``units`` is ``metric`` or
    ``imperial`` (the system the exporters print in). ``passed`` is true when every plane's predicted
    residual is within its allowance.
    """

    ident: Identification
    rotor_mass_kg: float
    service_speed_rpm: float
    balancing_speed_rpm: float
    grade: str
    criterion: str
    material: str
    u_per_total_g_mm: float
    angle_reference: str
    angle_sense: str
    units: str
    planes: tuple[PlaneOrder, ...]
    measurement: str
    cautions: tuple[str, ...]
    sources: tuple[str, ...]
    settings: tuple[Setting, ...] = ()
    warnings: tuple[str, ...] = ()
    #: "A4" or "Letter"; empty: from the unit system (Letter for imperial, A4 for metric).
    paper: str = ""
    inputs: dict = field(default_factory=dict, compare=False, hash=False)
    #: the runs, coefficients and check-run predictions of an order built from trial-mass runs (else None)
    field_record: FieldRecord | None = None
    #: The key convention the rotor is balanced to (ISO 21940-32 half-key, full-key, no-key; "" when the job
    #: has no [key] table), what sat in its keyway during this balancing, its marking and whether the job gave
    #: the marking (else by convention, from memory), and the key mismatch (``KeyUnbalance.to_dict()``) or None.
    key_convention: str = ""
    keyway_fill: str = ""
    key_marking: str = ""
    key_marking_given: bool = False
    key_unbalance: dict | None = None
    #: kind "arbor-index": plane name -> ``IndexResult.to_dict()`` (the arbor's and the part's shares)
    arbor_index: dict | None = None

    @property
    def passed(self) -> bool:
        return all(p.passed for p in self.planes)

    @property
    def paper_name(self) -> str:
        """The paper the order prints on: its own, or Letter for imperial and A4 for metric units."""
        return self.paper or default_paper(self.units)

    @property
    def acceptance_rule(self) -> str:
        """The check-run rule in words, decided once when the order is built: every exporter prints it and
        compares with each plane's :attr:`PlaneOrder.limit` (the allowance less ΔU where one is given)."""
        return rule_words(p.rule for p in self.planes)

    @property
    def operations(self) -> tuple[Operation, ...]:
        """All operations of all planes, in their numbered order."""
        return tuple(op for plane in self.planes for op in plane.operations)

    @property
    def rotor_mass(self):
        return _q(self.rotor_mass_kg, "kg")

    def to_dict(self) -> dict:
        """A JSON-ready dictionary (amounts in g·mm, g, mm, degrees, as the key names say)."""
        data = {name: _plain(getattr(self, name)) for name in _field_names(WorkOrder) if name != "inputs"}
        return self._completed(data)

    def to_json(self) -> str:
        """The compact JSON text of :meth:`to_dict` (UTF-8 characters as they are), made by orjson from the
        dataclasses themselves without the dictionaries: about a fifth of the time of ``json.dumps`` of
        :meth:`to_dict`, which the register spent on every job it records. The same data (a number may be
        written in another form, ``1e-5`` for ``1e-05``, and a non-finite one, which JSON cannot hold, as ``null``);
        a value orjson does not know takes the slow way."""
        import orjson

        data = {name: getattr(self, name) for name in _field_names(WorkOrder) if name != "inputs"}
        data["planes"] = [{name: getattr(p, name) for name in _field_names(PlaneOrder)} for p in self.planes]
        try:
            return orjson.dumps(self._completed(data)).decode()
        except TypeError:
            import json

            return json.dumps(self.to_dict(), ensure_ascii=False, separators=(",", ":"))

    def _completed(self, data: dict) -> dict:
        """``data`` (the fields, ``planes`` as one mapping a plane) with what :meth:`to_dict` adds."""
        data["passed"] = self.passed
        for plane, raw in zip(self.planes, data["planes"]):
            raw["passed"] = plane.passed
            raw["u_per_g_mm"] = plane.tolerance.u_per_g_mm
        data["corrections"] = [
            {"plane": p.name, "mass_g": op.mass_g, "angle_deg": op.angle_deg, "action": op.action,
             "kind": op.kind, "description": op.description}
            for p in self.planes for op in p.operations
        ]
        return data


@functools.cache
def _field_names(cls) -> tuple[str, ...]:
    return tuple(f.name for f in fields(cls))


_LEAVES = frozenset((str, float, int, bool, type(None)))


def _plain(value):
    """``dataclasses.asdict`` of a work-order part, the same dictionaries, lists and tuples, without
    deep-copying the leaves that cannot change (numbers, text, None), which made most of its time (the
    register converts the order of every job it records)."""
    cls = type(value)
    if cls in _LEAVES:
        return value
    if hasattr(cls, "__dataclass_fields__"):
        out = {}
        for name in _field_names(cls):  # a leaf is taken as it is here, without a call per field
            v = getattr(value, name)
            out[name] = v if type(v) in _LEAVES else _plain(v)
        return out
    if cls is tuple or cls is list:
        return cls([v if type(v) in _LEAVES else _plain(v) for v in value])
    if cls is dict:
        return {_plain(k): _plain(v) for k, v in value.items()}
    return copy.deepcopy(value)


def key_pairs(order: WorkOrder, fmt: Formatter) -> list[tuple[str, str]]:
    """The key convention, the keyway's fill, the marking and the key mismatch as (label, text) pairs; none
    when the job has no [key] table. Both exporters print them."""
    if not order.key_convention:
        return []
    fill = {"key": "the key", "half-key": "a half-key", "nothing": "nothing"}.get(order.keyway_fill, order.keyway_fill)
    pairs = [("Key convention", f"{order.key_convention} (ISO 21940-32); {fill} in the keyway while balanced"),
             ("Key marking", order.key_marking + ("" if order.key_marking_given else " (by convention)"))]
    k = order.key_unbalance
    if k is not None:
        shares = "; ".join(f"{p.name} {fmt.unbalance(p.key_g_mm)} at {fmt.angle(p.key_deg)}" for p in order.planes
                           if p.key_g_mm is not None)
        pairs.append(("Key mismatch in service", f"{fmt.unbalance(k['amount_g_mm'])} at {fmt.angle(k['angle_deg'])}"
                      f" (heavy spot), corrected with the measured unbalance: {shares}"))
    return pairs


def example_order(number: str = "INV-HAND-01", units: str = "metric") -> WorkOrder:
    """A small work order put together by hand: an invented example for documentation and exporter tests.

    The numbers are invented; the allowances follow the ISO 21940-11 shop formula
    U_per = 9549.3 · G · m / n (G 6.3, 412 kg, 1480 r/min: 16 747 g·mm) split by the lever rule
    (centre of mass 540 mm from bearing A on a 1200 mm span). The predicted residual is computed from the
    operations with :func:`effect`, not typed in.

    >>> order = example_order()
    >>> [op.kind for op in order.operations], order.passed
    (['hole', 'plate'], True)
    """
    u_total = 60000 / (2 * math.pi) * 6.3 * 412 / 1480
    allowances = (u_total * 660 / 1200, u_total * 540 / 1200)
    source = "ISO 21940-11:2016, 6.3.3 (U_per) and 7.2 lever rule (clause wording from memory)"
    ops = (
        Operation(1, "drive end", "hole", "remove", "drill 2 holes Ø14.0 mm, 27.0 mm deep to full diameter "
                  "(tip 31.2 mm), 12° apart, centred", 40.0, 65.0, 40_200.0, 310.0,
                  (("drill", "Ø14.0 mm, 118° point"),)),
        Operation(2, "fan end", "plate", "add", "weld on a plate 8 × 50 × 31 mm rolled to the radius, "
                  "centred", 20.0, 95.0, 30_780.0, 324.0, (("weigh before welding", "95.0 g"),)),
    )
    initial = ((42_000.0, 40.0), (30_500.0, 200.0))
    planes = []
    for (name, pos, radius, surface, method), (u0, a0), u_per, op in zip(
            (("drive end", 150.0, 310.0, "outer", "drill"), ("fan end", 1050.0, 320.0, "outer", "plate")),
            initial, allowances, ops):
        residual = vector(u0, a0) + op.effect
        amount, angle = polar(residual)
        corr_action = "remove" if method == "drill" else "add"
        corr_angle = a0 if corr_action == "remove" else (a0 + 180.0) % 360.0
        planes.append(PlaneOrder(name, pos, radius, surface, method, Tolerance(u_per, "lever rule", source),
                                 u0, a0, corr_action, u0, corr_angle, (op,), amount, angle))
    return WorkOrder(
        ident=Identification(number, "invented two-plane fan rotor (invented example)",
                             "Invented Customer Ltd (invented example)", "D-0000 rev A", "SN-000", "2026-12-01",
                             "invented example, not a real job"),
        rotor_mass_kg=412.0, service_speed_rpm=1480.0, balancing_speed_rpm=600.0, grade="G 6.3",
        criterion="iso", material="carbon steel", u_per_total_g_mm=u_total, angle_reference="keyway",
        angle_sense="against rotation", units=units, planes=tuple(planes),
        measurement="balancing machine readings (invented)",
        cautions=("Secure every trial and correction mass before any run.",
                  "Lock out the drive while drilling or welding."),
        sources=(source,),
        settings=(Setting("angle marking step", "1°", "CP", False, "[shop] angle_step"),),
    )
