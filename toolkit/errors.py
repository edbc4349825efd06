"""The one exception hierarchy of Counterpoise.

Every error the library raises on purpose is a :class:`CounterpoiseError`. The command line turns it into one
line on stderr and exit status 2. Messages name the field, the value given and what is allowed.
"""


class CounterpoiseError(Exception):
    """Base class of every error Counterpoise raises on purpose."""


class BadInput(CounterpoiseError, ValueError):
    """A value, unit, file or option the user gave is not acceptable."""


class Infeasible(CounterpoiseError):
    """The request is well formed but cannot be carried out (a hole too deep for the wall, a plate that
    does not fit); the message says why and, where there is one, the nearest feasible alternative."""


class OutputError(CounterpoiseError, OSError):
    """An output file cannot be written (it exists and --force was not given, the folder is read-only or
    full)."""
