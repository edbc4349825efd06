"""Forms made from the command line's own subcommands, so that a page and the command cannot drift apart.

A page names a subcommand and the options it offers; the fields (label, kind, choices, default, help) come
from that subcommand's argument parser, the values a person types become its arguments, and the result is
what the subcommand itself computes: its ``--json`` object and its text, produced by the same function the
command line runs before it prints (``result_NAME`` in the subcommand's module), with the arguments read by
the subcommand's own parser (built once). Nothing is printed, no stream or function is replaced and no
process-wide setting is changed while a page computes, so requests in several threads never meet. Options that name a file on the server (a shop's CSV, a runs file, a coefficients file)
are never offered. An error goes beside the field it names, with the option's name replaced by the field's
label; an error that names no field goes at the top of the form. What the person typed is kept.
"""

from __future__ import annotations

import argparse
import functools
import logging
import re
from dataclasses import dataclass, field

__all__ = ["Field", "Page", "PAGES", "fields_of", "field_html", "run_page"]



@dataclass(frozen=True)
class Field:
    name: str               # the form field's name (the option's dest)
    flag: str               # the option as the command line spells it ("" for a positional)
    label: str
    kind: str               # text, lines (one value per line, a repeated option), choice, check, radio
    help: str
    default: str = ""
    choices: tuple[str, ...] = ()
    consts: tuple[tuple[str, str], ...] = ()   # radio: (flag, const) per choice


@dataclass(frozen=True)
class Page:
    slug: str
    command: str
    title: str
    intro: str
    options: tuple[str, ...]           # dests, in the order shown
    labels: dict = field(default_factory=dict)
    choices: dict = field(default_factory=dict)  # dest -> allowed values, for options that take any text
    lines: tuple[str, ...] = ()        # dests given as one value per line
    example: dict = field(default_factory=dict)  # dest -> value filled in on a fresh form (invented example)


PAGES = {p.slug: p for p in (
    Page("tolerance", "tolerance", "Tolerance",
         "Permissible residual unbalance of the rotor and the allowance in each correction plane, from the "
         "balance quality grade, the rotor mass and the maximum service speed.",
         ("grade", "custom_grade", "mass", "speed", "bearing_span", "com_from_a", "plane", "criterion",
          "journal_load", "static_share", "one_plane_rule", "show_other_rule", "rotor_length",
          "correction_diameter", "min_share", "residual", "error_allowance", "check_stage"),
         labels={"com_from_a": "centre of mass from bearing A", "plane": "correction planes",
                 "criterion": "criteria", "journal_load": "journal loads", "residual": "measured residuals"},
         choices={"check_stage": ("after-balancing", "later-check")},
         lines=("plane", "criterion", "journal_load", "residual"),
         example={"grade": "G6.3", "mass": "412 kg", "speed": "1480 rpm", "bearing_span": "900 mm",
                  "com_from_a": "400 mm", "plane": "I=-120 mm\nII=1010 mm"}),
    Page("drill", "drill", "Drilled holes",
         "Holes that remove a given unbalance, drilled with the shop's drill set.",
         ("unbalance", "radius", "angle", "action", "orientation", "material", "density", "allowance", "diameter",
          "drills", "point_angle", "max_depth", "wall", "positions", "warn_depth_ratio", "max_depth_ratio",
          "min_wall", "wall_ratio", "spacing_ratio", "depth_step", "max_holes"),
         choices={"drills": ("", "metric", "inch")},
         example={"unbalance": "2400 g*mm@131", "radius": "150 mm", "orientation": "radial",
                  "material": "steel"}),
    Page("plate", "plate", "Weld-on plate",
         "A weld-on plate that adds a given unbalance, cut from the plate stock.",
         ("unbalance", "radius", "angle", "action", "width", "material", "density", "allowance", "thickness",
          "shape", "surface", "step", "fillet", "convexity", "weld", "stock_unit", "max_length", "ce",
          "seat_offset"),
         example={"unbalance": "38 g@307", "radius": "620 mm", "width": "40 mm", "material": "steel",
                  "shape": "rolled"}),
    Page("washers", "washers", "Washers",
         "A stack of standard washers on a bolt that adds a given unbalance.",
         ("unbalance", "radius", "angle", "action", "size", "series", "radial", "surface", "max_count",
          "material", "density", "allowance"),
         example={"unbalance": "2400 g*mm@131", "radius": "150 mm", "size": "M10"}),
    Page("split", "split", "Split onto positions",
         "One correction split onto fixed positions (blades, bolt holes, slots).",
         ("vector", "positions", "at", "offset"),
         labels={"vector": "correction", "positions": "equally spaced positions",
                 "at": "angles of the available positions"},
         example={"vector": "25 g@100", "at": "90,135"}),
    Page("verify", "verify", "Verify with a test mass",
         "Residual unbalance from a test mass set at several angles around the rotor.",
         ("test", "reading", "allowed", "min_consistency"),
         labels={"test": "test unbalance", "reading": "readings"},
         lines=("reading",),
         example={"test": "200 g*mm", "reading": "44.88@0\n53.63@60\n58.64@120\n56.03@180\n47.72@240\n41.41@300",
                  "allowed": "150 g*mm"}),
)}


class _Usage(Exception):
    """An argument the subcommand's parser refused, in the parser's own words (what the command line prints
    after ``counterpoise NAME: error:``)."""


def _refuse(message: str):
    from toolkit.cli import _printable

    raise _Usage(_printable(message))


@functools.lru_cache(maxsize=None)
def _subparser(command: str) -> argparse.ArgumentParser:
    """The subcommand's own argument parser, built once per process and only read afterwards (argparse
    keeps the state of a parse in locals and copies list defaults before appending, so requests in several
    threads can share it). Its usage errors are raised as :class:`_Usage` instead of printed."""
    from toolkit.cli import build_parser

    parser = build_parser(command)
    for action in parser._actions:
        if isinstance(action, argparse._SubParsersAction):
            sub = action.choices[command]
            sub.error = _refuse  # this parser serves the pages only: it raises, never exits or prints
            return sub
    raise LookupError(command)  # pragma: no cover - every page names a subcommand


@functools.lru_cache(maxsize=None)
def _result_function(command: str):
    """``result_NAME`` of the subcommand's module: what ``run_NAME`` computes and words before it prints."""
    import importlib

    from toolkit.cli import COMMANDS

    module_name = next(module for name, module, _help in COMMANDS if name == command)
    return getattr(importlib.import_module(module_name), "result_" + command)


_FIELDS: dict[str, list[Field]] = {}


def fields_of(page: Page) -> list[Field]:
    """The form fields of ``page``, from its subcommand's options."""
    if page.slug in _FIELDS:
        return _FIELDS[page.slug]
    parser = _subparser(page.command)
    by_dest: dict[str, list] = {}
    for action in parser._actions:
        by_dest.setdefault(action.dest, []).append(action)
    out = []
    for dest in page.options:
        actions = by_dest[dest]
        first = actions[0]
        label = page.labels.get(dest) or (first.option_strings[0].lstrip("-").replace("-", " ")
                                          if first.option_strings else (first.metavar or dest).lower())
        help_text = _words(first.help or "")
        default = "" if first.default in (None, False, []) or isinstance(first.default, list) else str(first.default)
        if isinstance(first, argparse._StoreConstAction) and not isinstance(first, argparse._StoreTrueAction):
            consts = tuple((a.option_strings[0], str(a.const)) for a in actions)
            help_text = "; ".join(f"{c}: {_words(a.help or '')}" for (f, c), a in zip(consts, actions))
            out.append(Field(dest, "", label, "radio", help_text, consts=consts))
        elif isinstance(first, argparse._StoreTrueAction):
            out.append(Field(dest, first.option_strings[0], label, "check", help_text))
        elif dest in page.lines:
            out.append(Field(dest, first.option_strings[0] if first.option_strings else "", label, "lines",
                             help_text + " (one per line)"))
        elif first.choices or dest in page.choices:
            choices = tuple(page.choices.get(dest) or (str(c) for c in first.choices))
            out.append(Field(dest, first.option_strings[0] if first.option_strings else "", label, "choice",
                             help_text, default, choices))
        else:
            out.append(Field(dest, first.option_strings[0] if first.option_strings else "", label, "text",
                             help_text, default))
    _FIELDS[page.slug] = out
    return out


def _words(text: str) -> str:
    return text.replace("%%", "%")


def field_html(f: Field, values: dict, errors: dict | None):
    """One form field as the calculator page shows it (label, control, the error beside it, the help), as
    HTML: the page has a dozen or more, and building them here costs a fraction of a template macro call.
    Every text is escaped; ``errors`` maps field names to messages (None: nothing computed yet)."""
    from markupsafe import Markup, escape

    name, label = escape(f.name), escape(f.label)
    err = errors.get(f.name) if errors is not None else None
    value = values.get(f.name)
    out = [f'  <div class="field{" bad" if err else ""}">\n']
    if f.kind == "check":
        out.append(f'      <label><input type="checkbox" name="{name}" value="on"{" checked" if value else ""}> '
                   f'{label}</label>\n')
    elif f.kind == "radio":
        out.append(f'      <span class="label">{label}</span>\n')
        for _flag, const in f.consts:
            out.append(f'      <label class="choice"><input type="radio" name="{name}" value="{escape(const)}"'
                       f'{" checked" if value == const else ""}> {escape(const)}</label>\n')
    else:
        out.append(f'      <label for="f-{name}">{label}</label>\n')
        if f.kind == "choice":
            chosen = value or f.default
            options = "".join(f'<option value="{escape(c)}"{" selected" if chosen == c else ""}>'
                              f'{escape(c or "(as the units say)")}</option>' for c in f.choices)
            out.append(f'      <select id="f-{name}" name="{name}">\n{options}      </select>\n')
        elif f.kind == "lines":
            out.append(f'      <textarea id="f-{name}" name="{name}" rows="3">{escape(values.get(f.name, ""))}'
                       f'</textarea>\n')
        else:
            out.append(f'      <input id="f-{name}" name="{name}" value="{escape(values.get(f.name, ""))}" '
                       f'placeholder="{escape(f.default)}">\n')
    if err:
        out.append(f'<p class="error" id="err-{name}" role="alert">{escape(err)}</p>')
    out.append(f'    <p class="help">{escape(f.help)}</p>\n  </div>\n')
    return Markup("".join(out))


def argv_of(page: Page, values: dict, units: str, extra=()) -> list[str]:
    """The command line that computes what the form asks for (also shown on the page). Values are given as
    ``--option=value`` and positionals after ``--``, so that a value starting with '-' stays a value."""
    argv = [page.command]
    positionals = []
    for f in fields_of(page):
        value = values.get(f.name, "")
        if f.kind == "check":
            if value:
                argv.append(f.flag)
        elif f.kind == "radio":
            for flag, const in f.consts:
                if value == const:
                    argv.append(flag)
        elif f.kind == "lines":
            for line in str(value).splitlines():
                if line.strip():
                    if f.flag:
                        argv.append(f"{f.flag}={line.strip()}")
                    else:
                        positionals.append(line.strip())
        else:
            text = str(value).strip()
            if text and text != f.default:
                if f.flag:
                    argv.append(f"{f.flag}={text}")
                else:
                    positionals.append(text)
    if any(a.dest == "units" for a in _subparser(page.command)._actions):
        argv.append(f"--units={units}")
    argv += list(extra)
    return argv + (["--", *positionals] if positionals else [])


@dataclass
class Outcome:
    data: dict | None = None
    text: str = ""
    status: int | None = None
    errors: dict = field(default_factory=dict)   # field name -> message; "" for the form as a whole
    argv: list = field(default_factory=list)


def _compute(page: Page, argv: list[str]) -> tuple[int, dict | None, str, str]:
    """The subcommand's result for ``argv`` without printing anything: (status, JSON-safe data, text,
    error). The status is the command line's: 0 or 1 with a result, 2 for refused input, 3 for a bug."""
    from toolkit.cli import _error_lines
    from toolkit.commands._common import _clean
    from toolkit.errors import CounterpoiseError

    try:
        args = _subparser(page.command).parse_args(argv[1:])
    except _Usage as exc:
        return 2, None, "", str(exc)
    args.command = page.command
    try:
        import numpy

        with numpy.errstate(all="ignore"):  # as the command line: no numeric warning reaches the person;
            # numpy's error state is per thread, so this changes nothing for another request
            status, data, text = _result_function(page.command)(args)
    except CounterpoiseError as exc:
        return 2, None, "", _error_lines(page.command, exc, args)[0]
    except Exception as exc:  # a bug: one line on the page, the traceback in the server's log
        logging.getLogger("toolkit.web").exception("page %s", page.slug)
        detail = " ".join(str(exc).split()) or type(exc).__name__
        return 3, None, "", f"{type(exc).__name__}: {detail}"
    if text is None:
        text = "\n".join(f"{k}: {v}" for k, v in data.items())
    return status, _clean(data), text.rstrip("\n") + "\n", ""


def run_page(page: Page, values: dict, units: str) -> Outcome:
    """Compute what the form asks for with the subcommand's own parser and its ``result_NAME`` function,
    once: its JSON result and its text, as the command line would print them."""
    fields = fields_of(page)
    for f in fields:  # a choice is one of the offered values, whatever a crafted request sends
        value = str(values.get(f.name, ""))
        allowed = f.choices if f.kind == "choice" else tuple(c for _f, c in f.consts) if f.kind == "radio" else None
        if allowed is not None and value and value not in allowed:
            return Outcome(status=2, errors={f.name: f"{value[:40]!r} is not one of the choices: "
                                                     f"{', '.join(c for c in allowed if c)}"})
    argv = argv_of(page, values, units)
    outcome = Outcome(argv=argv)
    status, data, text, error = _compute(page, argv)
    outcome.status = status
    if status in (0, 1):
        outcome.data, outcome.text = data, text
        return outcome
    message = " ".join(error.strip().splitlines()[:1]) if error.strip() else "the input was refused"
    message = re.sub(r"^counterpoise [a-z]+: error: ", "", message)
    message = re.sub(r"^argument ", "", message)
    outcome.errors = _place(message, fields, status)
    return outcome


def _place(message: str, fields: list[Field], status: int) -> dict:
    """Put ``message`` beside the field whose option it names (the option's name replaced by the label)."""
    flags, words = {}, {}
    for f in fields:
        if f.flag:
            flags[f.flag], words[f.flag] = f, f.label
        for flag, const in f.consts:
            flags[flag], words[flag] = f, const
    where = ""
    first = None
    for flag in sorted(flags, key=len, reverse=True):
        at = re.search(re.escape(flag) + r"(?![\w-])", message)
        if at and (first is None or at.start() < first[0]):
            first = (at.start(), flags[flag])
    if first is not None:
        where = first[1].name
    worded = message
    for flag in sorted(flags, key=len, reverse=True):
        worded = re.sub(re.escape(flag) + r"(?![\w-])", f"'{words[flag]}'", worded)
    worded = worded.replace("the following arguments are required", "please fill in")
    worded = worded.replace("one of the arguments", "choose one of")
    if where:  # beside its field: the field's label needs no repeating at the start
        label = next(f.label for f in fields if f.name == where)
        worded = re.sub(r"^'" + re.escape(label) + r"'\s*:?\s*", "", worded) or worded
    if status == 3:
        worded = "internal error: " + worded
    return {where: worded[:1].upper() + worded[1:]}
