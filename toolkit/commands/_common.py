"""Helpers shared by the subcommands: common options and output.

The library never prints; the commands print exactly one JSON object with ``--json``, or text otherwise.
"""

from __future__ import annotations

import json
import math
import re
import sys

__all__ = ["add_json", "add_units", "add_force", "emit", "emit_result", "print_text", "option_names", "error_text", "parse_named"]


def add_json(parser) -> None:
    parser.add_argument("--json", action="store_true", help="print one JSON object on stdout instead of text")


def add_units(parser) -> None:
    parser.add_argument("--units", default="metric", metavar="SYSTEM", type=_units,
                        help="units of the printed results: metric (g·mm, g, mm, kg), imperial "
                             "(oz·in, oz, in, lb) or inch-gram (g·in, g, in, lb); default metric")


def _units(text: str) -> str:
    """The unit system's name, or the library's refusal worded for the option."""
    import argparse

    from toolkit.errors import BadInput
    from toolkit.units import unit_system

    try:
        return unit_system(text).name
    except BadInput as exc:
        raise argparse.ArgumentTypeError(str(exc).removeprefix("units: ")) from None


def add_force(parser) -> None:
    parser.add_argument("--force", action="store_true", help="overwrite output files that already exist")


def _clean(value):
    """Make a result JSON-safe: finite floats only (NaN/inf become null), tuples as lists."""
    if isinstance(value, float):
        return value if math.isfinite(value) else None
    if isinstance(value, dict):
        return {str(k): _clean(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_clean(v) for v in value]
    return value


def emit(as_json: bool, data: dict, text: str | None = None) -> None:
    """Print ``data`` as one JSON object (``as_json``) or ``text`` (or a plain rendering of ``data``)."""
    if as_json:
        text = json.dumps(_clean(data), indent=2, ensure_ascii=False)
        if not _encodable(sys.stdout, text):  # a legacy encoding: \u escapes keep every value exact
            text = json.dumps(_clean(data), indent=2, ensure_ascii=True)
        sys.stdout.write(text + "\n")
    else:
        print_text(text if text is not None else "\n".join(f"{k}: {v}" for k, v in data.items()))


def emit_result(args, result) -> int:
    """Print a subcommand's ``(status, data, text)`` as :func:`emit` does and return the status. The
    subcommands that the browser face offers as forms compute that triple in a ``result_NAME(args)`` function,
    so that a page words the same result without printing."""
    status, data, text = result
    emit(args.json, data, text)
    return status


def _encodable(stream, text: str) -> bool:
    encoding = getattr(stream, "encoding", None)
    if not encoding:
        return True
    try:
        text.encode(encoding)
    except (UnicodeEncodeError, LookupError):
        return False
    return True


def print_text(text: str) -> None:
    sys.stdout.write(text.rstrip("\n") + "\n")


# -- errors in the command line's words --------------------------------------------------------------

#: Library parameter names whose option is not simply the name with dashes (``max_depth_ratio`` is
#: ``--max-depth-ratio``); looked up only when the subcommand has that option.
OPTION_ALIASES = {
    "max_depth_mm": "--max-depth", "min_wall_mm": "--min-wall", "min_wall_ratio": "--wall-ratio",
    "depth_step_mm": "--depth-step", "fixed_positions": "--positions", "point_angle_deg": "--point-angle",
    "correction": "--unbalance", "weld_run": "--weld", "seat_offset_deg": "--seat-offset",
    "materials_table": "--materials", "washer_table": "--table", "test_unbalance": "--test",
    "readings": "--reading", "residuals": "--residual", "criteria": "--criterion", "planes": "--plane",
    "journal_loads": "--journal-load", "u_per": "--allowed", "position": "--plane",
    # key, index, budget (toolkit.commands.assembly)
    "reading": "--reading", "index_angles": "--reading", "fix_method": "--fix", "shaft_convention": "--shaft",
    "hub_convention": "--hub", "shaft_marking": "--shaft-mark", "hub_marking": "--hub-mark",
    "items": "--part/--fit/--key",
    # stored coefficients' trim run (toolkit.coefficients.trim_update): the readings before it are --original
    "before": "--original",
    "limits": "--limit",
    # the register (toolkit.register.records): a template change, a sign-off's role
    "changes": "--set", "drop_planes": "--drop-plane", "role": "--sign", "path": "--workbook",
}

def option_names(parser):
    """``name(parameter) -> option``: a library parameter worded as the subcommand's option (``wall`` ->
    ``--wall``), or left as it is when the subcommand has no such option. ``"planes I"`` is the option then
    the item (``--plane I``); ``"key_length/key_start"`` names each (``--key-length/--key-start``); an alias
    of several options (``--part/--fit/--key``) is taken when the subcommand has each of them."""
    options = {}
    for action in getattr(parser, "_actions", ()):
        longs = [s for s in action.option_strings if s.startswith("--")]
        if longs:
            options.setdefault(action.dest, longs[0])
    given = {s for a in getattr(parser, "_actions", ()) for s in a.option_strings}

    def name(parameter: str) -> str:
        if parameter.startswith("-"):
            return parameter
        head, space, rest = parameter.partition(" ")  # "planes I": the option, then the item's name
        if space:
            return f"{name(head)} {rest}"
        if "/" in parameter:  # "key_length/key_start": two parameters the error is about together
            return "/".join(name(part) for part in parameter.split("/"))
        alias = OPTION_ALIASES.get(parameter)
        if alias is not None and all(part in given for part in alias.split("/")):
            return alias
        for dest in (parameter, parameter.removesuffix("_mm").removesuffix("_deg")):
            if dest in options:
                return options[dest]
        return parameter

    return name


def error_text(exc, args) -> str:
    """A library error worded for the command line: its parameters as this subcommand's options, its
    values in the unit system asked for (``--units``)."""
    parser = getattr(args, "command_parser", None)
    if not hasattr(exc, "worded") or parser is None:
        return str(exc)
    from toolkit.errors import quantity_words

    return exc.worded(option_names(parser), quantity_words(getattr(args, "units", "metric")))


# -- NAME=VALUE options --------------------------------------------------------------------------------

_NAME = re.compile(r"^[A-Za-z0-9][A-Za-z0-9 _.\-]{0,39}$")
_NAMED_EXAMPLES = {"plane": "I=-120 mm", "journal load": "A=206 kg", "residual": "I=180 g*mm@40"}


def parse_named(text, kind: str, option: str):
    """Split an option's ``NAME=VALUE`` (``"I=-120 mm"``, ``"A=206 kg"``, ``"I=180 g*mm@40"``); return (name,
    value text), the pair the library takes. Names are 1-40 letters, digits, spaces, ``_``, ``.`` or ``-``,
    starting with a letter or digit.

    >>> parse_named("I = -120 mm", "plane", "--plane")
    ('I', '-120 mm')
    """
    from toolkit.errors import BadInput

    if not isinstance(text, str) or "=" not in text:
        raise BadInput(f"{option}: {text!r} is malformed; write NAME=VALUE, e.g. "
                       f"{_NAMED_EXAMPLES.get(kind, 'I=-120 mm')!r}")
    name, value = (part.strip() for part in text.split("=", 1))
    if not _NAME.match(name) or not value:
        raise BadInput(f"{option}: {text!r} is malformed; write NAME=VALUE with a short name, e.g. "
                       f"{_NAMED_EXAMPLES.get(kind, 'I=-120 mm')!r}")
    return name, value
