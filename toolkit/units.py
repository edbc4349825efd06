"""Units: the one pint registry of the package, parsing, dimension checks and output systems.

Everything that crosses the public boundary of Counterpoise is a pint quantity or a string such as
``"412 kg"``, ``"1480 rpm"``, ``"3.5 oz*in"``, ``"6350 g*mm"``. A bare number where a unit matters is refused
with a message that names the kind of unit expected. Inside the numeric kernels the code works on plain
floats (or numpy arrays) in fixed units; :func:`magnitude` converts once at the boundary.

The registry is built once, lazily, with pint's disk cache in a folder of its own for each Python
environment (so two virtual environments with different pint versions never share a cache). If the cache
folder cannot be created, is unwritable, or holds something pint cannot read, the registry is built without
a cache: slower to start, never broken.

Speeds: shops write ``rpm`` or ``r/min``. pint treats ``Hz`` as 1/s, so ``50 Hz`` converted naively to rpm
would give 477 rpm instead of 3000 rpm. :func:`speed_rpm` reads a speed without an angle unit (``Hz``,
``1/s``, ``1/min``) as revolutions per that time, which is what a shop means.

The reader of text (the command line, job files, planner cells, runs files and any later form all come
here) accepts exactly this grammar, and refuses anything else with the reason and the field's name::

    QUANTITY = NUMBER [spaces] UNIT
    NUMBER   = [+|-] DIGITS [. [DIGITS]] [(e|E) [+|-] DIGITS]  |  [+|-] . DIGITS [exponent]
               (ASCII digits only; nan and inf are read only to be refused as not finite)
    UNIT     = ["1/"] TERM { ("*" | "/" | "·") TERM }   (spaces allowed around the operators; left to right)
    TERM     = NAME [("^" | "**") [-] DIGIT]            (an integer power from 1 to 9)
    NAME     = a unit name of the registry: letters, then letters, digits or "_"

So ``"412 kg"``, ``"3.5 oz*in"``, ``"7850 kg/m^3"``, ``"kg/m3"`` (read as kg/m³), ``"4.2 mm/s"``, ``"12 µm"``,
``"50 1/s"``, ``"1480 r/min"`` and ``"1.48e3 rpm"`` are read; ``"1 480 rpm"``, ``"1,480 rpm"``, ``"1'480 rpm"``
(thousands separators of any kind are refused: write the digits together), ``"1480 rpm 2"``, ``"412 kg@3"``
(``@`` belongs to vectors only), ``"1480 rpm%"``, ``"9**9**9 kg"`` (no arithmetic on the number) and
``"412 g mm"`` (a space is not a product) are refused. A single ``.`` is always the decimal point. The text
never reaches pint's expression parser: each unit name is looked up on its own, so the work is linear in the
text (at most 200 characters). Our own readings of names: ``mil``/``mils`` is a thousandth of an inch (pint's
``mil`` is an angle), ``rpm``, ``rps``, ``Hz`` and ``r/min`` are read in any case (``1800 RPM``); scale names
without a dimension (``percent``, ``ppm``, ``pi``) are refused, and angle units only make sense in a speed.

Each kind (:data:`KINDS`) has a smallest and a largest size, other than zero, that text may give: bounds of
our own [CP], far beyond any shop's rotor, that keep results finite and clear of subnormal numbers (so
``"1e308 kg"`` or ``"1e-320 mm"`` is refused at the input with the bound, never turned into ``inf`` later).
Steps and resolutions have narrower bounds of their own (``bounds=`` of :func:`quantity`).
"""

from __future__ import annotations

import hashlib
import math
import os
import re
import sys
import threading
from dataclasses import dataclass
from pathlib import Path

from toolkit.errors import BadInput

__all__ = [
    "registry",
    "Q_",
    "quantity",
    "magnitude",
    "speed_rpm",
    "KINDS",
    "UnitSystem",
    "METRIC",
    "IMPERIAL",
    "unit_system",
    "format_number",
    "cache_folder",
]

_REGISTRY = None
_REGISTRY_LOCK = threading.Lock()


def cache_folder() -> Path:
    """The per-environment folder for pint's registry cache.

    ``COUNTERPOISE_CACHE_DIR`` overrides the base folder; otherwise ``$XDG_CACHE_HOME/counterpoise`` or
    ``~/.cache/counterpoise``. The last part is a hash of the interpreter prefix and the pint version, so
    each environment has its own cache.
    """
    import pint

    base = os.environ.get("COUNTERPOISE_CACHE_DIR")
    if not base:
        xdg = os.environ.get("XDG_CACHE_HOME") or os.path.join(os.path.expanduser("~"), ".cache")
        base = os.path.join(xdg, "counterpoise")
    tag = f"{sys.prefix}|{sys.version_info[:2]}|{pint.__version__}"
    return Path(base) / ("pint-" + hashlib.sha256(tag.encode()).hexdigest()[:16])


def _build_registry():
    import pint

    if os.environ.get("COUNTERPOISE_NO_CACHE"):
        return pint.UnitRegistry()
    try:
        folder = cache_folder()
        folder.mkdir(parents=True, exist_ok=True)
        if not os.access(folder, os.W_OK | os.X_OK):
            raise PermissionError(folder)
        return pint.UnitRegistry(cache_folder=folder)
    except Exception:  # a broken, unwritable or stale cache must never stop a command
        return pint.UnitRegistry()


def _remember_unit_parses(ureg):
    """Keep the registry's parses of unit strings ("g*mm", "mm") for reuse.

    pint parses a unit string on every ``Quantity(value, "g*mm")`` and ``q.m_as("mm")`` by trying each
    prefix and suffix on each name; in a batch of work orders that was a third of the time. The parse of a
    given string never changes (the package defines no units after the registry is built), so it is kept;
    anything unusual (an argument that cannot be a key) goes straight to pint.
    """
    _remember_conversions(ureg)
    parse = getattr(ureg, "parse_units_as_container", None)
    if parse is None:  # a pint without this hook: keep its own behaviour (slower, same results)
        return ureg
    seen: dict = {}

    def parse_units_as_container(input_string, as_delta=None, case_sensitive=None):
        key = (input_string, as_delta, case_sensitive)
        try:
            return seen[key]
        except KeyError:
            pass
        except TypeError:
            return parse(input_string, as_delta, case_sensitive)
        result = parse(input_string, as_delta, case_sensitive)
        if len(seen) < 4096:
            seen[key] = result
        return result

    ureg.parse_units_as_container = parse_units_as_container
    return ureg


def _remember_conversions(ureg):
    """Make the registry's ``Quantity.m_as`` and ``Quantity.to`` reuse their conversion factor.

    pint converts a multiplicative unit as ``magnitude * factor``, the factor a pure function of the two
    units; but each call first turns the target into a units container, builds an intermediate quantity and
    walks its registry's layers, some 45 us a call, and a page's tolerance report makes about sixty. Here the
    factor (pint's own ``convert`` of 1.0: ``1.0 * factor`` is the factor exactly), the target's container and whether the two
    units are the same are kept per (source units, target), so the result is pint's to the bit. Anything
    else goes to pint as before: an offset unit (degC), an active context, a magnitude that is not a float,
    an int or a numpy array, a target other than a unit text, unit or units container (a quantity as the
    target compares by value), or a conversion pint refuses (its error).
    """
    Quantity = getattr(ureg, "Quantity", None)
    original_m_as = getattr(Quantity, "m_as", None)
    original_to = getattr(Quantity, "to", None)
    if original_m_as is None or original_to is None:
        return ureg
    try:
        import numpy
        plain = (float, int, numpy.ndarray, numpy.floating, numpy.integer)
    except ImportError:  # pragma: no cover - numpy is a dependency
        plain = (float, int)
    from pint.util import UnitsContainer

    targets = (str, ureg.Unit, UnitsContainer)  # keys that are equal only when they name the same units
    known: dict = {}

    def conversion(q, units):
        """(target container, factor, same units) for ``q``'s units to ``units``, or None: ask pint."""
        if ureg._active_ctx or not isinstance(q._magnitude, plain) or isinstance(q._magnitude, bool):
            return None
        if not isinstance(units, targets):  # a quantity as the target compares by value: 1 m == 1000 mm
            return None
        key = (q._units, type(units), units)
        try:
            found = known.get(key)
        except TypeError:  # an unhashable target
            return None
        if found is None:
            from pint.util import to_units_container

            try:
                dst = to_units_container(units, ureg)
                factor = ureg.convert(1.0, q._units, dst)  # what pint's m_as multiplies by (not through
                offset = ureg.convert(0.0, q._units, dst)  # the methods replaced here)
            except Exception:  # pint's own error, raised again by pint's own path
                return None
            # an offset unit (degC) is not a plain multiple: False, kept, sends it to pint each time
            found = (dst, factor, q._units == dst) if offset == 0.0 and isinstance(factor, float) else False
            if len(known) < 4096:
                known[key] = found
        return found or None

    def m_as(self, units):
        found = conversion(self, units)
        if found is None:
            return original_m_as(self, units)
        _dst, factor, same = found
        return self._magnitude if same else self._magnitude * factor

    def to(self, other=None, *contexts, **ctx_kwargs):
        found = None if (contexts or ctx_kwargs) else conversion(self, other)
        if found is None:
            return original_to(self, other, *contexts, **ctx_kwargs)
        dst, factor, same = found
        return self.__class__(self._magnitude if same else self._magnitude * factor, dst)

    m_as.__doc__, to.__doc__ = original_m_as.__doc__, original_to.__doc__
    Quantity.m_as = m_as
    Quantity.to = to
    return ureg


def registry():
    """The package's one pint ``UnitRegistry`` (built on first use, once: threads asking at the same time,
    as the browser face's do, wait for the one being built; two registries' units cannot be combined)."""
    global _REGISTRY
    if _REGISTRY is None:
        with _REGISTRY_LOCK:
            if _REGISTRY is None:
                _REGISTRY = _remember_unit_parses(_build_registry())
    return _REGISTRY


def Q_(value, unit):  # noqa: N802 - pint's own idiom
    """Build a quantity from a magnitude and a unit string, without parsing a whole expression."""
    return registry().Quantity(value, unit)


@dataclass(frozen=True)
class Kind:
    """A kind of quantity: its pint dimensionality, the unit the kernels use, an example for messages, and
    the smallest and largest magnitude (other than zero) read from text, in the kernel unit."""

    name: str
    dimensionality: str
    kernel_unit: str
    example: str
    lower: float = 0.0
    upper: float = math.inf


#: The kinds of quantity the toolkit accepts, by name. ``kernel_unit`` is the unit in which the numeric
#: kernels work for that kind. ``lower`` and ``upper`` bound the size of a value read from text (zero is
#: always allowed where the field allows it): bounds of our own [CP], far beyond any shop's rotor, chosen so
#: that products and quotients of bounded inputs (U_per = G·m/ω, m·r, r²) stay finite and clear of
#: subnormal numbers. A value outside them is refused with the bound.
KINDS: dict[str, Kind] = {
    k.name: k
    for k in (
        Kind("mass", "[mass]", "kg", "412 kg", 1e-9, 1e7),                  # 1 µg to 10,000 t
        Kind("length", "[length]", "mm", "150 mm", 1e-6, 1e6),              # 1 nm to 1 km
        Kind("speed", "1/[time]", "rpm", "1480 rpm", 1e-3, 1e7),            # r/min
        Kind("unbalance", "[mass]*[length]", "g*mm", "2400 g*mm", 1e-9, 1e15),
        Kind("density", "[mass]/[length]**3", "kg/m**3", "7850 kg/m^3", 1e-2, 1e8),  # materials: 100..25000
        Kind("vibration velocity", "[length]/[time]", "mm/s", "4.2 mm/s", 1e-9, 1e6),
        Kind("displacement", "[length]", "um", "12 um", 1e-9, 1e9),
        Kind("acceleration", "[length]/[time]**2", "m/s**2", "3 m/s^2", 1e-12, 1e7),
        Kind("grade", "[length]/[time]", "mm/s", "6.3 mm/s", 1e-3, 1e5),
        Kind("specific unbalance", "[length]", "um", "20 um", 1e-9, 1e9),
        Kind("force", "[force]", "N", "500 N", 1e-9, 1e12),
    )
}


_REPLACEMENTS = (
    (re.compile(r"(?<![A-Za-z])r\s*/\s*min\b", re.IGNORECASE), "rpm"),
    (re.compile(r"(?<![A-Za-z])r\s*/\s*s\b", re.IGNORECASE), "rps"),
    (re.compile(r"[·⋅×]"), "*"),
    (re.compile("µ|μ"), "u"),
    (re.compile(r"\bkg\s*/\s*m3\b"), "kg/m**3"),
)


def _normalise(text: str) -> str:
    for pattern, repl in _REPLACEMENTS:
        text = pattern.sub(repl, text)
    return text


# -- the reader: one grammar for every quantity a user writes (see the module description) ----------------

_NUMBER = re.compile(r"[-+]?(?:(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE][-+]?[0-9]+)?|(?i:nan|inf(?:inity)?)(?![A-Za-z]))")
_NAME = re.compile(r"[A-Za-z_][A-Za-z0-9_]*")


def plain_number(text: str) -> float:
    """A number written as the quantity reader writes its numbers (digits, one ``.``, an optional
    exponent; no separators, no arithmetic), for the places that read a bare number: table cells,
    fractions. Raises ``ValueError`` otherwise.

    >>> plain_number(" 0.3 "), plain_number("2e3")
    (0.3, 2000.0)
    >>> plain_number("1_0")
    Traceback (most recent call last):
    ...
    ValueError: '1_0' is not a plain number (digits with one '.', an optional exponent; no separators)
    """
    cleaned = str(text).strip()
    if not _NUMBER.fullmatch(cleaned):
        raise ValueError(f"{cleaned!r} is not a plain number (digits with one '.', an optional exponent; "
                         "no separators)")
    return float(cleaned)
_POWER = re.compile(r"(?:\^|\*\*)(-?[1-9])(?![0-9])")
_OPERATOR = re.compile(r"\s*([*/])\s*")
_ONE_OVER = re.compile(r"1\s*/\s*")
#: A number written with thousands separators: "1 480", "1,480", "1'480", "1_480", "1 480" (thin spaces).
_SEPARATED = re.compile(r"[-+]?[0-9]{1,3}(?:[ ,'_\u00a0\u2009\u202f][0-9]{3})+(?:[.,][0-9]*)?(?![0-9])")

#: Names read our own way, whatever pint's defaults: ``mil``/``mils`` is the thousandth of an inch that
#: vibration and machining readings use (pint's ``mil`` is an angle); speed names in any case.
_ALIASES = {"mil": "thou", "mils": "thou"}
_FOLDED = {"rpm": "rpm", "rps": "rps", "hz": "Hz"}


_UNITS: dict[str, object] = {}


def _cached_unit(text: str):
    """``registry().Unit(text)``, parsed once per distinct text (only names and trusted unit strings of
    the package come here, never a user's whole text)."""
    unit = _UNITS.get(text)
    if unit is None:
        unit = registry().Unit(text)
        if len(_UNITS) < 512:
            _UNITS[text] = unit
    return unit


class _Unreadable(ValueError):
    """A text that is not NUMBER UNIT; the message says why, without the field's name."""


def _unit_name(name: str):
    """One unit name as a registry unit (cached), or _Unreadable."""
    ureg = registry()
    name = _ALIASES.get(name, name)
    try:
        unit = _cached_unit(name)
    except Exception:
        folded = _FOLDED.get(name.lower())
        if folded is None:
            raise _Unreadable(f"unit {name!r} is not known") from None
        unit = _cached_unit(folded)
    if unit.dimensionless and not _is_angle(unit):  # percent, ppm, dozen, pi: a scale, not a unit
        raise _Unreadable(f"{name!r} is not a unit of measure")
    return unit


_ANGLE_UNITS: dict = {}


def _is_angle(unit) -> bool:
    """Whether a unit contains an angle (rad, deg, rev in rad/s, rpm); remembered per unit."""
    known = _ANGLE_UNITS.get(unit)
    if known is None:
        _factor, root = registry().get_root_units(unit)
        known = "radian" in root._units
        if len(_ANGLE_UNITS) < 512:
            _ANGLE_UNITS[unit] = known
    return known


_FACTORS: dict = {}


def _kernel_factor(unit, k: "Kind") -> float:
    """How many kernel units (r/min for a speed, read as :func:`speed_rpm` reads it) one ``unit`` is;
    remembered per unit and kind (every unit of a kind here is a plain multiple of the kernel unit)."""
    key = (unit, k.name)
    factor = _FACTORS.get(key)
    if factor is None:
        one = registry().Quantity(1.0, unit)
        factor = float(speed_rpm(one, positive=False) if k.name == "speed" else one.m_as(_cached_unit(k.kernel_unit)))
        if len(_FACTORS) < 1024:
            _FACTORS[key] = factor
    return factor


def _read_unit(text: str, start: int):
    """Parse UNIT from ``text[start:]`` (all of it) into a registry unit."""
    pos = start
    unit = None
    match = _ONE_OVER.match(text, pos)
    op = "*"
    if match:
        unit = _cached_unit("dimensionless")
        op = "/"
        pos = match.end()
    while True:
        name = _NAME.match(text, pos)
        if not name:
            break_at = text[pos:pos + 1] or "the end"
            raise _Unreadable(f"expected a unit name at {break_at!r}")
        term = _unit_name(name.group())
        pos = name.end()
        power = _POWER.match(text, pos)
        if power:
            term = term ** int(power.group(1))
            pos = power.end()
        unit = term if unit is None else (unit * term if op == "*" else unit / term)
        if pos == len(text):
            return unit
        operator = _OPERATOR.match(text, pos)
        if not operator or operator.end() == len(text):
            rest = text[pos:].strip()
            raise _Unreadable(f"{rest!r} after the unit; a quantity is one number and one unit")
        op = operator.group(1)
        pos = operator.end()


def _number(text: str):
    match = _NUMBER.match(text)
    if not match:
        raise _Unreadable("it does not start with a number")
    digits = match.group()
    mantissa = re.split("[eE]", digits)[0]
    value = int(digits) if digits.lstrip("+-").isdigit() else float(digits)
    if value == 0 and re.search("[1-9]", mantissa):  # "1e-400" is not zero: keep it below every bound
        value = math.copysign(5e-324, -1.0 if digits.startswith("-") else 1.0)
    return value, match.end()


def _parse(text: str):
    """A normalised quantity text (NUMBER UNIT, see the grammar above) as a pint quantity.

    Raises :class:`_Unreadable` with the reason. Units are built from their names (each name parsed once
    and kept); the whole text never goes to pint's expression parser.
    """
    if "@" in text or "∠" in text:
        raise _Unreadable("'@' belongs in a vector (AMOUNT@ANGLE), not in a single quantity")
    if "%" in text:
        raise _Unreadable("'%' is not a unit here")
    if _SEPARATED.match(text):
        raise _Unreadable("spaces or separators inside the number are not read; write its digits together")
    value, end = _number(text)
    rest = text[end:]
    if rest[:1] in ("*", "^", "/") and (rest[1:2].isdigit() or rest[1:2] in "*(") or rest[:2] == "**":
        raise _Unreadable("arithmetic on the number is not read; write the number itself, e.g. 1.2e6")
    stripped = rest.lstrip()
    if not stripped:
        raise _Unreadable("it has no unit")
    if stripped[:1].isdigit() and not _ONE_OVER.match(stripped):
        raise _Unreadable("spaces inside the number are not read; write its digits together")
    unit = _READ.get(stripped)
    if unit is None:
        unit = _read_unit(stripped, 0)
        if len(_READ) < 512:
            _READ[stripped] = unit
    return registry().Quantity(value, unit)


#: Unit texts already read ("g*mm", "kg/m^3"): shops' sheets repeat a few units (errors are not kept).
_READ: dict[str, object] = {}

#: Whole texts already read ("38 g", "2400 g*mm"), as (magnitude, unit): a sheet or a job repeats its values
#: (errors are not kept). Each call builds its own quantity from them, so no caller shares an object.
_TEXTS: dict[str, tuple] = {}


def _read_text(text: str):
    """``_parse(_normalise(text))``, with the magnitude and unit of a text read before taken as read."""
    known = _TEXTS.get(text)
    if known is not None:
        return registry().Quantity(*known)
    q = _parse(_normalise(text))
    if len(_TEXTS) < 4096:
        _TEXTS[text] = (q.magnitude, _units_of(q))
    return q


def _units_of(q):
    """A quantity's units as pint keeps them (its hashable units container), which every use here accepts
    as a unit; ``q.units`` builds a new Unit object on each call."""
    return getattr(q, "_units", None) or q.units


#: Whether a unit has a kind's dimension, per (unit, kind name): the answer depends on nothing else.
_DIMENSION_OK: dict = {}


def _has_dimension(q, k: "Kind") -> bool:
    key = (_units_of(q), k.name)
    ok = _DIMENSION_OK.get(key)
    if ok is None:
        try:
            ok = bool(q.check(k.dimensionality))
        except Exception:
            ok = False
        if len(_DIMENSION_OK) < 1024:
            _DIMENSION_OK[key] = ok
    return ok


#: A pair of bound texts read as magnitudes in a kind's kernel unit, per (bounds, kind name).
_BOUNDS: dict = {}


def _bound_magnitudes(bounds, k: "Kind") -> tuple[float, float]:
    key = (tuple(bounds), k.name)
    known = _BOUNDS.get(key)
    if known is None:
        low, high = (quantity(b, k, "bound") for b in bounds)
        known = tuple(float(magnitude(b, k, k.kernel_unit)) for b in (low, high))
        if len(_BOUNDS) < 256:
            _BOUNDS[key] = known
    return known


def _is_bare_number(text: str) -> bool:
    try:
        float(text)
    except ValueError:
        return False
    return True


def _kind(kind: str | Kind) -> Kind:
    if isinstance(kind, Kind):
        return kind
    try:
        return KINDS[kind]
    except KeyError:
        raise ValueError(f"unknown quantity kind {kind!r}; known: {', '.join(KINDS)}") from None


def _check_finite(mag, name: str, shown) -> None:
    try:
        finite = math.isfinite(mag)
    except OverflowError:  # an integer beyond the float range, e.g. '2**1024 kg'
        finite = False
    except TypeError:  # an array
        import numpy as np

        finite = bool(np.all(np.isfinite(mag)))
    if not finite:
        raise BadInput.about(name, f"{shown!r} is not a finite number")


def _bound_text(value: float, unit: str) -> str:
    return f"{value:g} {unit.replace('**', '^')}"


def _check_bounds(q, k: Kind, name: str, shown, bounds, what: str, zero: bool = True) -> None:
    """Refuse a scalar whose size (other than zero) lies outside the kind's bounds or ``bounds``."""
    try:
        raw = abs(float(q.magnitude))
    except TypeError:  # an array quantity: its bounds are the caller's
        return
    if raw == 0.0 and bounds is None:
        return
    size = raw * _kernel_factor(_units_of(q), k)  # 0.0 when a subnormal magnitude vanishes: below every bound
    unit = k.kernel_unit
    if bounds is not None:
        low_m, high_m = _bound_magnitudes(bounds, k)
        if not low_m <= size <= high_m:
            side = "below the smallest" if size < low_m else "above the largest"
            limit = bounds[0] if size < low_m else bounds[1]
            raise BadInput.about(name, f"{shown!s} is {side} {what} accepted, {limit} (a bound of our own [CP]; "
                           f"give a value from {bounds[0]} to {bounds[1]})")
        return
    if not k.lower <= size <= k.upper:
        side = "below the smallest" if size < k.lower else "above the largest"
        limit = _bound_text(k.lower if size < k.lower else k.upper, unit)
        raise BadInput.about(name, f"{shown!s} is {side} {k.name} read, {limit} (a bound of our own [CP]; "
                       f"give a value from {_bound_text(k.lower, unit)} to {_bound_text(k.upper, unit)}"
                       f"{', or 0' if zero else ''})")


def quantity(value, kind: str | Kind, name: str = "value", *, positive: bool = False,
             nonnegative: bool = False, bounds: tuple[str, str] | None = None, what: str = "value"):
    """Return ``value`` as a pint quantity of the given kind, or raise :class:`BadInput`.

    ``value`` is a pint quantity or a string with its unit (``"412 kg"``). A bare number, a number given as a
    string without unit, NaN, infinity, a wrong dimension or an unknown unit is refused with a message that
    names ``name``, shows the value and gives an example of what is allowed. Text is read by the grammar
    in this module's source (one number, one unit; nothing is evaluated) and its size must lie within the
    kind's bounds (:data:`KINDS`). ``bounds`` (two quantity texts, e.g. ``("0.01 mm", "100 mm")``) narrows
    the accepted range for any value, text or quantity, and zero too; ``what`` names the value in that
    message (``"step"``).

    >>> quantity("412 kg", "mass", "--mass")
    <Quantity(412, 'kilogram')>
    >>> quantity(412, "mass", "--mass")
    Traceback (most recent call last):
    ...
    toolkit.errors.BadInput: --mass: 412 has no unit; give a mass with its unit, e.g. '412 kg'
    >>> quantity("1 480 rpm", "speed", "--speed")
    Traceback (most recent call last):
    ...
    toolkit.errors.BadInput: --speed: cannot read '1 480 rpm' as a speed: spaces or separators inside the number ...
    """
    k = _kind(kind)
    ureg = registry()
    text_given = isinstance(value, str)
    if isinstance(value, ureg.Quantity):
        q = value
    elif isinstance(value, bool) or isinstance(value, (int, float)):
        raise BadInput.about(name, f"{value!r} has no unit; give a {k.name} with its unit, e.g. '{k.example}'")
    elif isinstance(value, str):
        text = value.strip()
        if not text:
            raise BadInput.about(name, f"empty; give a {k.name} with its unit, e.g. '{k.example}'")
        if len(text) > 200:
            raise BadInput.about(name, f"value too long ({len(text)} characters); give a {k.name} such as "
                           f"'{k.example}'")
        if _is_bare_number(text):
            raise BadInput.about(name, f"{text!r} has no unit; give a {k.name} with its unit, e.g. '{k.example}'")
        try:
            q = _read_text(text)
        except _Unreadable as exc:
            raise BadInput.about(name, f"cannot read {text!r} as a {k.name}: {exc}; write a number and a unit, "
                           f"e.g. '{k.example}'") from None
        except Exception:
            raise BadInput.about(name, f"cannot read {text!r} as a {k.name}; write a number and a unit, "
                           f"e.g. '{k.example}'") from None
    elif hasattr(value, "magnitude") and hasattr(value, "units"):
        # a quantity from another registry: rebuild it in ours from its unit text
        try:
            q = ureg.Quantity(value.magnitude, str(value.units))
        except Exception:
            raise BadInput.about(name, f"unit {value.units!s} is not known; give a {k.name} such as "
                           f"'{k.example}'") from None
    else:
        raise BadInput.about(name, f"{value!r} is not a quantity; give a {k.name} with its unit, "
                       f"e.g. '{k.example}'")
    if not _has_dimension(q, k):
        shown = value if isinstance(value, str) else f"{q:~P}"
        raise BadInput.about(name, f"{shown!r} is not a {k.name} ({q.dimensionality} given); give e.g. "
                       f"'{k.example}'")
    if text_given and k.name != "speed" and _is_angle(_units_of(q)):
        raise BadInput.about(name, f"{value!r} holds an angle unit, which a {k.name} has not; give e.g. "
                       f"'{k.example}'")
    shown = value if isinstance(value, str) else q
    _check_finite(q.magnitude, name, shown)
    if positive or nonnegative:
        mag = q.magnitude
        if isinstance(mag, (int, float)):  # a scalar (finite, checked above): no array needed
            low_side, below = mag <= 0, mag < 0
        else:
            import numpy as np

            mag = np.asarray(mag)
            low_side, below = np.any(mag <= 0), np.any(mag < 0)
        if positive and low_side:
            raise BadInput.about(name, f"{shown!s} must be greater than zero")
        if nonnegative and below:
            raise BadInput.about(name, f"{shown!s} must not be negative")
    if text_given or bounds is not None:
        _check_bounds(q, k, name, shown, bounds, what, zero=not positive)
    return q


def magnitude(value, kind: str | Kind, unit: str | None = None, name: str = "value", *,
              positive: bool = False, nonnegative: bool = False, bounds: tuple[str, str] | None = None,
              what: str = "value"):
    """The magnitude of ``value`` in ``unit`` (default: the kind's kernel unit), after the checks of
    :func:`quantity`. Works on scalar and array quantities alike.

    >>> magnitude("3.5 oz*in", "unbalance", "g*mm")
    2520.27260...
    """
    k = _kind(kind)
    if k.name == "speed":
        rpm = speed_rpm(value, name, positive=positive, bounds=bounds, what=what)
        return rpm if unit in (None, "rpm") else Q_(rpm, "rpm").m_as(unit)
    q = quantity(value, k, name, positive=positive, nonnegative=nonnegative, bounds=bounds, what=what)
    return q.m_as(_cached_unit(unit or k.kernel_unit))


def speed_rpm(value, name: str = "speed", *, positive: bool = True, bounds: tuple[str, str] | None = None,
              what: str = "value"):
    """A rotational speed in revolutions per minute.

    Units with an angle (``rpm``, ``rad/s``, ``deg/s``) are converted exactly; units of plain frequency
    (``Hz``, ``1/s``, ``1/min``) are read as revolutions per second or per minute, as shops mean them.

    >>> speed_rpm("1480 rpm"), speed_rpm("50 Hz"), round(speed_rpm("314.159 rad/s"), 1)
    (1480.0, 3000.0, 3000.0)
    """
    q = quantity(value, "speed", name, positive=positive, bounds=bounds, what=what)
    ureg = registry()
    _factor, root = ureg.get_root_units(q.units)
    if "radian" in root._units:
        return q.m_as("rpm") * 1.0
    return q.m_as("1/min") * 1.0


@dataclass(frozen=True)
class UnitSystem:
    """The units in which results are shown."""

    name: str
    unbalance: str
    mass: str
    length: str
    rotor_mass: str
    density: str

    @property
    def inch(self) -> bool:
        """Whether lengths are in inches (inch hardware, inch drills and Letter paper by default)."""
        return self.length == "in"

    def symbol(self, unit: str) -> str:
        """The printed symbol of a unit string (``g*mm`` -> ``g·mm``)."""
        return unit.replace("*", "·").replace("**3", "³").replace("um", "µm")


METRIC = UnitSystem("metric", "g*mm", "g", "mm", "kg", "kg/m**3")
IMPERIAL = UnitSystem("imperial", "oz*in", "oz", "in", "lb", "lb/in**3")
#: inch lengths with grams and g·in, for shops whose balancing machine and scale read grams
INCH_GRAM = UnitSystem("inch-gram", "g*in", "g", "in", "lb", "lb/in**3")
UNIT_SYSTEMS = (METRIC, IMPERIAL, INCH_GRAM)


def unit_system(name: str) -> UnitSystem:
    """``"metric"``, ``"imperial"`` or ``"inch-gram"``; anything else is refused.

    >>> unit_system("imperial").unbalance, unit_system("inch-gram").unbalance
    ('oz*in', 'g*in')
    """
    text = str(name).strip().lower()
    for system in UNIT_SYSTEMS:
        if text == system.name:
            return system
    raise BadInput.about("units", f"{name!r} is not a unit system; use 'metric', 'imperial' or 'inch-gram'")


def format_number(x: float, sig: int = 4) -> str:
    """A number with ``sig`` significant figures in plain notation (no exponent for shop-sized values).

    >>> format_number(2005.35), format_number(0.0201234), format_number(38.0), format_number(0)
    ('2005', '0.02012', '38.00', '0')
    """
    if x == 0 or not math.isfinite(x):
        return "0" if x == 0 else str(x)
    exponent = math.floor(math.log10(abs(x)))
    if exponent >= 7 or exponent <= -6:
        return f"{x:.{sig - 1}e}"
    decimals = max(0, sig - 1 - exponent)
    return f"{x:.{decimals}f}"

