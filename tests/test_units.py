"""Units: parsing, dimension checks, the speed reading, output systems and the registry cache."""

import os
import re
import subprocess
import sys
from pathlib import Path

import pytest
from hypothesis import given, strategies as st

from toolkit import BadInput
from toolkit import units
from toolkit.units import Q_, magnitude, quantity, speed_rpm


# Conversion factors; source: the definitions of the international inch and avoirdupois ounce and pound.
def test_ounce_inch_in_gram_millimetre():
    # 1 oz = 28.349523125 g, 1 in = 25.4 mm (international definitions, 1959) -> 720.0779 g*mm
    assert magnitude("1 oz*in", "unbalance", "g*mm") == pytest.approx(720.0779, rel=1e-6)


def test_pound_in_kilogram():
    # 1 lb = 0.45359237 kg exactly (international yard and pound agreement, 1959)
    assert magnitude("1 lb", "mass", "kg") == pytest.approx(0.45359237, rel=1e-12)


@pytest.mark.parametrize("text, kind, unit, expected", [
    ("412 kg", "mass", "kg", 412.0),
    ("1480 rpm", "speed", None, 1480.0),
    ("3.5 oz*in", "unbalance", "g*mm", 3.5 * 720.077887375),
    ("6350 g*mm", "unbalance", "g*mm", 6350.0),
    ("6350 g·mm", "unbalance", "g*mm", 6350.0),
    ("12 µm", "displacement", "um", 12.0),
    ("7850 kg/m^3", "density", "kg/m**3", 7850.0),
    ("7850 kg/m3", "density", "kg/m**3", 7850.0),
])
def test_parse_accepted_forms(text, kind, unit, expected):
    assert magnitude(text, kind, unit) == pytest.approx(expected, rel=1e-12)


@pytest.mark.parametrize("text, expected", [
    ("1480 rpm", 1480.0),
    ("1480 r/min", 1480.0),
    ("50 Hz", 3000.0),      # a shop's 50 Hz is 50 revolutions per second
    ("50 1/s", 3000.0),
    ("25 r/s", 1500.0),
    ("314.1592653589793 rad/s", 3000.0),
])
def test_speed_reads_frequency_as_revolutions(text, expected):
    assert speed_rpm(text) == pytest.approx(expected, rel=1e-12)


@pytest.mark.parametrize("value, message", [
    (412, r"--mass: 412 has no unit; give a mass with its unit, e\.g\. '412 kg'"),
    ("412", r"--mass: '412' has no unit; give a mass"),
    ("", r"--mass: empty; give a mass"),
    ("412 furlongs", r"--mass: '412 furlongs' is not a mass"),
    ("412 m", r"--mass: '412 m' is not a mass"),
    ("412 kgg", r"--mass: cannot read '412 kgg' as a mass"),
    ("nan kg", r"--mass: 'nan kg' is not a finite number"),
    ("inf kg", r"--mass: 'inf kg' is not a finite number"),
    ("-5 kg", r"--mass: -5 kg must be greater than zero"),
    ("0 kg", r"--mass: 0 kg must be greater than zero"),
    ("x" * 300, r"--mass: value too long"),
    (None, r"--mass: None is not a quantity"),
])
def test_refusals_name_the_option_and_what_to_give(value, message):
    with pytest.raises(BadInput, match=message):
        quantity(value, "mass", "--mass", positive=True)


def test_quantity_objects_pass_through_and_keep_units():
    q = Q_(3.5, "lb")
    assert quantity(q, "mass", "m") is q


@given(st.floats(min_value=1e-3, max_value=1e6, allow_nan=False))
def test_unit_invariance_of_parsing(x):
    # the same unbalance in oz*in and g*mm gives the same magnitude (1 oz*in = 720.077887375 g*mm)
    a = magnitude(f"{x} oz*in", "unbalance", "g*mm")
    b = magnitude(f"{x * 720.077887375} g*mm", "unbalance", "g*mm")
    assert a == pytest.approx(b, rel=1e-12)


def test_arrays_convert_once():
    import numpy as np

    masses = Q_(np.array([1.0, 2.0, 3.0]), "lb")
    assert magnitude(masses, "mass", "kg") == pytest.approx([0.45359237, 0.90718474, 1.36077711])
    with pytest.raises(BadInput, match="must be greater than zero"):
        magnitude(Q_(np.array([1.0, -2.0]), "kg"), "mass", "kg", positive=True)
    with pytest.raises(BadInput, match="not a finite number"):
        magnitude(Q_(np.array([1.0, np.nan]), "kg"), "mass", "kg")


def test_unit_system_names():
    assert units.unit_system("Metric") is units.METRIC
    with pytest.raises(BadInput, match="units: 'si' is not a unit system; use 'metric', 'imperial' or 'inch-gram'"):
        units.unit_system("si")


def test_one_registry_in_the_whole_package():
    # STYLE.md: no UnitRegistry( anywhere but toolkit/units.py
    import toolkit

    root = Path(toolkit.__file__).parent
    offenders = [p for p in root.rglob("*.py")
                 if p.name != "units.py" and "UnitRegistry(" in p.read_text(encoding="utf-8")]
    assert offenders == []


def _run_python(code, env):
    full = dict(os.environ, **env)
    return subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, env=full, timeout=120)


CODE = "from toolkit.units import magnitude; print(magnitude('1 oz*in', 'unbalance', 'g*mm'))"


def test_cache_folder_is_per_environment(tmp_path):
    out = _run_python("from toolkit.units import cache_folder; print(cache_folder())",
                      {"COUNTERPOISE_CACHE_DIR": str(tmp_path)})
    folder = Path(out.stdout.strip())
    assert folder.parent == tmp_path and folder.name.startswith("pint-")


@pytest.mark.parametrize("breakage", ["garbage", "unwritable", "file-in-the-way"])
def test_broken_cache_still_works(tmp_path, breakage):
    base = tmp_path / "cache"
    # first run fills the cache
    assert _run_python(CODE, {"COUNTERPOISE_CACHE_DIR": str(base)}).returncode == 0
    folder = next(base.iterdir())
    if breakage == "garbage":
        for path in folder.rglob("*"):
            if path.is_file():
                path.write_bytes(b"\x00not a pickle\xff" * 10)
    elif breakage == "unwritable":
        os.chmod(folder, 0o500)
    else:
        import shutil

        shutil.rmtree(folder)
        folder.write_text("a file where the cache folder should be")
    try:
        out = _run_python(CODE, {"COUNTERPOISE_CACHE_DIR": str(base)})
    finally:
        if folder.is_dir():
            os.chmod(folder, 0o700)
    assert out.returncode == 0, out.stderr
    assert float(out.stdout) == pytest.approx(720.0779, rel=1e-6)


def test_format_number_keeps_significant_figures():
    assert units.format_number(2005.35) == "2005"
    assert units.format_number(15.9155) == "15.92"
    assert units.format_number(-0.5) == "-0.5000"
    assert units.format_number(float("nan")) == "nan"
    assert units.format_number(2.5e9) == "2.500e+09"


# -- the strict reader: one number and one unit ----------------------------------------------------------------

@pytest.mark.parametrize("text, kind, unit, expected", [
    ("1 mil", "displacement", "um", 25.4),          # 1 mil = 0.001 in, 1 in = 25.4 mm exactly (NIST SP 811, B.8)
    ("3 mils", "length", "mm", 0.0762),             # same definition
    ("1 g*in", "unbalance", "g*mm", 25.4),           # 1 in = 25.4 mm exactly (NIST SP 811, B.8)
    ("2 g·in", "unbalance", "g*mm", 50.8),           # same
    ("3 m*s**-2", "acceleration", "m/s**2", 3.0),    # derived here (D): the same unit written with a power
    ("7.85 g/cm^3", "density", "kg/m**3", 7850.0),   # 1 g/cm^3 = 1000 kg/m^3 (SI prefixes, exact)
    ("007 kg", "mass", "kg", 7.0),                   # derived here (D): digits read as written
    ("1.48e3 mm", "length", "mm", 1480.0),           # derived here (D)
    ("+.5 kg", "mass", "kg", 0.5),                   # derived here (D)
])
def test_reader_accepts_the_documented_grammar(text, kind, unit, expected):
    assert magnitude(text, kind, unit) == pytest.approx(expected, rel=1e-12)


@pytest.mark.parametrize("text", ["1800 RPM", "1800 Rpm", "1800 R/MIN", "1800 r / min", "30 HZ", "30 rps", "30 RPS"])
def test_speed_names_in_any_case(text):
    # 30 rev/s = 1800 r/min (a minute is 60 s)
    assert speed_rpm(text) == pytest.approx(1800.0, rel=1e-12)


@pytest.mark.parametrize("text, reason", [
    ("1 480 rpm", "separators inside the number"),
    ("1,480 rpm", "separators inside the number"),
    ("1'480 rpm", "separators inside the number"),
    ("1_480 rpm", "separators inside the number"),
    ("1\u00a0480 rpm", "separators inside the number"),
    ("1480 rpm 2", "'2' after the unit"),
    ("1480 rpm@2", "'@' belongs in a vector"),
    ("1480 rpm%", "'%' is not a unit"),
    ("1480 percent*rpm", "'percent' is not a unit of measure"),
    ("9**9**9 rpm", "arithmetic on the number"),
    ("2*740 rpm", "arithmetic on the number"),
    ("(9**9)**(9**9) rpm", "does not start with a number"),
    ("1480 rpm^99", "after the unit"),
    ("1480 r p m", "unit 'r' is not known"),
    ("١٤٨٠ rpm", "does not start with a number"),
])
def test_reader_refuses_everything_else_with_the_reason(text, reason):
    with pytest.raises(BadInput, match=r"^--speed: cannot read .*" + re.escape(reason)):
        speed_rpm(text, "--speed")


def test_angle_units_only_in_speeds():
    with pytest.raises(BadInput, match="angle unit"):
        quantity("412 kg*deg", "mass", "--mass")
    assert speed_rpm("360 deg/s") == pytest.approx(60.0, rel=1e-12)  # one turn per second = 60 r/min


def test_reader_never_uses_pints_expression_parser(monkeypatch):
    # the text is read by our grammar alone: with pint's expression parser broken every form still reads
    ureg = units.registry()

    def broken(*args, **kwargs):
        raise AssertionError("pint's expression parser was called")

    monkeypatch.setattr(ureg, "parse_expression", broken)
    assert magnitude("3.5 oz*in", "unbalance", "g*mm") == pytest.approx(3.5 * 720.077887375, rel=1e-12)
    assert speed_rpm("50 1/s") == pytest.approx(3000.0)
    with pytest.raises(BadInput):
        quantity("9**9**9 kg", "mass")


@pytest.mark.parametrize("kind", sorted(units.KINDS))
def test_every_kind_has_bounds_with_room_for_zero(kind):
    k = units.KINDS[kind]
    assert 0 < k.lower < 1 < k.upper < 1e300
    unit = k.kernel_unit.replace("**", "^")
    assert quantity(f"0 {unit}", kind).magnitude == 0
    assert quantity(f"{k.lower:g} {unit}", kind) is not None and quantity(f"{k.upper:g} {unit}", kind) is not None
    with pytest.raises(BadInput, match=r"below the smallest .* \[CP\]"):
        quantity(f"{k.lower / 10:g} {unit}", kind)
    with pytest.raises(BadInput, match=r"above the largest .* \[CP\]"):
        quantity(f"{k.upper * 10:g} {unit}", kind)


def test_explicit_bounds_apply_to_quantities_too():
    with pytest.raises(BadInput, match=r"--step: .* below the smallest step accepted, 0.01 mm"):
        magnitude(Q_(1e-320, "mm"), "length", "mm", "--step", bounds=("0.01 mm", "100 mm"), what="step")
    assert magnitude("2 mm", "length", "mm", bounds=("0.01 mm", "100 mm")) == 2


def test_threads_asking_for_the_registry_at_once_get_one_registry(monkeypatch):
    # the browser face reads quantities in a thread pool; two registries' units cannot be combined
    import threading
    import time

    from toolkit import units

    built = []

    def slow_build():
        time.sleep(0.05)  # a registry takes a while to build: long enough for the other threads to ask
        built.append(object())
        return built[-1]

    monkeypatch.setattr(units, "_REGISTRY", None)
    monkeypatch.setattr(units, "_build_registry", slow_build)
    monkeypatch.setattr(units, "_remember_unit_parses", lambda reg: reg)
    got = []
    threads = [threading.Thread(target=lambda: got.append(units.registry())) for _ in range(8)]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    assert len(built) == 1 and all(g is built[0] for g in got)


def test_remembered_conversions_are_pints_to_the_bit():
    """``m_as`` and ``to`` reuse a kept factor; each result is the one pint's own method gives (the
    reference: pint's unpatched ``PlainQuantity.m_as``), offset units and refused conversions included."""
    import numpy as np
    import pint
    from pint.facets.plain.quantity import PlainQuantity

    from toolkit.units import Q_, registry

    cases = [(412.0, "kg", "g"), (3, "oz*in", "g*mm"), (1480.0, "rpm", "rad/s"), (2.5, "in", "mm"),
             (7, "mm", "mm"), (0.1, "lbf", "N"), (np.array([1.0, 2.5, 1e-9]), "g*in", "g*mm"), (20.0, "degC", "K")]
    for _repeat in range(2):  # the second time from the kept factors
        for value, unit, target in cases:
            q = Q_(value, unit)
            got, reference = q.m_as(target), PlainQuantity.m_as(q, target)
            assert type(got) is type(reference)
            assert np.array_equal(got, reference)
            moved = q.to(target)
            assert np.array_equal(moved.magnitude, reference) and str(moved.units) == str(q.to(target).units)
        with pytest.raises(pint.DimensionalityError):
            Q_(1.0, "kg").m_as("mm")
        # a quantity as the target: its units count, and 1 m equals 1000 mm as a value (never one key)
        assert Q_(2.0, "m").m_as(Q_(1, "m")) == 2.0 and Q_(2.0, "m").m_as(Q_(1000, "mm")) == 2000.0
        assert Q_(2.0, "m").m_as(registry().Unit("mm")) == 2000.0
