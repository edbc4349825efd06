"""The one exception hierarchy of Counterpoise.

Every error the library raises on purpose is a :class:`CounterpoiseError`. The command line turns it into one
line on stderr and exit status 2. Messages name the field, the value given and what is allowed.

An error is about a parameter of the function that raised it, named as the library names it
(``wall``, ``max_depth_ratio``): ``BadInput("3 mm leaves no wall under the tip", parameter="wall")``. Its
text may name other parameters as ``{name}`` fields listed in ``mentions``, and hold quantities as
``{name}`` fields given in ``quantities`` (name -> ``(magnitude, unit)`` in the library's fixed units,
``"mm"``, ``"g"``, ``"g*mm"``). ``str(error)`` words both in the library's own terms (``"wall: ..."``,
``"12.5 mm"``). The faces word them for their users with :meth:`CounterpoiseError.worded`: the command
line as its options (``--wall``), the job loader as job keys with their line (``line 14, plane[1].wall``),
quantities in the user's unit system. The library itself never names a command-line option.

>>> e = Infeasible("the tip reaches {tip}; give a thicker {wall} or raise {max_depth_ratio}", parameter="wall",
...                mentions=("max_depth_ratio",), quantities={"tip": (12.5, "mm")})
>>> str(e)
'wall: the tip reaches 12.5 mm; give a thicker wall or raise max_depth_ratio'
>>> e.worded(lambda p: "--" + p.replace("_", "-"))
'--wall: the tip reaches 12.5 mm; give a thicker --wall or raise --max-depth-ratio'
"""

from __future__ import annotations

import re
from typing import Callable, Mapping

_FIELD = re.compile(r"\{([A-Za-z_][A-Za-z0-9_]*)\}")


_LENGTHS = ("mm", "in", "m", "cm", "um")


def format_value(value: float, unit: str, shown_in: str | None = None) -> str:
    """A quantity of an error, ``value`` in ``unit``, shown in ``shown_in`` (default: ``unit``) with four
    significant figures as the work orders print them; a length drops trailing zeros (``30 mm``, not
    ``30.00 mm``), as dimensions are written on a drawing.

    >>> format_value(2400.0, "g*mm", "oz*in"), format_value(30.0, "mm"), format_value(150.0, "mm", "in")
    ('3.333 oz·in', '30 mm', '5.906 in')
    """
    from toolkit.formatting import Formatter
    from toolkit.units import Q_

    target = shown_in or unit
    text = Formatter.quantity(Q_(value, unit) if target != unit else value, target)
    if target in _LENGTHS:
        number, _, symbol = text.partition(" ")
        if "." in number and "e" not in number:
            number = number.rstrip("0").rstrip(".")
        text = f"{number} {symbol}"
    return text


#: The unit-system attribute of each library unit (mm, g, g*mm, kg, kg/m**3).
_KIND_OF_UNIT = {"g*mm": "unbalance", "g": "mass", "mm": "length", "kg": "rotor_mass", "kg/m**3": "density"}


def quantity_words(units: str = "metric") -> Callable[[float, str], str]:
    """``shown(magnitude, unit) -> text``: the quantities of an error in a unit system (``"metric"`` or
    ``"imperial"``; anything else reads as metric), for :meth:`CounterpoiseError.worded`.

    >>> quantity_words("imperial")(2400.0, "g*mm"), quantity_words("imperial")(150.0, "mm")
    ('3.333 oz·in', '5.906 in')
    """
    from toolkit.units import IMPERIAL, METRIC

    system = IMPERIAL if units == "imperial" else METRIC

    def shown(magnitude: float, unit: str) -> str:
        kind = _KIND_OF_UNIT.get(unit)
        return format_value(magnitude, unit, getattr(system, kind) if kind else unit)

    return shown


def _default_quantity(value: float, unit: str) -> str:
    return format_value(value, unit)


class CounterpoiseError(Exception):
    """Base class of every error Counterpoise raises on purpose.

    ``parameter``: the library name of the parameter the error is about (or None); ``mentions``: other
    parameters the text names as ``{name}``; ``quantities``: values the text holds as ``{name}``, each
    ``(magnitude, unit)``. ``message`` is the text without the parameter's name in front.
    """

    def __init__(self, message: str = "", *, parameter: str | None = None, mentions: tuple[str, ...] = (),
                 quantities: Mapping[str, tuple[float, str]] | None = None):
        self.message = str(message)
        self.parameter = parameter
        self.mentions = tuple(mentions) + ((parameter,) if parameter and parameter not in mentions else ())
        self.quantities = dict(quantities or {})
        super().__init__(self.worded())

    @classmethod
    def about(cls, parameter: str | None, message: str, **kwargs):
        """The error about ``parameter`` (None or empty: about nothing in particular)."""
        return cls(message, parameter=parameter or None, **kwargs)

    def text(self, name: Callable[[str], str] | None = None,
             quantity: Callable[[float, str], str] | None = None) -> str:
        """The message without the parameter in front, its fields worded by ``name`` and ``quantity``."""
        name = name or (lambda p: p)
        quantity = quantity or _default_quantity

        def field(match):
            key = match.group(1)
            if key in self.quantities:
                return quantity(*self.quantities[key])
            if key in self.mentions:
                return name(key)
            return match.group(0)

        if not self.mentions and not self.quantities:
            return self.message
        return _FIELD.sub(field, self.message)

    def worded(self, name: Callable[[str], str] | None = None,
               quantity: Callable[[float, str], str] | None = None) -> str:
        """The whole message, ``"PARAMETER: text"``, with every parameter named by ``name`` (default: the
        library's names) and every quantity formatted by ``quantity(magnitude, unit)``."""
        text = self.text(name, quantity)
        if not self.parameter:
            return text
        return f"{(name or (lambda p: p))(self.parameter)}: {text}"

    def __reduce__(self):  # keep the structure through pickling (worker processes)
        return (_rebuild, (type(self), self.message, self.parameter, self.mentions, self.quantities,
                           self.__dict__))


def _rebuild(cls, message, parameter, mentions, quantities, state):
    error = cls.__new__(cls)
    CounterpoiseError.__init__(error, message, parameter=parameter, mentions=mentions, quantities=quantities)
    error.__dict__.update(state)
    return error


class Worded(str):
    """A warning or note that names parameters as ``{name}`` fields (``mentions``): as a string it reads in
    the library's names; a face words it with :meth:`worded`, as errors are.

    >>> w = Worded("consider static and couple tolerances ({static_share})", ("static_share",))
    >>> str(w), w.worded(lambda p: "--" + p.replace("_", "-"))
    ('consider static and couple tolerances (static_share)', 'consider static and couple tolerances (--static-share)')
    """

    def __new__(cls, template: str, mentions: tuple[str, ...] = ()):
        text = _FIELD.sub(lambda m: m.group(1) if m.group(1) in mentions else m.group(0), template)
        self = super().__new__(cls, text)
        self.template, self.mentions = template, tuple(mentions)
        return self

    def worded(self, name: Callable[[str], str]) -> str:
        return _FIELD.sub(lambda m: name(m.group(1)) if m.group(1) in self.mentions else m.group(0), self.template)

    def __reduce__(self):
        return (Worded, (self.template, self.mentions))


def worded(text, name: Callable[[str], str]) -> str:
    """A warning in a face's words: a :class:`Worded` note worded by ``name``, any other text as it is."""
    return text.worded(name) if isinstance(text, Worded) else str(text)


class BadInput(CounterpoiseError, ValueError):
    """A value, unit, file or option the user gave is not acceptable."""


class Infeasible(CounterpoiseError):
    """The request is well formed but cannot be carried out (a hole too deep for the wall, a plate that
    does not fit); the message says why and, where there is one, the nearest feasible alternative."""


class OutputError(CounterpoiseError, OSError):
    """An output file cannot be written (it exists and overwriting was not asked for, the folder is
    read-only or full)."""
