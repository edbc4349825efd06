"""The unit-registry cache, through the commands: broken, unwritable or stale cache folders never stop one.

tests/test_units.py checks the library call with a broken cache; here every calculator subcommand (and a
work order) runs in a fresh process against a spoiled ``COUNTERPOISE_CACHE_DIR`` and must give the same
answer as with a clean cache. The suite runs as root, where permissions do not bind, so "unwritable" is a
folder on a read-only file system (``/proc``) or below a plain file.

The check value U_per = 2005 g·mm for G 6.3, 100 kg, 3000 r/min is ISO 21940-11:2016, 6.3.3 (formula;
shared/references/tolerance.csv, row iso-u-per-100kg, 2005.35 g*mm).
"""

from __future__ import annotations

import json
import os
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
EXAMPLES = ROOT / "examples"

COMMANDS = {
    "tolerance": ["tolerance", "--grade", "G6.3", "--mass", "100 kg", "--speed", "3000 rpm", "--json"],
    "grades": ["grades", "--json"],
    "verify": ["verify", "--test", "200 g*mm", "--reading", "44.88@0", "--reading", "53.63@60", "--reading",
               "58.64@120", "--reading", "56.03@180", "--reading", "47.72@240", "--reading", "41.41@300",
               "--json"],
    "solve": ["solve", str(EXAMPLES / "runs-two-plane.toml"), "--json"],
    "split": ["split", "25 g@100", "--at", "90,135", "--json"],
    "drill": ["drill", "--unbalance", "2400 g*mm", "--radius", "150 mm", "--axial", "--material", "steel",
              "--json"],
    "plate": ["plate", "--unbalance", "38 g@307", "--radius", "620 mm", "--width", "40 mm", "--material",
              "steel", "--json"],
    "washers": ["washers", "--unbalance", "2400 g*mm", "--radius", "150 mm", "--json"],
    "materials": ["materials", "--json"],
}


def run(argv, cache: str | None, cwd: Path):
    env = {k: v for k, v in os.environ.items() if not k.startswith("COUNTERPOISE_")}
    if cache is not None:
        env["COUNTERPOISE_CACHE_DIR"] = cache
    return subprocess.run([sys.executable, "-m", "toolkit", *argv], capture_output=True, text=True, env=env,
                          cwd=cwd, timeout=180)


def _fill(base: Path, tmp: Path) -> Path:
    """Run one command so that pint writes its cache; return the per-environment folder."""
    result = run(COMMANDS["tolerance"], str(base), tmp)
    assert result.returncode == 0, result.stderr
    folders = [p for p in base.iterdir() if p.is_dir()]
    assert len(folders) == 1 and any(folders[0].iterdir())
    return folders[0]


def _garbage(folder: Path) -> None:
    for path in folder.iterdir():
        path.write_bytes(b"\x80\x04not a pickle\xff" * 7)


def _truncated(folder: Path) -> None:
    for path in folder.iterdir():
        data = path.read_bytes()
        path.write_bytes(data[: len(data) // 3])


def _stale(folder: Path) -> None:
    # valid files holding the wrong content, as after an upgrade that kept old names: swap them round
    files = sorted(folder.glob("*.pickle"))
    contents = [p.read_bytes() for p in files]
    for path, data in zip(files, contents[1:] + contents[:1]):
        path.write_bytes(data)
    for path in folder.glob("*.json"):
        path.write_text(json.dumps({"stale": True}), encoding="utf-8")


def _empty_files(folder: Path) -> None:
    for path in folder.iterdir():
        path.write_bytes(b"")


def _file_in_the_way(folder: Path) -> None:
    shutil.rmtree(folder)
    folder.write_text("a file where the cache folder should be")


def _dangling_link(folder: Path) -> None:
    shutil.rmtree(folder)
    folder.symlink_to(folder.parent / "nowhere")


def _link_loop(folder: Path) -> None:
    shutil.rmtree(folder)
    folder.symlink_to(folder)


BREAKAGES = {f.__name__.strip("_"): f for f in (_garbage, _truncated, _stale, _empty_files, _file_in_the_way,
                                                 _dangling_link, _link_loop)}


@pytest.fixture(scope="module")
def clean_answers(tmp_path_factory) -> dict[str, dict]:
    """Each command's JSON with no cache at all (COUNTERPOISE_NO_CACHE), the reference for the others."""
    tmp = tmp_path_factory.mktemp("clean")
    answers = {}
    for name, argv in COMMANDS.items():
        result = subprocess.run([sys.executable, "-m", "toolkit", *argv], capture_output=True, text=True,
                                cwd=tmp, timeout=180, env={**os.environ, "COUNTERPOISE_NO_CACHE": "1"})
        assert result.returncode in (0, 1), result.stderr
        answers[name] = _stable(json.loads(result.stdout))
    return answers


def _stable(data):
    """The JSON without time stamps (none are expected, but a saved date must not fail the comparison)."""
    if isinstance(data, dict):
        return {k: _stable(v) for k, v in data.items() if k not in ("saved", "date", "elapsed_s")}
    if isinstance(data, list):
        return [_stable(v) for v in data]
    return data


#: every command for the two likeliest breakages; three commands (one per library area) for the others,
#: which keeps this file to a minute or so on a busy two-core machine
EVERY = ("garbage", "stale")
SAMPLE = ("tolerance", "drill", "solve")


@pytest.mark.parametrize("breakage", sorted(BREAKAGES))
def test_every_command_runs_with_a_spoiled_cache(tmp_path, clean_answers, breakage):
    base = tmp_path / "cache"
    folder = _fill(base, tmp_path)
    BREAKAGES[breakage](folder)
    for name in (COMMANDS if breakage in EVERY else SAMPLE):
        argv = COMMANDS[name]
        result = run(argv, str(base), tmp_path)
        assert result.returncode in (0, 1), f"{name} with a {breakage} cache: {result.stderr}"
        assert "Traceback" not in result.stderr and result.stderr.strip() == "", result.stderr
        assert _stable(json.loads(result.stdout)) == clean_answers[name], name
    tolerance = json.loads(run(COMMANDS["tolerance"], str(base), tmp_path).stdout)
    assert tolerance["u_per_g_mm"] == pytest.approx(2005.35, rel=1e-4)  # ISO 21940-11:2016, 6.3.3


@pytest.mark.parametrize("where", ["/proc/counterpoise-cache", "below-a-file", "very-long", "relative"])
def test_unwritable_or_odd_cache_locations(tmp_path, clean_answers, where):
    blocker = tmp_path / "plain-file"
    blocker.write_text("not a folder")
    cache = {"/proc/counterpoise-cache": "/proc/counterpoise-cache",   # a read-only file system, even for root
             "below-a-file": str(blocker / "cache"),
             "very-long": str(tmp_path / ("x" * 250) / ("y" * 250)),  # a name longer than NAME_MAX
             "relative": "cache-here"}[where]
    for name in ("tolerance", "drill", "solve"):
        result = run(COMMANDS[name], cache, tmp_path)
        assert result.returncode in (0, 1), f"{name}: {result.stderr}"
        assert result.stderr.strip() == ""
        assert _stable(json.loads(result.stdout)) == clean_answers[name]


def test_work_order_with_a_spoiled_cache(tmp_path):
    base = tmp_path / "cache"
    _stale(_fill(base, tmp_path))
    result = run(["order", str(EXAMPLES / "job-fan-readings.toml"), "--out", str(tmp_path / "out"), "--json"],
                 str(base), tmp_path)
    assert result.returncode in (0, 1), result.stderr
    files = json.loads(result.stdout)["files"]
    assert files and all(Path(f).stat().st_size > 0 for f in files)


# -- the in-process caches of parsed units (toolkit/units.py) ------------------------------------------------

from hypothesis import given, settings, strategies as st  # noqa: E402

UNIT_TEXTS = ["kg", "g", "lb", "oz", "mm", "m", "in", "um", "rpm", "Hz", "g*mm", "oz*in", "kg*m", "mm/s",
              "in/s", "kg/m**3", "kg/m^3", "lb/in**3", "N", "lbf", "m/s**2", "m/s^2", "deg", "rad", "1/min"]


@settings(max_examples=150, deadline=None)
@given(number=st.one_of(st.integers(min_value=-10**12, max_value=10**12).map(str),
                        st.floats(min_value=-1e12, max_value=1e12, allow_nan=False).map(repr),
                        st.sampled_from(["0", "-0", "+5", "5.", ".5", "1e5", "1E-3", "007"])),
       space=st.sampled_from(["", " ", "  "]), unit=st.sampled_from(UNIT_TEXTS))
def test_plain_form_reads_like_pint(number, space, unit):
    # derived here (D): the fast reading of "NUMBER UNIT" must give what pint's own parser gives
    from toolkit.units import _parse, registry

    if unit[:1].isdigit() and not space:
        space = " "  # "01/min" is not a number and a unit: the reader refuses it (tests/test_units.py)
    text = f"{number}{space}{unit}"
    ours = _parse(text)
    theirs = registry().Quantity(text.replace("^", "**"))
    assert ours.units == theirs.units
    if number == "007":  # pint's expression parser reads "007" as 0; ours reads the digits, 7
        assert ours.magnitude == 7
        return
    assert ours.magnitude == pytest.approx(theirs.magnitude, rel=1e-15, abs=0)


def test_remembered_unit_parses_equal_fresh_ones():
    # the registry keeps each unit string's parse; the class's own method parses afresh every time
    from toolkit.units import registry

    ureg = registry()
    for text in UNIT_TEXTS + ["gram * millimeter", "kilogram / meter ** 3"]:
        text = text.replace("^", "**")
        first = ureg.parse_units_as_container(text)
        again = ureg.parse_units_as_container(text)
        fresh = type(ureg).parse_units_as_container(ureg, text)
        assert first is again and first == fresh, text
    q = ureg.Quantity(3.5, "oz*in")
    assert q.m_as("g*mm") == pytest.approx(3.5 * 720.077887375, rel=1e-12)  # 1 oz*in = 720.0779 g*mm (exact
    # definitions of the ounce and inch, 1959)
