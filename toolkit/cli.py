"""The ``counterpoise`` command line: a thin layer over the library.

``main(argv) -> int`` parses the arguments, runs one subcommand and returns the exit status:
0 done; 1 done and the rotor is out of tolerance (where the command checks one); 2 bad input or an
infeasible request, with one line on stderr (a job file with several problems: a line that counts them,
then one line per problem). Tests call ``main`` directly.

Each subcommand lives in a module of ``toolkit.commands`` that defines ``configure(parser)`` (adds the
options and sets ``run``) and imports nothing heavy at module level: numpy and pint are imported by the
commands that compute, openpyxl and reportlab by the exporters, so ``--help`` stays fast.
"""

from __future__ import annotations

import argparse
import importlib
import os
import sys
import warnings

from toolkit.errors import CounterpoiseError

#: Subcommands in the order ``--help`` lists them: name, module, one-line help.
COMMANDS: tuple[tuple[str, str, str], ...] = (
    ("demo", "toolkit.commands.workorders", "run the whole chain on the built-in invented demo rotor and "
                                            "write its work order"),
    ("order", "toolkit.commands.workorders", "turn a job file into work-order files (.xlsx, .pdf)"),
    ("batch", "toolkit.commands.workorders", "turn a planner sheet (.xlsx or .csv) into work orders for "
                                             "every rotor"),
    ("grades", "toolkit.commands.tolerances", "list the balance quality grades (ISO 21940-11)"),
    ("tolerance", "toolkit.commands.tolerances", "permissible residual unbalance for the rotor and for "
                                                 "each plane"),
    ("verify", "toolkit.commands.tolerances", "residual unbalance from a test mass set at several angles"),
    ("solve", "toolkit.commands.corrections", "corrections from trial-mass runs (influence coefficients)"),
    ("split", "toolkit.commands.corrections", "split one correction onto fixed positions"),
    ("drill", "toolkit.commands.fabrication", "holes that remove a given unbalance"),
    ("plate", "toolkit.commands.fabrication", "a weld-on plate that adds a given unbalance"),
    ("washers", "toolkit.commands.fabrication", "a stack of standard washers that adds a given unbalance"),
    ("materials", "toolkit.commands.fabrication", "list materials with densities and sources"),
    ("key", "toolkit.commands.assembly", "the unbalance a key mismatch leaves in a keyed rotor, and its correction"),
    ("index", "toolkit.commands.assembly", "separate a part's unbalance from its arbor's (index method)"),
    ("budget", "toolkit.commands.assembly", "error budget of an assembly: components, fits and keys"),
    ("register", "toolkit.commands.register", "the shop register: rotor types, jobs, check runs, sign-offs, "
                                              "certificates, statistics"),
    ("serve", "toolkit.commands.serve", "the browser face: tolerance and calculators in a web browser"),
    ("accounts", "toolkit.commands.serve", "accounts of the browser face: add, list, remove, password, role"),
)


class _Parser(argparse.ArgumentParser):
    """An argument parser whose errors are one line on stderr and exit status 2."""

    def error(self, message: str):  # noqa: D401 - argparse API
        self.exit(2, f"{self.prog}: error: {_printable(message)}\n")

    def _get_values(self, action, arg_strings):
        # Python 3.11's argparse drops an option value of exactly "--" ("--mass=--") and hands the command
        # an empty list; keep it as the text it is, so that the command refuses it in its own words
        if action.option_strings and action.nargs is None and arg_strings == ["--"]:
            value = self._get_value(action, "--")
            self._check_value(action, value)
            return value
        return super()._get_values(action, arg_strings)


def build_parser(only: str | None = None, *, listing: bool = False) -> argparse.ArgumentParser:
    """The argument parser. With ``only`` (a subcommand's name) just that subcommand gets its options: the
    others are not needed to run it, and configuring every subcommand costs more start-up time than the
    one that runs. With ``listing`` the subcommands are only named (the top-level ``--help`` and a usage
    error without a subcommand). Without either, every subcommand is configured (the tests use that)."""
    from toolkit import __version__

    parser = _Parser(
        prog="counterpoise",
        description="Rotor balancing for the shop floor: tolerances, corrections, drilling, plates, "
                    "washers and work orders. Quantities take units (\"412 kg\"); vectors are "
                    "AMOUNT@ANGLE (\"38 g@210\").",
        epilog="Exit status: 0 done; 1 done but out of tolerance; 2 bad input or infeasible request.",
    )
    parser.add_argument("--version", action="version", version=f"counterpoise {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    sub.required = True
    modules: dict[str, object] = {}
    for name, module_name, help_text in COMMANDS:
        if only is not None and name != only:
            continue
        if listing:  # the top-level help and usage errors need each subcommand's name and help only
            sub.add_parser(name, help=help_text, add_help=False)
            continue
        module = modules.get(module_name) or importlib.import_module(module_name)
        modules[module_name] = module
        configure = getattr(module, "configure_" + name, None)
        if configure is None:  # a subcommand whose module does not provide it yet
            continue
        command = sub.add_parser(name, help=help_text, description=help_text[:1].upper() + help_text[1:] + ".")
        configure(command)
        command.set_defaults(command_parser=command)  # its options word the library's errors
    return parser


def _chosen(argv: list[str]) -> str | None:
    """The subcommand ``argv`` names, when it starts with one (so only that one needs configuring)."""
    names = {name for name, _module, _help in COMMANDS}
    return argv[0] if argv and argv[0] in names else None


def main(argv: list[str] | None = None) -> int:
    """Run the command line with ``argv`` (default ``sys.argv[1:]``); return the exit status."""
    restore = _plain_streams()
    try:
        return _main(argv)
    finally:
        restore()


class _Stopped(KeyboardInterrupt):
    """SIGTERM or SIGHUP, raised where the program is so that it cleans up as after Ctrl-C."""

    def __init__(self, signum: int):
        super().__init__(signum)
        self.signum = signum


def _stop(signum, frame):
    raise _Stopped(signum)


def _catch_stops() -> dict:
    """Make SIGTERM and SIGHUP stop the command like Ctrl-C (temporary files removed, half-made files
    discarded); returns the handlers to put back."""
    import signal

    old = {}
    for name in ("SIGTERM", "SIGHUP"):
        number = getattr(signal, name, None)
        if number is None:
            continue
        try:
            old[number] = signal.signal(number, _stop)
        except (ValueError, OSError):  # not the main thread: leave the handlers alone
            break
    return old


def _restore_stops(old: dict) -> None:
    import signal

    for number, handler in old.items():
        try:
            signal.signal(number, handler)
        except (ValueError, OSError, TypeError):
            pass


def _main(argv) -> int:
    argv = sys.argv[1:] if argv is None else list(argv)
    chosen = _chosen(argv)
    parser = build_parser(chosen, listing=chosen is None)
    try:
        args = parser.parse_args(argv)
    except SystemExit as exc:  # --help, --version, or a usage error already printed
        return int(exc.code or 0) if not isinstance(exc.code, str) else 2
    stops = _catch_stops()
    try:
        with warnings.catch_warnings():
            # a shop user gets one line or a result, never a Python warning: numeric edge cases are checked
            # by the library itself (results out of range are refused with a message)
            warnings.simplefilter("ignore")
            return int(args.run(args) or 0)
    except CounterpoiseError as exc:
        print("\n".join(_error_lines(args.command, exc, args)), file=sys.stderr)
        return 2
    except KeyboardInterrupt as exc:
        signum = getattr(exc, "signum", None)
        if signum is None:
            print(f"counterpoise {args.command}: interrupted", file=sys.stderr)
            return 130
        import signal

        print(f"counterpoise {args.command}: stopped by {signal.Signals(signum).name}", file=sys.stderr)
        return 128 + signum
    except BrokenPipeError:
        return 0
    except OSError as exc:  # the system refused something (a library's scratch file, a device): one line
        from toolkit.fileio import _reason

        where = f"{exc.filename}: " if getattr(exc, "filename", None) else ""
        print(f"counterpoise {args.command}: error: {_printable(where + _reason(exc))}", file=sys.stderr)
        return 2
    except Exception as exc:  # a bug: still one line, never a traceback, unless asked for
        if os.environ.get("COUNTERPOISE_DEBUG"):
            raise
        print(f"counterpoise {args.command}: internal error ({type(exc).__name__}: {_one_line(exc)}); "
              "set COUNTERPOISE_DEBUG=1 for details and please report it", file=sys.stderr)
        return 3
    finally:
        _restore_stops(stops)


#: Plain equivalents of the characters our output uses, for a terminal or file whose encoding lacks them
#: (ASCII, cp1252, latin-1, cp437). Only characters the stream cannot encode are replaced.
PLAIN = {
    "θ": "theta", "Θ": "Theta", "ω": "omega", "π": "pi", "α": "alpha", "β": "beta", "φ": "phi", "ε": "epsilon",
    "Δ": "Delta", "δ": "delta", "Σ": "Sum", "µ": "u", "μ": "u", "Ω": "Ohm",
    "≥": ">=", "≤": "<=", "≠": "!=", "≈": "~", "±": "+/-", "×": "x", "·": "*", "⋅": "*", "÷": "/", "−": "-",
    "–": "-", "—": "-", "‑": "-", "‐": "-", "→": "->", "←": "<-", "↔": "<->", "…": "...", "•": "*",
    "°": "deg", "′": "'", "″": '"', "‘": "'", "’": "'", "“": '"', "”": '"', "√": "sqrt", "∠": "angle",
    "²": "^2", "³": "^3", "¹": "^1", "⁻": "^-", "⁴": "^4", "½": "1/2", "¼": "1/4", "¾": "3/4",
    "\u00a0": " ", "\u2009": " ", "\u202f": " ", "\u2007": " ", "Ø": "dia.", "ø": "dia.",
}


def plain(text: str, encoding: str = "ascii") -> str:
    """``text`` with every character that ``encoding`` cannot hold replaced by its plain equivalent.

    >>> plain("θ = 30° ≥ 3 mm³ – 2 g·mm × 1.5")
    'theta = 30deg >= 3 mm^3 - 2 g*mm x 1.5'
    >>> plain("± 2 °C", "latin-1")
    '± 2 °C'
    """
    _register()
    return text.encode(encoding, errors=_PLAIN_ERRORS).decode(encoding)


_PLAIN_ERRORS = "counterpoise-plain"


def _replace_unencodable(exc):
    if not isinstance(exc, UnicodeEncodeError):
        raise exc
    import unicodedata

    out = []
    for ch in exc.object[exc.start:exc.end]:
        if ch in PLAIN:
            out.append(PLAIN[ch])
            continue
        folded = unicodedata.normalize("NFKD", ch).encode("ascii", "ignore").decode("ascii")
        out.append(folded if folded.isprintable() and folded else "?")
    return "".join(out), exc.end


def _register() -> None:
    import codecs

    try:
        codecs.lookup_error(_PLAIN_ERRORS)
    except LookupError:
        codecs.register_error(_PLAIN_ERRORS, _replace_unencodable)


def _plain_streams():
    """Let stdout and stderr degrade to plain equivalents where their encoding lacks a character (instead
    of UnicodeEncodeError); returns the function that puts the streams back as they were."""
    _register()
    undo = []
    for stream in (sys.stdout, sys.stderr):
        reconfigure = getattr(stream, "reconfigure", None)
        errors = getattr(stream, "errors", None)
        if reconfigure is None or errors not in ("strict", None):
            continue
        try:
            reconfigure(errors=_PLAIN_ERRORS)
        except (ValueError, OSError, TypeError):
            continue
        undo.append((stream, errors or "strict"))

    def restore():
        for stream, errors in undo:
            try:
                stream.reconfigure(errors=errors)
            except (ValueError, OSError, TypeError):
                pass

    return restore


def _printable(text: str) -> str:
    r"""``text`` with control characters and line separators (a raw argument may hold them) escaped, so that
    a message stays one line.

    >>> _printable("unrecognized arguments: a\x85b c")
    'unrecognized arguments: a\\x85b c'
    """
    return "".join(ch if ch.isprintable() else ch.encode("unicode_escape").decode("ascii") for ch in text)


def _one_line(exc: BaseException) -> str:
    return " ".join(str(exc).split()) or type(exc).__name__


def _error_lines(command: str, exc: CounterpoiseError, args=None) -> list[str]:
    """The lines printed for a refused command: one line; or, when the error lists several problems (a job
    file), a first line that counts them and then one line per problem, each starting ``  - ``. A library
    error names its parameters as this subcommand's options (``toolkit.commands._common.error_text``)."""
    problems, head = getattr(exc, "problems", ()), getattr(exc, "head", "")
    first = f"counterpoise {command}: error: "
    if len(problems) > 1 and head:
        return [first + " ".join(head.split())] + ["  - " + (" ".join(str(p).split()) or "?") for p in problems]
    if args is not None:
        from toolkit.commands._common import error_text

        return [first + (" ".join(error_text(exc, args).split()) or type(exc).__name__)]
    return [first + _one_line(exc)]


def console() -> None:
    """Entry point of the ``counterpoise`` script."""
    sys.exit(main())


if __name__ == "__main__":  # pragma: no cover
    console()
