"""Bad input through the command line (toolkit/cli.py and toolkit/commands/): every subcommand's base
command line spoiled, random words, '--' as every value, extreme magnitudes, refusals naming the option, and
a sample through a real process.

Behaviour checks only (the contract of exit statuses and one-line refusals, see tests/fault_support.py):
the generated values are not published figures, so no value here needs a source.
"""

from __future__ import annotations

import os
import re
import subprocess
import sys

import pytest
from hypothesis import given, strategies as st

from fault_support import (BASES, EXAMPLES, FILE_COMMANDS, SERVER_COMMANDS, SETTINGS, VALUE, check, flatten, spoiled)
from toolkit.cli import COMMANDS


def test_every_subcommand_is_fuzzed():
    names = {name for name, _module, _help in COMMANDS}
    assert names == set(BASES) | FILE_COMMANDS | SERVER_COMMANDS


@pytest.mark.parametrize("command", sorted(BASES))
def test_bases_are_valid(command):
    # the unspoiled command lines run (0 or 1), so the spoiled ones test the refusals, not a broken base
    for pairs in BASES[command]:
        rc, out, err = check([command] + flatten(pairs))
        assert rc in (0, 1), err


@pytest.mark.parametrize("command", sorted(BASES))
@SETTINGS
@given(data=st.data())
def test_spoiled_command_lines(command, data):
    pairs = data.draw(spoiled(BASES[command]))
    check([command] + flatten(pairs))


@given(st.lists(st.one_of(VALUE, st.sampled_from([n for n, _m, _h in COMMANDS]),
                          st.sampled_from(["--json", "--help", "--units", "--force", "-x", "--version"])),
                max_size=5))
@SETTINGS
def test_random_words(words):
    # any words at all: usage errors are one line too
    rc, out, err = check(words)
    if not words:
        assert rc == 2


def _every_option_value():
    for command, bases in sorted(BASES.items()):
        for b, pairs in enumerate(bases):
            for i, (opt, value) in enumerate(pairs):
                if value is not None:
                    yield pytest.param(command, b, i, id=f"{command}-{b}-{opt or 'positional'}-{i}")


@pytest.mark.parametrize("command, base, index", list(_every_option_value()))
def test_double_dash_as_every_value(command, base, index):
    # "--opt=--" hands the program an empty list instead of a string (argparse strips the "--")
    pairs = list(BASES[command][base])
    opt, _value = pairs[index]
    argv = [command] + flatten(pairs[:index]) + ([f"{opt}=--"] if opt else ["--"]) + flatten(pairs[index + 1:])
    check(argv)


EXTREMES = ("1e300", "1e-300", "1.3e155", "7.7e-155", "1.7976931348623157e308")


def _every_magnitude():
    for command, bases in sorted(BASES.items()):
        for b, pairs in enumerate(bases):
            for i, (opt, value) in enumerate(pairs):
                if value is not None and re.match(r"^[A-Za-z]*=?-?[\d.]+ ?[A-Za-z]", value):
                    yield pytest.param(command, b, i, id=f"{command}-{b}-{opt or 'positional'}-{i}")


@pytest.mark.parametrize("command, base, index", list(_every_magnitude()))
def test_extreme_magnitudes_in_every_quantity(command, base, index):
    # every number-with-unit of every base, scaled to the edges of the float range (squares and cubes of
    # these overflow or underflow): an answer or a one-line refusal, never an internal error
    pairs = list(BASES[command][base])
    opt, value = pairs[index]
    for extreme in EXTREMES:
        pairs[index] = (opt, re.sub(r"-?[\d.]+", extreme, value, count=1))
        check([command] + flatten(pairs))


@pytest.mark.parametrize("argv, words", [
    (["tolerance", "--grade", "G6.3", "--mass", "nan kg", "--speed", "1480 rpm"], ["--mass", "finite"]),
    (["tolerance", "--grade", "G6.3", "--mass", "412 kg", "--speed", "0 rpm"], ["--speed", "greater than zero"]),
    # found by this file: an integer beyond the float range once ended in an internal error (OverflowError);
    # the reader now refuses arithmetic on the number before any is done
    (["tolerance", "--grade", "G6.3", "--mass", "2**1024 kg", "--speed", "1480 rpm"], ["--mass", "arithmetic"]),
    (["plate", "--unbalance", "2**1024 kg", "--radius", "620 mm", "--width", "40 mm", "--material", "steel"],
     ["--unbalance"]),
    (["tolerance", "--grade", "G6.3", "--mass", "412", "--speed", "1480 rpm"], ["--mass", "no unit"]),
    (["tolerance", "--grade", "G7", "--mass", "412 kg", "--speed", "1480 rpm"], ["--grade"]),
    (["drill", "--unbalance", "inf g*mm", "--radius", "150 mm", "--axial", "--material", "steel"],
     ["--unbalance"]),
    (["drill", "--unbalance", "2400 g*mm", "--radius", "-150 mm", "--axial", "--material", "steel"],
     ["--radius"]),
    (["plate", "--unbalance", "38 g@307", "--radius", "620 mm", "--width", "40 kg", "--material", "steel"],
     ["--width"]),
    (["washers", "--unbalance", "2400 g*mm", "--radius", "150 mm", "--size", "M999"], ["M999"]),
    (["split", "25 g@100", "--at", "90,90"], ["positions"]),
    (["verify", "--test", "200 g*mm", "--reading", "44.88@0", "--reading", "53.63@60"], ["--reading"]),
    (["solve", "--original", "4.2@285", "--trial", "10 g@0", "--with-trial", "6.12 mm/s@251.5"],
     ["--original", "no unit"]),
    # found by this file (1,500 examples): omega ** 2 overflowed (OverflowError, exit 3); now every one of
    # the three is outside the reader's bounds and the first is refused with its bound
    (["solve", "--bearing-mass", "1e-300 kg", "--radius", "1e300 mm", "--speed", "1e300 rpm"],
     ["--bearing-mass", "[CP]"]),
    # found by this file: "--reading=--" reached the library as an empty list (argparse dropped the "--")
    (["verify", "--test", "200 g*mm", "--reading=--", "--reading", "53.63@60", "--reading", "58.64@120"],
     ["--reading 1"]),
    # found by this file: a stray argument holding a line separator (U+0085) split the usage error in two
    (["split", "25 g@100", "--at", "90,135", "a\x85b"], ["unrecognized arguments", "a\\x85b"]),
    (["no\u2028such"], ["invalid choice", "no\\u2028such"]),
])
def test_refusals_name_the_option(argv, words):
    rc, out, err = check(argv)
    assert rc == 2
    for word in words:
        assert word in err, err


# -- a sample through a real process: what the shop's terminal sees -------------------------------------------

def _python_cli(argv, **kw):
    env = dict(os.environ)
    env.pop("COUNTERPOISE_DEBUG", None)
    return subprocess.run([sys.executable, "-m", "toolkit", *argv], capture_output=True, env=env, timeout=120,
                          **kw)


SUBPROCESS_SAMPLE = [
    ["tolerance", "--grade", "G6.3", "--mass", "-412 kg", "--speed", "1480 rpm"],
    ["tolerance", "--grade", "G6.3", "--mass", "412 kg", "--speed", "1e999 rpm"],
    ["tolerance", "--grade", "\udcff", "--mass", "412 kg", "--speed", "1480 rpm"],
    ["verify", "--test", "x" * 5000, "--reading", "1@0"],
    ["solve", "--original", "4.2 mm/s@nan", "--trial", "10 g@0", "--with-trial", "6.12 mm/s@251.5"],
    ["split", "25 g@ninety", "--positions", "8"],
    ["drill", "--unbalance", "2400 g*mm", "--radius", "150 mm", "--axial", "--material", "unobtainium"],
    ["plate", "--unbalance", "", "--radius", "620 mm", "--width", "40 mm", "--material", "steel"],
    ["washers", "--unbalance", "2400 kg", "--radius", "150 mm"],
    ["order", "/nonexistent/job.toml"],
    ["batch", "/nonexistent/sheet.csv"],
    ["demo", "--format", "docx"],
    ["grades", "--bogus"],
    ["nonsense"],
    [],
]


@pytest.mark.parametrize("argv", SUBPROCESS_SAMPLE, ids=lambda a: " ".join(a)[:40] or "no-args")
def test_subprocess_sample(argv, tmp_path):
    result = _python_cli(argv, cwd=tmp_path)
    err = result.stderr.decode("utf-8", "replace")
    assert result.returncode == 2, err
    assert b"Traceback" not in result.stderr
    assert len(err.splitlines()) == 1, err
    assert list(tmp_path.iterdir()) == []  # a refused command leaves nothing behind


def test_subprocess_non_utf8_file_and_locale(tmp_path):
    job = tmp_path / "job.toml"
    job.write_bytes((EXAMPLES / "job-fan-readings.toml").read_bytes().replace(b"Supply fan", b"Supply \xff\xfe fan"))
    # a C locale: stderr cannot encode every character, still one line and no traceback
    env = {**os.environ, "LC_ALL": "C", "LANG": "C", "PYTHONUTF8": "0", "PYTHONIOENCODING": "ascii"}
    result = subprocess.run([sys.executable, "-m", "toolkit", "order", str(job), "--out", str(tmp_path / "out")],
                            capture_output=True, timeout=120, env=env)
    assert result.returncode == 2
    assert b"Traceback" not in result.stderr
    assert len(result.stderr.splitlines()) == 1, result.stderr
    assert b"UTF-8" in result.stderr
    assert not (tmp_path / "out").exists()
