"""Job files: one rotor's balancing job as a TOML file of our own design, read and validated.

A job file has these tables (``examples/job-*.toml`` are complete, invented examples):

``[order]``
    ``number`` (required), ``rotor`` (required: what the rotor is), ``customer``, ``drawing``, ``serial``,
    ``date`` (default: the day the order is made, and the order says so), ``notes``. Free text; it is
    printed, never evaluated.
``[rotor]``
    ``mass`` (required, e.g. ``"412 kg"``), ``service_speed`` (required: the maximum service speed),
    ``balancing_speed`` (default: the service speed, listed as such on the order), ``grade`` (``"G 6.3"`` or ``"6.3 mm/s"``; default
    ``G 6.3`` [CP]), ``material`` (default ``"carbon steel"`` [CP]), ``criterion`` (``"iso"``, default,
    ``"api"`` or ``"mil-std-167"``), ``error_allowance`` (ΔU, an unbalance; default 0 [M]).
``[geometry]``
    ``bearing_span`` and ``centre_of_mass`` (measured from bearing A towards bearing B), both required;
    ``min_share`` (the lever rule's bound, default 0.3 [M]); ``static_share`` (two planes of a narrow or
    overhung rotor: static and couple tolerances, which then set both planes' allowances; refused with one
    plane); ``one_plane_rule`` (one plane: ``"whole"``, default, the whole U_per by ISO 21940-11, or
    ``"statics"``, the stricter transfer of the bearing shares); ``rotor_length`` (the rotor body's axial
    length, to check that one plane suffices against the plane's correction diameter).
``[[plane]]`` (one or two)
    ``name``, ``position`` (from bearing A towards B; may lie outside the span), ``radius`` (correction
    radius), ``surface`` (``outer``, ``inner`` or ``face``), ``methods`` (a list in order of preference,
    from ``drill``, ``plate``, ``washers``); optional ``fixed_positions`` (angles in degrees where the mass
    must go, such as blades or tapped holes), ``max_depth`` (deepest hole tip), ``max_length`` (longest
    plate that fits), ``width`` (the plate seat's width; required when plates are allowed), ``wall``
    (material under a hole), ``plate_shape`` (``flat``, ``rolled``, ``face``), ``hole_orientation``
    (``axial``, ``radial``), ``washer_size`` (e.g. ``"M10"``, ``"3/8"``), ``washer_series`` (``"ISO 7089"``,
    ``"ISO 7093"``, ``"inch SAE"``; default: inch SAE in an inch unit system unless ``washer_size`` is a
    metric size, else ISO 7089), ``material`` (default: the rotor's).
``[angles]``
    ``reference`` (what marks 0°, e.g. ``"keyway"``) and ``sense`` (how angles on the rotor are counted:
    ``"against rotation"`` or ``"with rotation"``), both required.
``[measurement]``
    ``kind`` = ``"machine"``: per-plane values read from a balancing machine in ``[measurement.readings]``,
    ``PLANE = "AMOUNT@ANGLE"`` with the amount as an unbalance (``"1820 g*mm@40"``) or as a mass at the
    correction radius (``"5.9 g@40"``); ``shows`` says what the machine's angle is: ``"heavy spot"``
    (default) or ``"add"`` (where mass is to be added). ``kind`` = ``"runs"``: ``phase`` (``"lag"`` or
    ``"lead"``), ``sensors`` and ``[[measurement.run]]`` tables in the same form as the ``solve`` runs
    file (planes, radii and the weight-angle sense come from the job), optional ``trial_change_pct`` and
    ``trial_change_deg`` [CP]. ``kind`` = ``"coefficients"``: ``coefficients`` (a path, relative to the
    job file, to stored influence coefficients) and ``original`` (one reading per sensor). ``kind`` =
    ``"arbor-index"``: readings per plane at index positions on an arbor (see :mod:`toolkit.workorder.jobkey`).
``[key]`` (optional)
    The key convention this rotor is balanced to, what sits in its keyway, its marking and, with the key's
    geometry, the key mismatch to correct (see :mod:`toolkit.workorder.jobkey`).
``[shop]``
    ``units`` (``metric``/``imperial``/``inch-gram``), ``drills`` (``"metric-basic"``, ``"inch-basic"``,
    ``"metric"``, ``"inch"`` or a CSV path; default the basic set of the unit system [CP]),
    ``plate_stock`` (``"plate_stock"`` or a CSV path), ``angle_step`` (marking resolution, 1° [CP]),
    ``mass_step`` (weighing resolution, 0.1 g [CP]), ``plate_step`` (1 mm [CP]), ``point_angle`` (118°),
    ``weld_convexity`` (fraction added to a fillet's z²/2, 0.2 [M]), ``fillet`` (weld leg; default the
    minimum for the plate thickness [H]), ``paper`` (``"A4"`` or ``"Letter"``; default Letter for imperial
    units, A4 for metric), and a ``[shop.drilling]`` table of drilling rules of thumb [CP] and the shop's
    ``drills`` (a list of sizes, ``["6 mm", "No. 7", "1/4 in"]``, instead of ``[shop] drills``). Every default is printed on the work
    order as used.

Validation collects every problem before it stops; each names the file, the line, the key, the value
given and what is allowed. ``tomllib`` gives no line numbers, so :func:`key_lines` finds them in the text.
"""

from __future__ import annotations

import functools
import math
import re
import tomllib
from dataclasses import dataclass, field
from pathlib import Path
from types import MappingProxyType
from typing import Any, Mapping, NamedTuple

from toolkit.errors import BadInput

__all__ = [
    "Job", "PlaneSpec", "Measurement", "ShopSettings", "JobError",
    "load_job", "parse_job", "job_from_data", "key_lines", "job_key_names",
    "METHODS", "SURFACES", "SENSES", "DEFAULTS",
]

#: Correction methods a plane may allow, in the words used in job files.
METHODS = ("drill", "plate", "washers")
#: Surface kinds of a correction plane.
SURFACES = ("outer", "inner", "face")
#: Angle senses.
SENSES = ("against rotation", "with rotation")
#: Kinds of measurement.
KINDS = ("machine", "runs", "coefficients", "arbor index")
#: Tolerance criteria (names as in :data:`toolkit.tolerance.CRITERIA`).
CRITERIA = ("iso", "api", "mil-std-167")
#: Drilling limits a job may override ([shop.drilling]; common practice, see toolkit.fabricate.drilling.Limits).
DRILLING_KEYS = ("warn_depth_ratio", "max_depth_ratio", "max_depth_mm", "min_wall_mm", "min_wall_ratio",
                 "spacing_ratio", "depth_step_mm", "preferred_depth_ratio", "max_holes")
#: Trial-run thresholds a job may override ([measurement] with kind "runs"; common practice, see
#: toolkit.influence.Settings).
THRESHOLDS = ("trial_change_pct", "trial_change_deg")
#: What a balancing machine's angle shows.
SHOWS = ("heavy spot", "add")

#: Defaults applied when the job file is silent: value, mark (the marks of docs/methods.md) and why.
DEFAULTS: Mapping[str, tuple[str, str, str]] = MappingProxyType({
    "rotor.grade": ("G 6.3", "CP", "common practice for general machinery, fans and pumps; set [rotor] grade"),
    "rotor.material": ("carbon steel", "CP", "common practice; set [rotor] material"),
    "shop.angle_step": ("1 deg", "CP", "common practice marking resolution; set [shop] angle_step"),
    "shop.mass_step": ("0.1 g", "CP", "common practice weighing resolution; set [shop] mass_step"),
    "shop.units": ("metric", "CP", "set [shop] units"),
})

MAX_JOB_BYTES = 1_000_000
#: Bounds of our own [CP] on the shop's resolutions: the angle marking step in degrees and the weighing step.
ANGLE_STEP_BOUNDS = (0.01, 45.0)
MASS_STEP_BOUNDS = ("0.001 g", "1 kg")

_TEXT_LIMIT = 2000


class JobError(BadInput):
    """Every problem found in a job file, reported at once.

    ``problems`` holds one message per problem; ``head`` is the line that introduces them (``"job.toml: 6
    problems in the job file:"``); ``str()`` joins head and problems on one line. The command line prints
    the head and then one problem per line.
    """

    def __init__(self, origin: str, problems: list[str], what: str = "the job file"):
        self.origin = origin
        self.problems = tuple(problems)
        count = len(problems)
        self.head = f"{origin}: {count} problem{'s' if count != 1 else ''} in {what}:"
        super().__init__(self.head + " " + "; ".join(problems))


# -- line numbers of keys ------------------------------------------------------------------------

_HEADER = re.compile(r"^\s*(\[\[?)\s*([^\]]+?)\s*\]\]?\s*(?:#.*)?$")
_KEY = re.compile(r"""^\s*((?:"[^"]*"|'[^']*'|[A-Za-z0-9_-]+)(?:\s*\.\s*(?:"[^"]*"|'[^']*'|[A-Za-z0-9_-]+))*)\s*=""")


def _split_dotted(text: str) -> list[str]:
    parts = re.findall(r"""\s*("[^"]*"|'[^']*'|[A-Za-z0-9_-]+)\s*(?:\.|$)""", text)
    return [p[1:-1] if p[:1] in "\"'" else p for p in parts]


def key_lines(text: str) -> dict[tuple, int]:
    """Map each key path to the line where it is written (1-based).

    Paths are tuples of names, with the index of an array-of-tables entry after its name:
    ``("plane", 1, "radius")``. Table headers map too (``("plane", 1)``). Keys inside multi-line values are
    not tracked (their value's first line is).

    >>> key_lines('[order]\\nnumber = "7"\\n[[plane]]\\nname = "A"\\n[[plane]]\\nname = "B"\\n')[("plane", 1, "name")]
    6
    """
    lines: dict[tuple, int] = {}
    counters: dict[tuple, int] = {}
    current: tuple = ()
    in_multiline = None
    for number, line in enumerate(text.splitlines(), start=1):
        if in_multiline:
            if line.count(in_multiline) % 2 == 1:
                in_multiline = None
            continue
        header = _HEADER.match(line)
        if header and not _KEY.match(line):
            names = _split_dotted(header.group(2))
            if header.group(1) == "[[":
                base = tuple(_resolve(names[:-1], counters)) + (names[-1],)
                index = counters.get(base, -1) + 1
                counters[base] = index
                current = base + (index,)
                # nested arrays restart under a new parent entry
                for key in [k for k in counters if len(k) > len(current) and k[: len(current)] == current]:
                    del counters[key]
            else:
                current = tuple(_resolve(names, counters))
            lines.setdefault(current, number)
            continue
        key = _KEY.match(line)
        if key:
            path = current + tuple(_split_dotted(key.group(1)))
            lines.setdefault(path, number)
            rest = line[key.end():]
            for quote in ('"""', "'''"):
                if rest.count(quote) == 1:
                    in_multiline = quote
    return lines


def _resolve(names: list[str], counters: dict[tuple, int]) -> list:
    """Insert array-of-tables indices into a header path ([plane.limits] under the last [[plane]])."""
    out: list = []
    for name in names:
        out.append(name)
        key = tuple(out)
        if key in counters:
            out.append(counters[key])
    return out


# -- the parsed job ------------------------------------------------------------------------------

@dataclass(frozen=True)
class PlaneSpec:
    """One correction plane as the job describes it (lengths as pint quantities)."""

    name: str
    position: Any
    radius: Any
    surface: str
    methods: tuple[str, ...]
    fixed_positions: tuple[float, ...] = ()
    max_depth: Any = None
    max_length: Any = None
    material: str = "carbon steel"
    width: Any = None
    wall: Any = None
    plate_shape: str = "rolled"
    hole_orientation: str = "radial"
    washer_size: str | None = None
    washer_series: str | None = None

    def to_dict(self) -> dict:
        return {
            "name": self.name, "position_mm": self.position.m_as("mm"), "radius_mm": self.radius.m_as("mm"),
            "surface": self.surface, "methods": list(self.methods),
            "fixed_positions_deg": list(self.fixed_positions),
            "max_depth_mm": None if self.max_depth is None else self.max_depth.m_as("mm"),
            "max_length_mm": None if self.max_length is None else self.max_length.m_as("mm"),
            "material": self.material, "width_mm": None if self.width is None else self.width.m_as("mm"),
            "wall_mm": None if self.wall is None else self.wall.m_as("mm"), "plate_shape": self.plate_shape,
            "hole_orientation": self.hole_orientation, "washer_size": self.washer_size,
            "washer_series": self.washer_series,
        }


@dataclass(frozen=True)
class Measurement:
    """What was measured.

    ``kind`` is ``machine`` (``readings``: plane name -> (unbalance quantity, angle in degrees of the heavy
    spot)), ``runs`` (``runs``: the runs description for :func:`toolkit.influence.runs_from_dict`, with
    planes, radii and weight-angle sense filled in from the job) or ``coefficients`` (``coefficients``:
    path of the stored coefficients file, ``original``: one reading per sensor).
    """

    kind: str
    readings: Mapping[str, tuple[Any, float]] = field(default_factory=dict)
    shows: str = "heavy spot"
    runs: Mapping | None = None
    coefficients: Path | None = None
    original: tuple[str, ...] = ()
    raw: Mapping = field(default_factory=dict)
    thresholds: Mapping = field(default_factory=dict)
    #: kind "arbor-index": plane name -> :class:`toolkit.arbor.IndexResult` (``readings`` holds the part's shares)
    index: Mapping = field(default_factory=dict)
    max_spread: float | None = None


@dataclass(frozen=True)
class ShopSettings:
    """The shop's settings: unit system, tables, rounding steps."""

    units: str
    drills: Any  # a set name, a CSV path, or the job's own list (a tuple of stock.Drill)
    plate_stock: str
    angle_step_deg: float
    mass_step: Any
    plate_step: Any = None
    point_angle_deg: float = 118.0
    drilling: Mapping = field(default_factory=dict)
    given: tuple[str, ...] = ()
    weld_convexity: float | None = None
    fillet: Any = None
    paper: str = ""  # "A4" or "Letter"; empty: from the unit system
    drilling_given: tuple[str, ...] = ()  # the keys of [shop.drilling] the job gave


@dataclass(frozen=True)
class Job:
    """A validated job: everything the chain needs, with units, and where each default came from.

    ``defaults_used`` lists the keys the file left out and that took a default (see :data:`DEFAULTS`).
    """

    origin: str
    order: Mapping[str, str]
    mass: Any
    service_speed_rpm: float
    balancing_speed_rpm: float
    grade: str
    criterion: str
    material: str
    bearing_span: Any
    centre_of_mass: Any
    static_share: float | None
    min_share: float | None
    error_allowance: Any
    planes: tuple[PlaneSpec, ...]
    angle_reference: str
    angle_sense: str
    measurement: Measurement
    shop: ShopSettings
    defaults_used: tuple[str, ...] = ()
    one_plane_rule: str = "whole"
    rotor_length: Any = None
    #: SHA-256 (hex) of the UTF-8 job text, set by :func:`parse_job` ("" for a job built from data)
    input_sha256: str = ""
    #: the [key] table (:class:`toolkit.workorder.jobkey.KeySpec`), None when the job has none
    key: Any = None
    #: where each key was written: key path -> line (a job file), or key path -> column (a planner row)
    key_lines: Mapping[tuple, int] = field(default_factory=dict, repr=False, compare=False)
    key_columns: Mapping[tuple, str] | None = field(default=None, repr=False, compare=False)

    @property
    def number(self) -> str:
        """The order number."""
        return self.order["number"]

    def plane(self, name: str) -> PlaneSpec:
        for plane in self.planes:
            if plane.name == name:
                return plane
        raise KeyError(name)


# -- validation ----------------------------------------------------------------------------------

class _Checker:
    """Collects problems with file and line (a job file) or with the column they came from (a planner
    row: ``columns`` maps key paths to column names)."""

    def __init__(self, origin: str, lines: dict[tuple, int], columns: Mapping[tuple, str] | None = None):
        self.origin = origin
        self.lines = lines
        self.columns = columns
        self.problems: list[str] = []

    def line_of(self, path: tuple) -> int | None:
        for cut in range(len(path), 0, -1):
            if path[:cut] in self.lines:
                return self.lines[path[:cut]]
        return None

    def where(self, path: tuple) -> str:
        """The key as the user wrote it: ``line 14, plane[1].wall``, or the planner column it came from."""
        if self.columns is not None:
            for cut in range(len(path), 0, -1):
                if path[:cut] in self.columns:
                    return f"column {self.columns[path[:cut]]}"
            return _dotted(path)
        line = self.line_of(path)
        return f"line {line}, {_dotted(path)}" if line else _dotted(path)

    def add(self, path: tuple, message: str) -> None:
        self.problems.append(f"{self.where(path)}: {message}")


def _dotted(path: tuple) -> str:
    out = ""
    for part in path:
        if isinstance(part, int):
            out += f"[{part + 1}]"
        else:
            out += ("." if out else "") + (part if re.fullmatch(r"[A-Za-z0-9_-]+", part) else repr(part))
    return out or "(file)"


def _shown(value) -> str:
    text = repr(value)
    return text if len(text) <= 60 else text[:57] + "..."


_MISSING = object()
#: Control characters a printed or spreadsheet work order cannot hold (tab, line feed and carriage return
#: are allowed).
_CONTROL = re.compile(r"[\x00-\x08\x0b\x0c\x0e-\x1f\x7f]")
#: The order number (a file name, and the header of every page) refuses tabs and line breaks as well.
_CONTROL_OR_BREAK = re.compile(r"[\x00-\x1f\x7f]")


def _table(ck: _Checker, data: Mapping, path: tuple, required: bool = True) -> Mapping:
    value = data.get(path[-1], _MISSING)
    if value is _MISSING:
        if required:
            ck.add(path, f"missing; the job file needs a [{_dotted(path)}] table")
        return {}
    if not isinstance(value, dict):
        ck.add(path, f"{_shown(value)} is not a table; write it as [{_dotted(path)}]")
        return {}
    return value


def _unknown(ck: _Checker, table: Mapping, path: tuple, allowed: tuple[str, ...]) -> None:
    for key in table:
        if key not in allowed:
            ck.add(path + (key,), f"unknown key; allowed keys here: {', '.join(allowed)}")


def _text(ck: _Checker, table: Mapping, path: tuple, required: bool = False, default: str = "",
          one_line: bool = False) -> str:
    value = table.get(path[-1], _MISSING)
    if value is _MISSING:
        if required:
            ck.add(path, "missing; give it as text in quotes")
        return default
    if not isinstance(value, str):
        ck.add(path, f"{_shown(value)} is not text; write it in quotes")
        return default
    if required and not value.strip():
        ck.add(path, "is empty; give it as text in quotes")
        return default
    control = (_CONTROL_OR_BREAK if one_line else _CONTROL).search(value)
    if control:
        if control.group() in "\t\n\r":
            ck.add(path, f"{_shown(value)} contains a tab or line break (U+{ord(control.group()):04X}); "
                         "write it on one line")
        else:
            ck.add(path, f"{_shown(value)} contains a control character (U+{ord(control.group()):04X}); "
                         "remove it")
        return default
    if len(value) > _TEXT_LIMIT:
        ck.add(path, f"is {len(value)} characters long; at most {_TEXT_LIMIT} are allowed")
        return value[:_TEXT_LIMIT]
    return value


@functools.lru_cache(maxsize=4096)
def _parsed(text: str, kind: str, positive: bool, nonnegative: bool, bounds, what):
    """A quantity parsed from text, cached: planner rows repeat the same values ("412 kg", "1480 rpm") and
    parsing is the costly part of validating a row. Errors are not cached (they raise)."""
    from toolkit.units import quantity

    return quantity(text, kind, None, positive=positive, nonnegative=nonnegative, bounds=bounds, what=what)


def _quantity(ck: _Checker, table: Mapping, path: tuple, kind: str, required: bool = False,
              positive: bool = False, nonnegative: bool = False, bounds=None, what: str = "value"):
    from toolkit.units import quantity

    value = table.get(path[-1], _MISSING)
    if value is _MISSING:
        if required:
            from toolkit.units import KINDS as UNIT_KINDS

            ck.add(path, f"missing; give a {kind} with its unit, e.g. \"{UNIT_KINDS[kind].example}\"")
        return None
    try:
        if isinstance(value, str):
            return _parsed(value, kind, positive, nonnegative, bounds, what)
        return quantity(value, kind, None, positive=positive, nonnegative=nonnegative, bounds=bounds, what=what)
    except BadInput as exc:
        ck.add(path, _strip_name(exc, value))
        return None


def _strip_name(exc: BadInput, value) -> str:
    """The reader's message about the key's value (the key itself is named by the checker)."""
    message = exc.text() if exc.parameter is None else str(exc)
    return message if _shown(value) in message or repr(str(value)) in message else f"{_shown(value)}: {message}"


def _choice(ck: _Checker, table: Mapping, path: tuple, allowed: tuple[str, ...], required: bool = False,
            default: str | None = None) -> str | None:
    value = table.get(path[-1], _MISSING)
    if value is _MISSING:
        if required:
            ck.add(path, f"missing; allowed: {', '.join(repr(a) for a in allowed)}")
        return default
    norm = " ".join(str(value).strip().lower().replace("_", " ").replace("-", " ").split())
    if not isinstance(value, str) or norm not in allowed:
        ck.add(path, f"{_shown(value)} is not allowed; allowed: {', '.join(repr(a) for a in allowed)}")
        return default
    return norm


_GRADE = re.compile(r"^\s*G\s*([0-9]+(?:\.[0-9]+)?)\s*$", re.IGNORECASE)


def _grade(ck: _Checker, table: Mapping, path: tuple) -> str | None:
    value = table.get(path[-1], _MISSING)
    if value is _MISSING:
        return None
    if isinstance(value, str):
        match = _GRADE.match(value)
        if match:
            return f"G {match.group(1)}"
        try:
            from toolkit.units import magnitude

            g = magnitude(value, "grade", "mm/s", None, positive=True)
            return f"G {g:g}"
        except BadInput:
            pass
    ck.add(path, f"{_shown(value)} is not a balance quality grade; write e.g. \"G 6.3\" or \"6.3 mm/s\"")
    return None


def _angle(ck: _Checker, value, path: tuple) -> float | None:
    from toolkit.vectors import parse_angle

    if isinstance(value, bool) or not isinstance(value, (int, float, str)):
        ck.add(path, f"{_shown(value)} is not an angle; give degrees such as 90 or \"90 deg\"")
        return None
    try:
        return parse_angle(value, None)
    except BadInput:
        ck.add(path, f"{_shown(value)} is not an angle; give degrees such as 90 or \"90 deg\"")
        return None


def parse_job(text: str, origin: str = "<job>", base: Path | None = None) -> Job:
    """Validate the TOML text of a job and return a :class:`Job`, or raise :class:`JobError` listing every
    problem with its line.

    ``base`` is the folder that relative paths in the job (shop tables, stored coefficients) are read
    from; default: the current folder.

    >>> job = parse_job(EXAMPLE)
    >>> job.number, job.planes[1].methods, job.measurement.readings["B"][1]
    ('INV-0001', ('plate',), 200.0)
    >>> parse_job(EXAMPLE.replace('"412 kg"', '412'), "job.toml")
    Traceback (most recent call last):
    ...
    toolkit.workorder.job.JobError: job.toml: 1 problem in the job file: line 6, rotor.mass: 412 has no unit; ...
    """
    from toolkit.fileio import MAX_NESTING, nesting_depth

    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise JobError(origin, [f"not valid TOML ({exc})"]) from None
    except RecursionError:
        data = None
    if data is None or nesting_depth(data) > MAX_NESTING:
        raise JobError(origin, [f"arrays or tables nested more than {MAX_NESTING} deep; a job file nests a few "
                                "levels at most"])
    import hashlib
    from dataclasses import replace

    job = job_from_data(data, origin, base, lines=key_lines(text))
    return replace(job, input_sha256=hashlib.sha256(text.encode("utf-8")).hexdigest())


def job_from_data(data: Mapping, origin: str = "<job>", base: Path | None = None, *,
                  lines: Mapping[tuple, int] | None = None, columns: Mapping[tuple, str] | None = None,
                  what: str = "the job file") -> Job:
    """Validate a job given as nested tables (the parsed TOML, or a planner row turned into tables) and
    return a :class:`Job`, or raise :class:`JobError` listing every problem.

    ``lines`` (key path -> line) puts line numbers into the problems; ``columns`` (key path -> column
    name) names the planner column instead.
    """
    ck = _Checker(origin, dict(lines or {}), columns)
    base = Path(base) if base is not None else Path(".")
    defaults_used: list[str] = []

    _unknown(ck, data, (), ("order", "rotor", "geometry", "plane", "angles", "measurement", "shop", "format", "key"))
    order = _read_order(ck, data, defaults_used)
    rotor = _read_rotor(ck, data, defaults_used)
    geometry = _read_geometry(ck, data)
    planes_raw, planes = _read_planes(ck, data, rotor.material)
    _check_plane_count(ck, geometry, planes_raw, planes)
    reference, sense = _read_angles(ck, data)

    # [measurement]
    meas_t = _table(ck, data, ("measurement",))
    all_names = [p.get("name") for p in planes_raw if isinstance(p.get("name"), str)]
    measurement = _measurement(ck, meas_t, all_names, planes, base, sense)

    shop = _read_shop(ck, data, base, defaults_used)

    from toolkit.workorder.jobkey import parse_key

    key = parse_key(ck, data, planes if len(planes) == len(planes_raw) else [], rotor.material)
    if ck.problems:
        raise JobError(origin, ck.problems, what)
    return Job(origin, MappingProxyType(order), rotor.mass, rotor.service, rotor.balancing, rotor.grade,
               rotor.criterion or "iso", rotor.material, geometry.span, geometry.com, geometry.share,
               geometry.min_share, rotor.error_allowance, tuple(planes), reference, sense, measurement, shop,
               tuple(defaults_used), one_plane_rule=geometry.one_plane_rule or "whole",
               rotor_length=geometry.rotor_length, key=key,
               key_lines=MappingProxyType(dict(lines or {})),
               key_columns=None if columns is None else MappingProxyType(dict(columns)))


def _read_order(ck: _Checker, data: Mapping, defaults_used: list[str]) -> dict[str, str]:
    """Read the [order] table: the order number, the rotor's name and the free-text fields."""
    order_t = _table(ck, data, ("order",))
    _unknown(ck, order_t, ("order",), ("number", "rotor", "customer", "drawing", "serial", "date", "notes"))
    order = {
        "number": _text(ck, order_t, ("order", "number"), required=True, one_line=True),
        "rotor": _text(ck, order_t, ("order", "rotor"), required=True),
    }
    for key in ("customer", "drawing", "serial", "date", "notes"):
        order[key] = _text(ck, order_t, ("order", key))
    if not order["date"].strip():
        defaults_used.append("order.date")
    if order["number"] and len(order["number"]) > 80:
        ck.add(("order", "number"), f"{len(order['number'])} characters; an order number has at most 80")
    return order


class _Rotor(NamedTuple):
    """What the [rotor] table gives (None where a value is missing or wrong)."""

    mass: Any
    service: float | None
    balancing: float | None
    grade: str | None
    criterion: str | None
    error_allowance: Any
    material: str


def _read_rotor(ck: _Checker, data: Mapping, defaults_used: list[str]) -> _Rotor:
    """Read the [rotor] table: mass, speeds, grade, criterion, error allowance and material."""
    rotor_t = _table(ck, data, ("rotor",))
    _unknown(ck, rotor_t, ("rotor",), ("mass", "service_speed", "balancing_speed", "grade", "criterion",
                                        "material", "error_allowance"))
    mass = _quantity(ck, rotor_t, ("rotor", "mass"), "mass", required=True, positive=True)
    service = _speed(ck, rotor_t, ("rotor", "service_speed"), required=True)
    balancing = _speed(ck, rotor_t, ("rotor", "balancing_speed")) or service
    if "balancing_speed" not in rotor_t:
        defaults_used.append("rotor.balancing_speed")
    grade = _grade(ck, rotor_t, ("rotor", "grade"))
    if "grade" not in rotor_t:
        grade = DEFAULTS["rotor.grade"][0]
        defaults_used.append("rotor.grade")
    criterion = _choice(ck, rotor_t, ("rotor", "criterion"), CRITERIA, default="iso")
    error_allowance = _quantity(ck, rotor_t, ("rotor", "error_allowance"), "unbalance", nonnegative=True)
    material = _text(ck, rotor_t, ("rotor", "material"), default=DEFAULTS["rotor.material"][0])
    if "material" not in rotor_t:
        defaults_used.append("rotor.material")
    if service and balancing and balancing > service * 1.0001:
        ck.add(("rotor", "balancing_speed"), f"{rotor_t.get('balancing_speed')!r} is above the service speed "
                                             f"{rotor_t.get('service_speed')!r}; a rigid-rotor balancing "
                                             "speed is at most the service speed")
    return _Rotor(mass, service, balancing, grade, criterion, error_allowance, material)


class _Geometry(NamedTuple):
    """What the [geometry] table gives (None where a value is missing or wrong), and the table itself."""

    table: Mapping
    span: Any
    com: Any
    share: float | None
    one_plane_rule: str | None
    rotor_length: Any
    min_share: float | None


def _read_geometry(ck: _Checker, data: Mapping) -> _Geometry:
    """Read the [geometry] table: bearing span, centre of mass, static share and the one-plane rule."""
    geo_t = _table(ck, data, ("geometry",))
    _unknown(ck, geo_t, ("geometry",), ("bearing_span", "centre_of_mass", "static_share", "min_share",
                                         "one_plane_rule", "rotor_length"))
    span = _quantity(ck, geo_t, ("geometry", "bearing_span"), "length", required=True, positive=True)
    com = _quantity(ck, geo_t, ("geometry", "centre_of_mass"), "length", required=True)
    share = geo_t.get("static_share")
    if share is not None and (isinstance(share, bool) or not isinstance(share, (int, float))
                              or not 0 < share < 1):
        ck.add(("geometry", "static_share"), f"{_shown(share)} is not allowed; give a fraction between 0 and 1")
        share = None
    one_plane_rule = _choice(ck, geo_t, ("geometry", "one_plane_rule"), ("whole", "statics"), default="whole")
    rotor_length = _quantity(ck, geo_t, ("geometry", "rotor_length"), "length", positive=True)
    min_share = geo_t.get("min_share")
    if min_share is not None and (isinstance(min_share, bool) or not isinstance(min_share, (int, float))
                                  or not 0 <= min_share <= 0.5):
        ck.add(("geometry", "min_share"), f"{_shown(min_share)} is not allowed; give a fraction from 0 to 0.5")
        min_share = None
    return _Geometry(geo_t, span, com, share, one_plane_rule, rotor_length, min_share)


def _read_planes(ck: _Checker, data: Mapping, material: str) -> tuple[list, list[PlaneSpec]]:
    """Read the [[plane]] tables: the raw tables as given, and the planes that passed every check."""
    planes_raw = data.get("plane", _MISSING)
    planes: list[PlaneSpec] = []
    if planes_raw is _MISSING:
        ck.add(("plane",), "missing; describe one or two correction planes as [[plane]] tables")
        planes_raw = []
    elif not isinstance(planes_raw, list) or not all(isinstance(p, dict) for p in planes_raw):
        ck.add(("plane",), "must be written as [[plane]] tables")
        planes_raw = []
    elif not 1 <= len(planes_raw) <= 2:
        ck.add(("plane",), f"{len(planes_raw)} planes given; a work order handles one or two correction planes")
    names_seen: set[str] = set()
    for i, p in enumerate(planes_raw):
        plane = _read_plane(ck, p, ("plane", i), material, names_seen)
        if plane is not None:
            planes.append(plane)
    return planes_raw, planes


def _read_plane(ck: _Checker, p: Mapping, path: tuple, material: str, names_seen: set[str]) -> PlaneSpec | None:
    """Read one [[plane]] table (``material`` is the rotor's, the plane's default); None if it has problems."""
    _unknown(ck, p, path, ("name", "position", "radius", "surface", "methods", "fixed_positions",
                           "max_depth", "max_length", "material", "width", "wall", "plate_shape",
                           "hole_orientation", "washer_size", "washer_series"))
    name = _text(ck, p, path + ("name",), required=True)
    if name and name in names_seen:
        ck.add(path + ("name",), f"{name!r} is used by another plane; plane names must differ")
    names_seen.add(name)
    position = _quantity(ck, p, path + ("position",), "length", required=True)
    radius = _quantity(ck, p, path + ("radius",), "length", required=True, positive=True)
    surface = _choice(ck, p, path + ("surface",), SURFACES, required=True)
    methods = _methods(ck, p, path + ("methods",))
    fixed = _fixed_positions(ck, p, path + ("fixed_positions",))
    max_depth = _quantity(ck, p, path + ("max_depth",), "length", positive=True)
    max_length = _quantity(ck, p, path + ("max_length",), "length", positive=True)
    plane_material = _text(ck, p, path + ("material",), default=material)
    width = _quantity(ck, p, path + ("width",), "length", positive=True)
    if "plate" in methods and width is None and "width" not in p:
        ck.add(path + ("width",), "missing; a plane that allows plates needs the seat width for the plate, "
                                  "e.g. \"40 mm\"")
    wall = _quantity(ck, p, path + ("wall",), "length", positive=True)
    default_shape = "face" if surface == "face" else "rolled"
    plate_shape = _choice(ck, p, path + ("plate_shape",), ("flat", "rolled", "face"), default=default_shape)
    if surface == "face" and plate_shape != "face":
        ck.add(path + ("plate_shape",), f"{plate_shape!r} does not suit a face; use 'face' or leave it out")
    default_orientation = "radial" if surface == "outer" else "axial"
    orientation = _choice(ck, p, path + ("hole_orientation",), ("axial", "radial"),
                          default=default_orientation)
    washer_size = _text(ck, p, path + ("washer_size",)) or None
    washer_series = _text(ck, p, path + ("washer_series",)) or None
    if None in (name, position, radius, surface) or not methods:
        return None
    return PlaneSpec(name, position, radius, surface, methods, tuple(sorted(fixed)), max_depth,
                     max_length, plane_material, width, wall, plate_shape, orientation,
                     washer_size, washer_series)


def _fixed_positions(ck: _Checker, p: Mapping, path: tuple) -> list[float]:
    """Read a plane's ``fixed_positions`` list: the angles in degrees as given (empty if none)."""
    fixed = []
    raw_fixed = p.get("fixed_positions", [])
    if not isinstance(raw_fixed, list):
        ck.add(path, f"{_shown(raw_fixed)} is not a list; write e.g. [0, 60, 120]")
    else:
        for value in raw_fixed:
            angle = _angle(ck, value, path)
            if angle is not None:
                fixed.append(angle)
        if fixed and len(fixed) < 2:
            ck.add(path, "one position given; give two or more, or none")
        if len(set(fixed)) != len(fixed):
            ck.add(path, f"{_shown(raw_fixed)} repeats an angle")
    return fixed


def _check_plane_count(ck: _Checker, geometry: _Geometry, planes_raw: list, planes: list[PlaneSpec]) -> None:
    """Check the [geometry] keys that depend on the number of planes, and that two planes are apart."""
    geo_t = geometry.table
    if geometry.share is not None and len(planes_raw) == 1:
        ck.add(("geometry", "static_share"), "a static share needs two correction planes (static and couple "
                                             "tolerances); this job has one plane, whose allowance is set by "
                                             "one_plane_rule: remove static_share")
    if len(planes_raw) == 2 and ("one_plane_rule" in geo_t or "rotor_length" in geo_t):
        key = "one_plane_rule" if "one_plane_rule" in geo_t else "rotor_length"
        ck.add(("geometry", key), "applies to a job with one correction plane; this job has two: remove it")
    if len(planes) == 2 and geometry.span is not None:
        gap = abs((planes[0].position - planes[1].position).m_as("mm"))
        if gap == 0:
            ck.add(("plane", 1, "position"), "both planes at the same axial position; two planes must be apart")


def _read_angles(ck: _Checker, data: Mapping) -> tuple[str, str | None]:
    """Read the [angles] table: the angle reference and the angle sense."""
    ang_t = _table(ck, data, ("angles",))
    _unknown(ck, ang_t, ("angles",), ("reference", "sense"))
    reference = _text(ck, ang_t, ("angles", "reference"), required=True)
    sense = _choice(ck, ang_t, ("angles", "sense"), SENSES, required=True)
    return reference, sense


def _read_shop(ck: _Checker, data: Mapping, base: Path, defaults_used: list[str]) -> ShopSettings:
    """Read the [shop] table (optional): unit system, paper, stock tables, rounding steps, drilling limits."""
    shop_t = _table(ck, data, ("shop",), required=False)
    _unknown(ck, shop_t, ("shop",), ("units", "drills", "plate_stock", "angle_step", "mass_step", "plate_step",
                                      "point_angle", "drilling", "weld_convexity", "fillet", "paper"))
    units = _choice(ck, shop_t, ("shop", "units"), ("metric", "imperial", "inch gram"), default="metric")
    units = "inch-gram" if units == "inch gram" else units  # _choice reads '-' as a space
    for key in ("units", "angle_step", "mass_step"):
        if key not in shop_t:
            defaults_used.append(f"shop.{key}")
    paper = {"a4": "A4", "letter": "Letter", None: ""}[_choice(ck, shop_t, ("shop", "paper"), ("a4", "letter"))]
    drills = _drill_set(ck, shop_t, base, units)
    stock = _table_ref(ck, shop_t, ("shop", "plate_stock"), base, ("plate_stock",), "plate_stock")
    from toolkit.fabricate.plates import PLATE_STEP_BOUNDS

    plate_step = _quantity(ck, shop_t, ("shop", "plate_step"), "length", positive=True, bounds=PLATE_STEP_BOUNDS,
                           what="plate size step")
    point_angle = _shop_point_angle(ck, shop_t)
    drill_t = _table(ck, shop_t, ("shop", "drilling"), required=False)
    drilling = _shop_drilling(ck, drill_t)
    step_deg = _shop_angle_step(ck, shop_t)
    fillet = _quantity(ck, shop_t, ("shop", "fillet"), "length", positive=True)
    convexity = _shop_convexity(ck, shop_t)
    mass_step = _quantity(ck, shop_t, ("shop", "mass_step"), "mass", positive=True, bounds=MASS_STEP_BOUNDS,
                          what="weighing step")
    if mass_step is None:
        from toolkit.units import Q_

        mass_step = Q_(0.1, "g")
    return ShopSettings(units or "metric", drills, stock, step_deg, mass_step, plate_step, point_angle,
                        MappingProxyType(drilling), tuple(k for k in shop_t), convexity, fillet, paper,
                        tuple(drill_t))


def _shop_point_angle(ck: _Checker, shop_t: Mapping) -> float:
    """Read [shop] point_angle: the drill's included angle in degrees (118 if not given or wrong)."""
    point_angle = 118.0
    if "point_angle" in shop_t:
        raw = shop_t["point_angle"]
        value = _angle(ck, raw, ("shop", "point_angle"))
        if value is not None and not 60 <= value <= 180:
            ck.add(("shop", "point_angle"), f"{_shown(raw)} is not allowed; give an included angle from 60 to 180 "
                                            "degrees (118 for general twist drills)")
        elif value is not None:
            point_angle = value
    return point_angle


def _shop_drilling(ck: _Checker, drill_t: Mapping) -> dict:
    """Read the [shop.drilling] limits (its drills key is read by _drill_set): the limits that passed."""
    drilling = {}
    for key, value in drill_t.items():
        if key == "drills":
            continue  # read by _drill_set
        if key not in DRILLING_KEYS:
            ck.add(("shop", "drilling", key), f"unknown key; allowed keys here: drills, {', '.join(DRILLING_KEYS)}")
        elif key == "max_holes":
            if isinstance(value, bool) or not isinstance(value, int) or not 1 <= value <= 36:
                ck.add(("shop", "drilling", key), f"{_shown(value)} is not allowed; give a whole number from 1 to 36")
            else:
                drilling[key] = value
        else:
            from toolkit.fabricate.drilling import limit_problem

            problem = limit_problem(key, value)
            if problem:  # the same words as the drill command's check of the same limit
                ck.add(("shop", "drilling", key), f"{_shown(value)} is not allowed; it {problem}")
            else:
                drilling[key] = value
    return drilling


def _shop_angle_step(ck: _Checker, shop_t: Mapping) -> float:
    """Read [shop] angle_step: the rounding step of angles in degrees (1 if not given or wrong)."""
    step_deg = 1.0
    if "angle_step" in shop_t:
        raw = shop_t["angle_step"]
        angle = _angle(ck, raw, ("shop", "angle_step"))
        if angle is not None:
            if not ANGLE_STEP_BOUNDS[0] <= angle <= ANGLE_STEP_BOUNDS[1]:
                ck.add(("shop", "angle_step"), f"{_shown(raw)} is not allowed; give a step from "
                                                f"{ANGLE_STEP_BOUNDS[0]:g} to {ANGLE_STEP_BOUNDS[1]:g} degrees "
                                                "(bounds of our own [CP])")
            else:
                step_deg = angle
    return step_deg


def _shop_convexity(ck: _Checker, shop_t: Mapping) -> float | None:
    """Read [shop] weld_convexity: the fillet's extra cross-section as a fraction (None if not given)."""
    convexity = None
    if "weld_convexity" in shop_t:
        raw = shop_t["weld_convexity"]
        if isinstance(raw, bool) or not isinstance(raw, (int, float)) or not math.isfinite(raw) \
                or not 0 <= raw <= 1:
            ck.add(("shop", "weld_convexity"), f"{_shown(raw)} is not allowed; give a fraction from 0 to 1 "
                                                 "(0.2 adds 20 % to the fillet's z²/2 cross-section)")
        else:
            convexity = float(raw)
    return convexity


#: Library parameters of the fabrication planner and the job key that sets each: in the plane's own
#: table, or in the shop's ([shop] or [shop.drilling]).
_PLANE_KEYS = {"radius": "radius", "wall": "wall", "width": "width", "max_length": "max_length",
               "material": "material", "fixed_positions": "fixed_positions", "size": "washer_size",
               "surface": "surface", "shape": "plate_shape", "orientation": "hole_orientation"}
#: Stands for the index of the plane being corrected in a path of :data:`TOLERANCE_KEYS`.
THIS_PLANE = object()
#: The tolerance library's parameters (``toolkit.tolerance.tolerance_report``, its warnings and the one-plane
#: doubts) as the job keys that set them: the one table for the tolerance report's errors and its warnings.
TOLERANCE_KEYS = {"bearing_span": ("geometry", "bearing_span"), "com_from_a": ("geometry", "centre_of_mass"),
                  "static_share": ("geometry", "static_share"), "min_share": ("geometry", "min_share"),
                  "one_plane_rule": ("geometry", "one_plane_rule"), "rotor_length": ("geometry", "rotor_length"),
                  "criteria": ("rotor", "criterion"), "grade": ("rotor", "grade"), "mass": ("rotor", "mass"),
                  "speed": ("rotor", "service_speed"), "error_allowance": ("rotor", "error_allowance"),
                  "correction_diameter": ("plane", THIS_PLANE, "radius"),
                  "plane_position": ("plane", THIS_PLANE, "position")}
#: Library parameters of the measurement's solvers (``toolkit.coefficients``) and the job key that sets each;
#: ``"original 2"`` is that key's second item.
_MEASUREMENT_KEYS = {"original": ("measurement", "original")}
_SHOP_KEYS = {"point_angle_deg": "point_angle", "drills": "drills", "thickness": "plate_stock",
              "step": "plate_step", "fillet": "fillet", "convexity": "weld_convexity", "units": "units"}


def job_key_names(job: Job, plane: int | None = None):
    """``name(parameter) -> text``: a library parameter named as the job key that sets it, with the line
    (or planner column) where it is written, e.g. ``plane[1].wall (line 14)`` or
    ``[shop.drilling] max_depth_ratio``; ``plane`` is the index of the plane being corrected. The tolerance
    report's parameters name their keys too (``geometry.centre_of_mass (line 27)``; ``planes NAME``, a plane's
    position, ``plane[2].position (line 43)``). A parameter no job key sets keeps the library's name (never a
    command-line option)."""
    ck = _Checker(job.origin, dict(job.key_lines), job.key_columns)

    def shown(path: tuple, header: str | None = None) -> str:
        text = f"[{header}] {path[-1]}" if header else _dotted(path)
        if job.key_columns is not None:
            place = ck.where(path)
            return text if place == _dotted(path) else f"{text} ({place})"
        line = job.key_lines.get(path)  # only a key written in the file has a line of its own
        if line is None and isinstance(path[-1], int):
            line = job.key_lines.get(path[:-1])  # an item of a list: the list's line
        return f"{text} (line {line})" if line else text

    def name(parameter: str) -> str:
        if plane is not None and parameter == "max_depth_mm" and job.planes[plane].max_depth is not None:
            return shown(("plane", plane, "max_depth"))
        if plane is not None and parameter in _PLANE_KEYS:
            return shown(("plane", plane, _PLANE_KEYS[parameter]))
        if parameter in DRILLING_KEYS:
            return shown(("shop", "drilling", parameter), "shop.drilling")
        if parameter in _SHOP_KEYS:
            return shown(("shop", _SHOP_KEYS[parameter]), "shop")
        if parameter in TOLERANCE_KEYS:
            path = TOLERANCE_KEYS[parameter]
            if THIS_PLANE not in path:
                return shown(path)
            if plane is not None:
                return shown(tuple(plane if part is THIS_PLANE else part for part in path))
            return f"[[plane]] {path[-1]}"
        head, _, plane_name = parameter.partition(" ")
        if head in _MEASUREMENT_KEYS:  # "original 2": that key's second item
            item = (int(plane_name) - 1,) if plane_name.isdigit() else ()
            return shown(_MEASUREMENT_KEYS[head] + item)
        if head == "planes":  # "planes NAME": that plane's position; "planes": every plane's
            index = next((i for i, p in enumerate(job.planes) if p.name == plane_name), None)
            return shown(("plane", index, "position")) if index is not None else "[[plane]] position"
        return parameter

    return name


def _speed(ck: _Checker, table: Mapping, path: tuple, required: bool = False) -> float | None:
    from toolkit.units import speed_rpm

    value = table.get(path[-1], _MISSING)
    if value is _MISSING:
        if required:
            ck.add(path, "missing; give a speed with its unit, e.g. \"1480 rpm\"")
        return None
    try:
        return speed_rpm(value, None)
    except BadInput as exc:
        ck.add(path, _strip_name(exc, value))
        return None


def _methods(ck: _Checker, p: Mapping, path: tuple) -> tuple[str, ...]:
    raw = p.get("methods", _MISSING)
    if raw is _MISSING:
        ck.add(path, f"missing; list the allowed correction methods in order of preference, from "
                     f"{', '.join(METHODS)}, e.g. [\"drill\"]")
        return ()
    if isinstance(raw, str):
        raw = [raw]
    if not isinstance(raw, list) or not raw:
        ck.add(path, f"{_shown(raw)} is not a list of methods; allowed: {', '.join(METHODS)}")
        return ()
    out = []
    for item in raw:
        if not isinstance(item, str) or item.strip().lower() not in METHODS:
            ck.add(path, f"{_shown(item)} is not a correction method; allowed: {', '.join(METHODS)}")
            continue
        if item.strip().lower() not in out:
            out.append(item.strip().lower())
    return tuple(out)


def _drill_set(ck: _Checker, shop_t: Mapping, base: Path, units: str | None):
    """The shop's drills: ``[shop.drilling] drills`` (a list of sizes, a set name or a CSV path) or
    ``[shop] drills`` (a set name or a CSV path); by default the basic set of the unit system."""
    from toolkit.fabricate.stock import DRILL_SETS

    default = "inch-basic" if units in ("imperial", "inch-gram") else "metric-basic"
    drill_t = shop_t.get("drilling") if isinstance(shop_t.get("drilling"), Mapping) else {}
    if "drills" in drill_t and "drills" in shop_t:
        ck.add(("shop", "drilling", "drills"), "the drills are given twice (also [shop] drills); keep one")
    if "drills" not in drill_t:
        return _table_ref(ck, shop_t, ("shop", "drills"), base, tuple(DRILL_SETS), default)
    value, path = drill_t["drills"], ("shop", "drilling", "drills")
    if isinstance(value, str):
        return _table_ref(ck, drill_t, path, base, tuple(DRILL_SETS), default)
    from toolkit.fabricate.stock import drill_list

    try:
        return drill_list(value, "drills")
    except BadInput as exc:  # about "drills" or one of them, "drills 2": the list's key or that item
        item = (exc.parameter or "").partition(" ")[2]
        ck.add(path + ((int(item) - 1,) if item.isdigit() else ()), exc.text())
        return default


def _table_ref(ck: _Checker, table: Mapping, path: tuple, base: Path, names: tuple[str, ...],
               default: str) -> str:
    value = table.get(path[-1], default)
    allowed = " or ".join(repr(n) for n in names)
    if not isinstance(value, str) or not value.strip():
        ck.add(path, f"{_shown(value)} is not allowed; give {allowed} or the path of a CSV table")
        return default
    if value.strip().lower() in names:
        return value.strip().lower()
    file = (base / value).resolve() if not Path(value).is_absolute() else Path(value)
    if file.suffix.lower() != ".csv":
        ck.add(path, f"{_shown(value)} is not allowed; give {allowed} or the path of a CSV table")
    elif not file.is_file():
        ck.add(path, f"{_shown(value)}: no such file (looked for {file})")
    return str(file)


def _measurement(ck: _Checker, meas: Mapping, names: list[str], planes: list[PlaneSpec],
                 base: Path, sense: str | None) -> Measurement:
    """The ``[measurement]`` table, read by its ``kind``."""
    kind = _choice(ck, meas, ("measurement", "kind"), KINDS, required=True)
    raw = MappingProxyType(dict(meas))
    if kind == "machine":
        return _machine_measurement(ck, meas, names, planes, raw)
    if kind == "runs":
        return _runs_measurement(ck, meas, names, planes, sense, raw)
    if kind == "coefficients":
        return _coefficients_measurement(ck, meas, base, raw)
    if kind == "arbor index":
        from toolkit.workorder.jobkey import arbor_measurement

        return arbor_measurement(ck, meas, names, planes, raw)
    return Measurement(kind or "machine", raw=raw)


def _machine_measurement(ck: _Checker, meas: Mapping, names: list[str], planes: list[PlaneSpec],
                         raw: Mapping) -> Measurement:
    """``kind = "machine"``: one reading per plane (heavy spot, or where to add)."""
    path = ("measurement",)
    _unknown(ck, meas, path, ("kind", "shows", "readings"))
    shows = _choice(ck, meas, path + ("shows",), SHOWS, default="heavy spot")
    readings_t = _table(ck, meas, path + ("readings",))
    readings: dict[str, tuple[Any, float]] = {}
    for key in readings_t:
        if key not in names:
            ck.add(path + ("readings", key), f"no plane named {key!r}; planes: {', '.join(names) or 'none'}")
    for plane in planes:
        value = readings_t.get(plane.name, _MISSING)
        vpath = path + ("readings", plane.name)
        if value is _MISSING:
            if readings_t:
                ck.add(vpath, "missing; give the reading of this plane as AMOUNT@ANGLE, e.g. \"1820 g*mm@40\"")
            continue
        reading = _reading(ck, value, vpath, plane)
        if reading is not None:
            amount, angle = reading
            if shows == "add":
                angle = (angle + 180.0) % 360.0
            readings[plane.name] = (amount, angle)
    return Measurement("machine", MappingProxyType(readings), shows or "heavy spot", raw=raw)


def _runs_measurement(ck: _Checker, meas: Mapping, names: list[str], planes: list[PlaneSpec], sense: str | None,
                      raw: Mapping) -> Measurement:
    """``kind = "runs"``: the influence-coefficient runs, checked by the runs reader itself."""
    path = ("measurement",)
    allowed = ("kind", "sensors", "phase", "run", "weights", "trials_left_on", "method", "speed", "limits",
               *THRESHOLDS)
    _unknown(ck, meas, path, allowed)
    thresholds = {}
    for key in THRESHOLDS:
        if key in meas:
            value = meas[key]
            if isinstance(value, bool) or not isinstance(value, (int, float)) or not 0 < value < 1000:
                ck.add(path + (key,), f"{_shown(value)} is not allowed; give a number greater than zero")
            else:
                thresholds[key] = float(value)
    data = {k: v for k, v in meas.items() if k in allowed and k != "kind" and k not in THRESHOLDS}
    data["planes"] = [p.name for p in planes]
    data["weight_angles"] = sense or "against rotation"
    data["radius"] = {p.name: f"{p.radius.m_as('mm')!r} mm" for p in planes}
    data["action"] = "add"
    if "phase" not in meas:
        ck.add(path + ("phase",), "missing; say how the instrument reports phase: 'lag' or 'lead'")
    if len(planes) == len(names) and sense and "phase" in meas:
        from toolkit.runs import runs_from_dict

        try:
            runs_from_dict(data, "")
        except BadInput as exc:
            ck.add(path + ("run",), str(exc))
    return Measurement("runs", runs=MappingProxyType(data), raw=raw, thresholds=MappingProxyType(thresholds))


def _coefficients_measurement(ck: _Checker, meas: Mapping, base: Path, raw: Mapping) -> Measurement:
    """``kind = "coefficients"``: a stored coefficients file and this rotor's original run."""
    path = ("measurement",)
    _unknown(ck, meas, path, ("kind", "coefficients", "original"))
    file_name = meas.get("coefficients")
    file = None
    if not isinstance(file_name, str) or not file_name.strip():
        ck.add(path + ("coefficients",), f"{_shown(file_name)}: give the path of the stored coefficients file")
    else:
        file = (base / file_name) if not Path(file_name).is_absolute() else Path(file_name)
        if not file.is_file():
            ck.add(path + ("coefficients",), f"{file_name!r}: no such file (looked for {file.resolve()})")
    original = meas.get("original")
    if not isinstance(original, list) or not original or not all(isinstance(r, str) for r in original):
        ck.add(path + ("original",), f"{_shown(original)}: give the original run as a list of readings, one "
                                     "per sensor, e.g. [\"4.2 mm/s@285\"]")
        original = []
    return Measurement("coefficients", coefficients=file, original=tuple(original), raw=raw)


def _reading(ck: _Checker, value, path: tuple, plane: PlaneSpec):
    """A machine reading as (unbalance quantity, heavy-spot angle); a mass is taken at the plane's radius."""
    from toolkit.vectors import parse_vector

    if not isinstance(value, str):
        ck.add(path, f"{_shown(value)} is not a reading; write AMOUNT@ANGLE, e.g. \"1820 g*mm@40\" or \"5.9 g@40\"")
        return None
    try:
        amount, angle = parse_vector(value, "unbalance", None)
        return amount, angle
    except BadInput as exc:
        reason = exc.text() if exc.parameter is None else str(exc)
    try:
        amount, angle = parse_vector(value, "mass", None)
    except BadInput:
        # the reader's own reason when it could not read the amount at all (not merely a wrong dimension)
        why = ("" if "is not a unbalance (" in reason or "is not a vector" in reason
               else f" ({reason})")
        ck.add(path, f"{_shown(value)} is not a reading{why}; write AMOUNT@ANGLE with an unbalance or a mass, "
                     "e.g. \"1820 g*mm@40\" or \"5.9 g@40\"")
        return None
    return (amount * plane.radius).to("g*mm"), angle


def load_job(path: str | Path) -> Job:
    """Read and validate a job file (see the module description for its tables).

    Raises :class:`JobError` (a :class:`~toolkit.errors.BadInput`) naming the file and every problem.
    """
    from toolkit.fileio import read_text

    path = Path(path)
    text = read_text(path, "job file (.toml)", MAX_JOB_BYTES)
    return parse_job(text, str(path), path.parent)


#: A small complete job used by the docstring examples (invented example, not a real rotor).
EXAMPLE = """\
# invented example
[order]
number = "INV-0001"
rotor = "invented test rotor"
[rotor]
mass = "412 kg"
service_speed = "1480 rpm"
grade = "G 6.3"
[geometry]
bearing_span = "1200 mm"
centre_of_mass = "540 mm"
[[plane]]
name = "A"
position = "150 mm"
radius = "300 mm"
surface = "outer"
methods = ["drill"]
[[plane]]
name = "B"
position = "1050 mm"
radius = "320 mm"
surface = "outer"
methods = ["plate"]
width = "60 mm"
[angles]
reference = "keyway"
sense = "against rotation"
[measurement]
kind = "machine"
[measurement.readings]
A = "21000 g*mm@40"
B = "16500 g*mm@200"
"""
