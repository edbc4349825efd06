"""Helpers shared by the subcommands: common options and output.

The library never prints; the commands print exactly one JSON object with ``--json``, or text otherwise.
"""

from __future__ import annotations

import json
import math
import sys

__all__ = ["add_json", "add_units", "add_force", "emit", "print_text"]


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
