"""What the tests/test_faults_*.py files share: bad input across every subcommand gives one line on stderr
and exit 2, never a traceback.

Hypothesis builds command lines from a valid base for each subcommand and spoils them (missing and wrong
units, NaN, infinity, negative or zero values, absurd magnitudes, angles written other ways, empty and very
long strings, unknown or repeated options), and spoils job, runs, coefficient and table files (bad TOML, bad
values, non-UTF-8 bytes, truncation). Whatever comes in, the command line must answer with exit status 0, 1
or 2 (never the internal-error status 3), on 2 exactly one line on stderr (except a job file with several
problems: a first line that counts them, then exactly that many lines, one per problem), never a traceback,
and with ``--json`` exactly one JSON object on stdout when it answers 0 or 1.

The contract checked here is the command line's (exit status 2 for bad input or an infeasible request, with
one line on stderr; issue 6); the generated values are not published figures, so no value below needs a source.
"""

from __future__ import annotations

import atexit
import contextlib
import io
import json
import os
import re
import shutil
import tempfile
import warnings
from pathlib import Path

from hypothesis import HealthCheck, settings, strategies as st

from toolkit.cli import COMMANDS, main

#: a register file of this test run only (a fixed name in the shared temporary folder met files of other runs)
_FUZZ_DIR = tempfile.mkdtemp(prefix="cp-fuzz-")
atexit.register(shutil.rmtree, _FUZZ_DIR, True)

_NAMES = {name for name, _module, _help in COMMANDS}

ROOT = Path(__file__).resolve().parents[1]
EXAMPLES = ROOT / "examples"
# Modest and repeatable by default (the whole file runs in well under a minute); a longer random hunt:
# COUNTERPOISE_FUZZ_EXAMPLES=500 pytest tests/test_faults_*.py
_HUNT = int(os.environ.get("COUNTERPOISE_FUZZ_EXAMPLES", "0") or 0)
SETTINGS = settings(max_examples=_HUNT or 20, deadline=None, derandomize=not _HUNT,
                    suppress_health_check=[HealthCheck.too_slow, HealthCheck.filter_too_much])


# -- running the command line in-process -------------------------------------------------------------------

def run_cli(argv: list[str]) -> tuple[int, str, str]:
    """Run ``main(argv)`` with stdout and stderr captured; Python warnings are shown every time so a leak
    cannot hide behind the once-per-location default. Paths in ``argv`` must be absolute."""
    out, err = io.StringIO(), io.StringIO()
    # in a scratch working folder: a generated "demo" without --out writes there, not into the project
    with warnings.catch_warnings(record=True) as caught, tempfile.TemporaryDirectory() as scratch, \
            contextlib.chdir(scratch):
        warnings.simplefilter("always")
        with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
            rc = main(argv)
    # recorded, not printed (pytest records warnings itself): shown on stderr as a user would see them
    ours = [w for w in caught if "toolkit" in str(w.filename)]
    text = "".join(warnings.formatwarning(w.message, w.category, w.filename, w.lineno) for w in ours)
    return rc, out.getvalue(), err.getvalue() + text


#: The first line of a refusal that lists a job file's problems one per line below it (the only exit-2 answer
#: with more than one line on stderr).
_JOB_PROBLEMS = re.compile(r"^counterpoise [\w-]+: error: .*: (\d+) problems in the job file:$")


def assert_clean(argv, rc: int, out: str, err: str) -> None:
    """The promises of the command line, whatever the input."""
    shown = f"argv={argv!r}\nrc={rc}\nstderr={err[:2000]!r}\nstdout={out[:500]!r}"
    assert rc in (0, 1, 2), "exit status outside 0/1/2 (3 is an internal error):\n" + shown
    assert "Traceback" not in err and "Traceback" not in out, shown
    assert "Warning:" not in err, "a Python warning leaked onto stderr:\n" + shown
    if rc == 2:
        lines = err.splitlines()
        assert lines and lines[0].startswith("counterpoise"), shown
        assert "internal error" not in lines[0], shown
        listed = _JOB_PROBLEMS.match(lines[0])
        if listed:  # the one exception: a job file's problems, counted on the first line, then one per line
            assert int(listed.group(1)) >= 2 and len(lines) == 1 + int(listed.group(1)), shown
            assert all(line.startswith("  - ") and len(line) > 4 for line in lines[1:]), shown
        else:
            assert len(lines) == 1, "exit 2 must come with exactly one line on stderr:\n" + shown
    elif (argv and argv[0] in _NAMES and "--json" in argv
          and not {"--help", "-h", "--version"} & set(argv)):
        data = json.loads(out)  # exactly one JSON object, nothing else on stdout
        assert isinstance(data, dict), shown


def check(argv: list[str]) -> tuple[int, str, str]:
    rc, out, err = run_cli(argv)
    assert_clean(argv, rc, out, err)
    return rc, out, err


# -- generated values ----------------------------------------------------------------------------------------

UNITS = ["kg", "g", "lb", "oz", "mm", "m", "in", "ft", "um", "µm", "rpm", "r/min", "Hz", "1/s", "rad/s",
         "deg/s", "g*mm", "g·mm", "oz*in", "kg*m", "mm/s", "in/s", "kg/m^3", "kg/m3", "lb/in^3", "N", "lbf",
         "deg", "rad", "%", "", "furlong", "kgg", "m/s^2", "g mm", "°C", "dimensionless", "1/min", "s"]

NUMBERS = st.one_of(
    st.floats(allow_nan=True, allow_infinity=True).map(repr),
    st.integers(min_value=-10**40, max_value=10**40).map(str),
    st.floats(min_value=1e-3, max_value=1e5).map(lambda x: f"{x:.4g}"),
    st.sampled_from(["nan", "NaN", "inf", "-inf", "Infinity", "1e999", "-1e999", "1e-320", "-0", "0", "0.0",
                     "1e308", "1_000", "1,5", "٣", "0x1A", "1/3", "2**1024", "10**400", ".", "-", "+5", "5e"]),
)

QUANTITY = st.builds(lambda n, sep, u: f"{n}{sep}{u}", NUMBERS, st.sampled_from(["", " ", "  "]),
                     st.sampled_from(UNITS))

ANGLE = st.one_of(NUMBERS, st.sampled_from(
    ["30°", "30 deg", "30deg", "0.5 rad", "-90", "720", "360", "1e400", "N", "NE", "3 o'clock", "30'",
     "π/2", "30 grad", "", " ", "12:00", "+45", "45.0000000000000000001", "nan", "inf"]))

VECTOR = st.builds(lambda q, sep, a: f"{q}{sep}{a}", QUANTITY,
                   st.sampled_from(["@", " @ ", "@@", "∠", " at ", "", "@-"]), ANGLE)

NAMES = st.sampled_from(["A", "B", "I", "II", "near", "far", "hub", "", " ", "=", "é", "x" * 300, "A B",
                         "=1+1", "../x", "\u202e", "C"])

NAMED = st.builds(lambda n, sep, v: f"{n}{sep}{v}", NAMES, st.sampled_from(["=", "==", ":", ""]),
                  st.one_of(QUANTITY, VECTOR, ANGLE))

SPECIAL = st.sampled_from([
    "", " ", "\t", "\n", "x" * 10_000, "1" * 400 + " kg", "=cmd|' /C calc'!A0", "=1+1", "@SUM(A1)", "-",
    "--", "--json", "G", "G-1", "G 6.3.3", "G0", "G 4000", "G 40000", "g6.3", "G6,3", "6.3 mm/s", "6.3 m/s",
    "steel", "unobtainium", "S355", "M12", "M0", "M-3", "metric", "imperial", "si", "add", "remove",
    "with rotation", "against rotation", "lag", "lead", "sideways", "0,90", "90,,135", ",", "1,2,3,4,5,6,7,8",
    "0,0", "90,90", "1e999,5", "nan,nan", "3", "2", "1", "0", "-1", "1000000", "0.5", "1.5", "-0.1",
    "/nonexistent/x.csv", "/dev/null", "/", ".", "é", "\udcff", "\U0001F600", "\u202e", "yes",
])

VALUE = st.one_of(SPECIAL, QUANTITY, VECTOR, NAMED, ANGLE, st.text(max_size=24))


# -- the subcommands and a valid base command line for each --------------------------------------------------

def _pairs(*items):
    """("--opt", "value") pairs, (flag, None) for flags, (None, value) for positionals."""
    return [tuple(i) for i in items]


BASES: dict[str, list[list[tuple]]] = {
    "grades": [_pairs(("--json", None))],
    "materials": [_pairs(("--json", None))],
    "tolerance": [
        _pairs(("--grade", "G6.3"), ("--mass", "412 kg"), ("--speed", "1480 rpm"), ("--bearing-span", "900 mm"),
               ("--com-from-a", "400 mm"), ("--plane", "I=-120 mm"), ("--plane", "II=1010 mm"),
               ("--residual", "I=450 g*mm@40"), ("--error-allowance", "10 g*mm"), ("--json", None)),
        _pairs(("--grade", "G2.5"), ("--mass", "908 lb"), ("--speed", "3600 rpm"), ("--units", "imperial"),
               ("--bearing-span", "36 in"), ("--com-from-a", "18 in"), ("--plane", "I=-4 in"),
               ("--plane", "II=40 in"), ("--criterion", "iso"),
               ("--criterion", "api"), ("--criterion", "mil-std-167"), ("--journal-load", "A=454 lb"),
               ("--journal-load", "B=454 lb"), ("--static-share", "0.5"), ("--min-share", "0.3"),
               ("--check-stage", "later-check"), ("--residual", "II=1 oz*in@30"), ("--json", None)),
    ],
    "verify": [_pairs(("--test", "200 g*mm"), ("--reading", "44.88@0"), ("--reading", "53.63@60"),
                      ("--reading", "58.64@120"), ("--reading", "56.03@180"), ("--reading", "47.72@240"),
                      ("--reading", "41.41@300"), ("--allowed", "150 g*mm"), ("--min-consistency", "0.9"),
                      ("--json", None))],
    "solve": [
        _pairs(("--original", "4.20 mm/s@285"), ("--trial", "10 g@0"), ("--with-trial", "6.12 mm/s@251.5"),
               ("--radius", "150 mm"), ("--weight-angles", "against rotation"), ("--phase", "lag"),
               ("--json", None)),
        _pairs(("--original", "6.0 mm/s"), ("--trial", "40 g"), ("--amplitude", "0=4.25 mm/s"),
               ("--amplitude", "120=6.29 mm/s"), ("--amplitude", "240=9.92 mm/s"), ("--json", None)),
        _pairs(("--bearing-mass", "200 kg"), ("--radius", "150 mm"), ("--speed", "1480 rpm"),
               ("--fraction", "0.1"), ("--json", None)),
        _pairs((None, str(EXAMPLES / "runs-two-plane.toml")), ("--method", "min-max"), ("--limit", "near=60 g"),
               ("--max-condition", "10"), ("--min-change-pct", "30"), ("--min-change-deg", "30"),
               ("--json", None)),
    ],
    "split": [_pairs((None, "25 g@100"), ("--at", "90,135"), ("--json", None)),
              _pairs((None, "25 g@100"), ("--positions", "8"), ("--offset", "10"), ("--json", None))],
    "drill": [
        _pairs(("--unbalance", "2400 g*mm@131"), ("--radius", "150 mm"), ("--radial", None), ("--diameter", "8 mm"),
               ("--material", "steel"), ("--action", "add"), ("--wall", "60 mm"), ("--allowance", "50 g*mm"),
               ("--json", None)),
        _pairs(("--unbalance", "3000 g*mm"), ("--radius", "100 mm"), ("--axial", None), ("--density", "7850 kg/m^3"),
               ("--point-angle", "118"), ("--max-depth", "40 mm"), ("--positions", "340,20"), ("--max-holes", "7"), ("--depth-step", "0.1 mm"),
               ("--drills", "inch"), ("--json", None)),
    ],
    "plate": [
        _pairs(("--unbalance", "38 g@307"), ("--radius", "620 mm"), ("--width", "40 mm"), ("--material", "steel"),
               ("--shape", "rolled"), ("--allowance", "100 g*mm"), ("--step", "1 mm"), ("--json", None)),
        _pairs(("--unbalance", "20000 g*mm"), ("--radius", "300 mm"), ("--width", "30 mm"),
               ("--thickness", "6 mm"), ("--density", "7850 kg/m^3"), ("--shape", "face"),
               ("--fillet", "5 mm"), ("--convexity", "0.2"), ("--weld", "ends"), ("--max-length", "100 mm"),
               ("--seat-offset", "30"), ("--stock-unit", "mm"), ("--json", None)),
    ],
    "washers": [_pairs(("--unbalance", "2400 g*mm@131"), ("--radius", "150 mm"), ("--size", "M10"),
                       ("--action", "remove"), ("--json", None))],
    "key": [
        _pairs(("--width", "14 mm"), ("--height", "9 mm"), ("--shaft-depth", "5.5 mm"), ("--hub-depth", "3.8 mm"),
               ("--shaft-diameter", "50 mm"), ("--keyway-length", "70 mm"), ("--hub-length", "56 mm"),
               ("--hub-start", "14 mm"), ("--keyway-angle", "90"), ("--plane", "I=-40 mm"), ("--plane", "II=200 mm"),
               ("--allowance", "120 g*mm"), ("--material", "steel"), ("--json", None)),
        _pairs(("--width", "0.25 in"), ("--height", "0.25 in"), ("--shaft-depth", "0.15 in"),
               ("--shaft-diameter", "1.125 in"), ("--keyway-length", "2 in"), ("--key-length", "1.5 in"),
               ("--shaft", "full-key"), ("--shaft-fill", "half-key"), ("--half-key-height", "0.1 in"),
               ("--in-service", "nothing"), ("--keyway-start", "-1 in"), ("--density", "7850 kg/m^3"),
               ("--fix", "drill"), ("--fix-radius", "0.5 in"), ("--units", "imperial"), ("--json", None)),
    ],
    "index": [_pairs(("--reading", "0=300 g*mm@40"), ("--reading", "180=180 g*mm@200"),
                     ("--allowance", "150 g*mm"), ("--json", None)),
              _pairs(("--reading", "2 g@40"), ("--reading", "1.5 g@170"), ("--reading", "2.2 g@270"),
                     ("--radius", "100 mm"), ("--max-spread", "0.2"), ("--units", "imperial"), ("--json", None))],
    "budget": [_pairs(("--tolerance", "600 g*mm"), ("--part", "impeller=120 g*mm@40"), ("--part", "shaft=95 g*mm"),
                      ("--fit", "hub=38 kg,clearance 0.02 mm"), ("--key", "key=173 g*mm@90"), ("--json", None)),
               _pairs(("--grade", "G2.5"), ("--mass", "80 kg"), ("--speed", "2950 rpm"),
                      ("--fit", "hub=12 kg,runout 0.03 mm@120"), ("--other", "machine=40 g*mm"),
                      ("--units", "imperial"), ("--json", None))],
    "register": [_pairs((None, "jobs"), ("--register", str(Path(_FUZZ_DIR) / "register.sqlite3")),
                        ("--status", "planned"), ("--since", "2026-01-01"), ("--limit", "5"), ("--json", None))],
    "accounts": [_pairs((None, "list"), ("--register", str(Path(_FUZZ_DIR) / "register.sqlite3")),
                        ("--json", None))],
}

# demo/order/batch write files: their bases are built per example with a temporary output folder.
FILE_COMMANDS = {"demo", "order", "batch"}

# serve runs a server until stopped: a spoiled command line that happens to be valid would not return. Its
# refusals (address, port, no accounts) are tested in tests/test_web.py.
SERVER_COMMANDS = {"serve"}


def flatten(pairs) -> list[str]:
    argv = []
    for opt, value in pairs:
        if opt is None:
            argv.append(value)
        elif value is None:
            argv.append(opt)
        else:
            argv.append(f"{opt}={value}" if value.startswith("-") else opt)
            if not value.startswith("-"):
                argv.append(value)
    return argv


@st.composite
def spoiled(draw, bases):
    """A base command line with one to three changes: a value replaced, an option dropped, an option
    repeated or another option of the same command added."""
    pairs = list(draw(st.sampled_from(bases)))
    known = sorted({opt for b in bases for opt, value in b if opt and value is not None})
    for _ in range(draw(st.integers(min_value=1, max_value=3))):
        action = draw(st.sampled_from(["replace", "replace", "replace", "drop", "repeat", "add"]))
        if action == "replace":
            slots = [i for i, (opt, value) in enumerate(pairs) if value is not None]
            if slots:
                i = draw(st.sampled_from(slots))
                pairs[i] = (pairs[i][0], draw(VALUE))
        elif action == "drop" and pairs:
            del pairs[draw(st.integers(min_value=0, max_value=len(pairs) - 1))]
        elif action == "repeat" and pairs:
            pairs.append(draw(st.sampled_from(pairs)))
        elif known:
            pairs.append((draw(st.sampled_from(known)), draw(VALUE)))
    return pairs



# -- spoiled files ---------------------------------------------------------------------------------------------

TOML_VALUE = st.one_of(
    st.builds(json.dumps, st.one_of(SPECIAL, QUANTITY, VECTOR, NAMED, st.text(max_size=20))),
    st.integers(min_value=-10**20, max_value=10**20).map(str),
    st.sampled_from(["nan", "inf", "-inf", "0", "-1", "1e308", "true", "false", "[]", "[1, 2]", '["a", 1]',
                     "{}", '{ near = "25 g@0" }', '{ x = "1 kg" }', '[[1], ["x"]]', '"\\u0000"', "'''a\nb'''",
                     '"../../../etc/passwd"', '"/dev/zero"', '"/"', "2026-12-01", "1979-05-27T07:32:00Z"]),
)
RAW = st.sampled_from(["garbage", "[order", "]]", "= 5", "x = ", "x = 1\nx = 2", "[[plane]]", "[measurement]",
                       "[order]", "\x00", "a.b.c = 1", 'name = "\\q"', "number = 5", "\ufeff"])


def _key_lines(text: str) -> list[int]:
    return [i for i, line in enumerate(text.splitlines()) if re.match(r'\s*"?[\w .-]+"?\s*=', line)]


@st.composite
def spoiled_text(draw, source: Path) -> bytes:
    """The text of ``source`` with one to three changes, as bytes (possibly not UTF-8 any more)."""
    text = source.read_text(encoding="utf-8")
    for _ in range(draw(st.integers(min_value=1, max_value=3))):
        lines = text.splitlines()
        keyed = _key_lines(text)
        action = draw(st.sampled_from(["value", "value", "value", "drop", "insert", "duplicate", "truncate"]))
        if action == "value" and keyed:
            i = draw(st.sampled_from(keyed))
            key = lines[i].split("=", 1)[0]
            lines[i] = f"{key}= {draw(TOML_VALUE)}"
        elif action == "drop" and keyed:
            del lines[draw(st.sampled_from(keyed))]
        elif action == "insert":
            lines.insert(draw(st.integers(min_value=0, max_value=len(lines))), draw(RAW))
        elif action == "duplicate" and keyed:
            i = draw(st.sampled_from(keyed))
            lines.insert(i, lines[i])
        elif action == "truncate":
            lines = lines[:draw(st.integers(min_value=0, max_value=len(lines)))]
        text = "\n".join(lines) + "\n"
    data = text.encode("utf-8")
    encoding = draw(st.sampled_from(["utf-8", "utf-8", "utf-8", "latin-1-bytes", "utf-16", "bom", "cr"]))
    if encoding == "latin-1-bytes":
        at = draw(st.integers(min_value=0, max_value=len(data)))
        data = data[:at] + b"\xe9\xff\xfe" + data[at:]
    elif encoding == "utf-16":
        data = text.encode("utf-16")
    elif encoding == "bom":
        data = b"\xef\xbb\xbf" + data
    elif encoding == "cr":
        data = data.replace(b"\n", b"\r")
    return data


JOBS = sorted(EXAMPLES.glob("job-*.toml")) + [ROOT / "toolkit" / "workorder" / "demo.toml"]
RUNS = sorted(EXAMPLES.glob("runs-*.toml"))



def _copy_companions(source: Path, tmp: Path) -> None:
    # job files may point at files beside them (stored coefficients, shop tables)
    for path in source.parent.iterdir():
        if path.is_file() and path.suffix in (".json", ".csv", ".toml"):
            shutil.copy(path, tmp / path.name)


