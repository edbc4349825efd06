"""The command line as a whole: every subcommand present and documented, one-line errors, exit codes.

Behaviour checks only: no published check value here, so none needs a source.
"""

import re
import subprocess
import sys
from pathlib import Path

import pytest

from toolkit import cli

README = Path(__file__).resolve().parent.parent / "README.md"


def test_every_listed_subcommand_is_provided():
    parser = cli.build_parser()
    sub = next(a for a in parser._actions if a.dest == "command")
    assert sorted(sub.choices) == sorted(name for name, _module, _help in cli.COMMANDS)


@pytest.mark.parametrize("name", [name for name, _m, _h in cli.COMMANDS])
def test_every_subcommand_is_documented_in_the_readme(name):
    text = README.read_text(encoding="utf-8")
    assert re.search(rf"counterpoise {name}\b", text), f"README has no example of 'counterpoise {name}'"


@pytest.mark.parametrize("name", [name for name, _m, _h in cli.COMMANDS])
def test_every_subcommand_has_help(name, capsys):
    assert cli.main([name, "--help"]) == 0
    out = capsys.readouterr().out
    assert out.startswith("usage: counterpoise " + name)


def test_usage_errors_are_one_line_with_status_2(capsys):
    assert cli.main(["no-such-command"]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "invalid choice" in err
    assert cli.main([]) == 2
    assert capsys.readouterr().err.count("\n") == 1


def _patch_run(monkeypatch, run, name="grades"):
    """Make subcommand ``name`` call ``run`` instead of its own function."""
    parser = cli.build_parser()
    sub = next(a for a in parser._actions if a.dest == "command")
    sub.choices[name].set_defaults(run=run)
    monkeypatch.setattr(cli, "build_parser", lambda only=None, listing=False: parser)
    return name


def test_library_errors_become_one_line(monkeypatch, capsys):
    from toolkit import BadInput

    def boom(args):
        raise BadInput("--mass: '412' has no unit;\n give a mass")

    name = _patch_run(monkeypatch, boom)
    status = cli.main([name])
    err = capsys.readouterr().err
    assert status == 2
    assert err == f"counterpoise {name}: error: --mass: '412' has no unit; give a mass\n"


def test_unexpected_errors_never_show_a_traceback(monkeypatch, capsys):
    def bug(args):
        raise ZeroDivisionError("division by zero")

    name = _patch_run(monkeypatch, bug)
    monkeypatch.delenv("COUNTERPOISE_DEBUG", raising=False)
    assert cli.main([name]) == 3
    err = capsys.readouterr().err
    assert "Traceback" not in err and err.count("\n") == 1 and "internal error" in err


def test_module_entry_point_and_light_start():
    out = subprocess.run([sys.executable, "-c",
                          "import sys, toolkit.cli; toolkit.cli.build_parser(); "
                          "print(sorted(m for m in ('numpy', 'pint', 'openpyxl', 'reportlab') if m in sys.modules))"],
                         capture_output=True, text=True, timeout=60)
    assert out.stdout.strip() == "[]", "the command line must not import heavy modules before a command runs"
    version = subprocess.run([sys.executable, "-m", "toolkit", "--version"], capture_output=True, text=True,
                             timeout=60)
    assert version.returncode == 0 and version.stdout.startswith("counterpoise ")
