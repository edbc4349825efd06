"""Job files: the examples load; every problem is reported at once with file, line, key, value and what is
allowed; key line numbers; readings as unbalance or as a mass at the radius."""

from pathlib import Path

import pytest
from hypothesis import given, settings, strategies as st

from toolkit.errors import BadInput
from toolkit.workorder.job import EXAMPLE, JobError, key_lines, load_job, parse_job

EXAMPLES = sorted((Path(__file__).resolve().parent.parent / "examples").glob("job-*.toml"))


def test_there_are_examples():
    assert len(EXAMPLES) >= 3


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.name)
def test_examples_load_and_say_they_are_invented(path):
    job = load_job(path)
    assert job.number and job.planes
    assert "invented example" in path.read_text(encoding="utf-8").lower()
    assert "invented" in job.order["rotor"].lower()


def test_all_problems_at_once_with_lines():
    bad = (EXAMPLE.replace('"412 kg"', "412")                       # line 6
           .replace('service_speed = "1480 rpm"', 'service_speed = "1480 kg"')
           .replace('methods = ["plate"]', 'methods = ["glue"]')
           .replace('sense = "against rotation"', 'sense = "clockwise"')
           .replace('[angles]', '[angles]\ncolour = "red"'))
    with pytest.raises(JobError) as info:
        parse_job(bad, "shop/job.toml")
    err = info.value
    assert len(err.problems) == 5, err.problems
    text = str(err)
    assert text.startswith("shop/job.toml: 5 problems in the job file: ")
    assert "line 6, rotor.mass: 412 has no unit; give a mass with its unit, e.g. '412 kg'" in text
    assert "line 7, rotor.service_speed: '1480 kg' is not a speed" in text
    assert "line 23, plane[2].methods: 'glue' is not a correction method; allowed: drill, plate, washers" in text
    assert "line 26, angles.colour: unknown key; allowed keys here: reference, sense" in text
    assert "line 28, angles.sense: 'clockwise' is not allowed; allowed: 'against rotation', 'with rotation'" in text
    assert "\n" not in text  # one line for the command line


def test_missing_tables_and_keys_are_named():
    with pytest.raises(JobError) as info:
        parse_job('[order]\nnumber = "1"\n', "j.toml")
    text = str(info.value)
    for key in ("order.rotor", "rotor: missing", "geometry: missing", "plane: missing", "angles: missing",
                "measurement: missing"):
        assert key in text, key


def test_not_toml_names_the_line():
    with pytest.raises(JobError, match=r"j.toml: 1 problem in the job file: not valid TOML .*line 2"):
        parse_job('[order]\nnumber = \n', "j.toml")


def test_reading_as_mass_uses_the_plane_radius():
    job = parse_job(EXAMPLE.replace('A = "21000 g*mm@40"', 'A = "70 g@40"'))
    amount, angle = job.measurement.readings["A"]
    # 70 g at the 300 mm correction radius is 21 000 g·mm (derived here (D): U = m·r)
    assert amount.m_as("g*mm") == pytest.approx(21000.0)
    assert angle == 40.0


def test_machine_showing_add_position_is_turned_to_the_heavy_spot():
    job = parse_job(EXAMPLE.replace("[measurement]\nkind = \"machine\"",
                                    "[measurement]\nkind = \"machine\"\nshows = \"add\""))
    # mass to add at 40 deg means the heavy spot is opposite, at 220 deg (DESIGN.md conventions, common practice)
    assert job.measurement.readings["A"][1] == pytest.approx(220.0)


def test_reading_for_an_unknown_plane_and_missing_plane():
    bad = EXAMPLE.replace('B = "16500 g*mm@200"', 'C = "1 g@3"')
    with pytest.raises(JobError) as info:
        parse_job(bad)
    text = str(info.value)
    assert "measurement.readings.C: no plane named 'C'; planes: A, B" in text
    assert "measurement.readings.B: missing" in text


def test_plate_plane_needs_a_width():
    with pytest.raises(JobError, match=r"plane\[2\].width: missing; a plane that allows plates needs the seat width"):
        parse_job(EXAMPLE.replace('width = "60 mm"\n', ""))


def test_runs_are_validated_by_the_solver_module_with_the_line():
    text = EXAMPLE.split("[measurement]")[0] + (
        '[measurement]\nkind = "runs"\nphase = "lag"\nsensors = ["s1", "s2"]\n'
        '[[measurement.run]]\nname = "original"\nreadings = ["1 mm/s@0"]\n'
        '[[measurement.run]]\nname = "t"\ntrial = { A = "10 g@0" }\nreadings = ["2 mm/s@0", "1 mm/s@3"]\n')
    with pytest.raises(JobError, match=r"measurement.run: run 'original': readings: 1 given for 2 sensors"):
        parse_job(text)


def test_defaults_are_recorded():
    job = parse_job(EXAMPLE)
    assert "rotor.material" in job.defaults_used and "shop.angle_step" in job.defaults_used
    assert "rotor.grade" not in job.defaults_used


def test_load_job_refusals(tmp_path):
    with pytest.raises(BadInput, match="no such job file"):
        load_job(tmp_path / "none.toml")
    raw = tmp_path / "latin1.toml"
    raw.write_bytes(b'[order]\nnumber = "caf\xe9"\n')
    with pytest.raises(BadInput, match=r"latin1.toml, line 2: not UTF-8 text"):
        load_job(raw)


def test_key_lines_nested_and_quoted():
    text = ('[order]\nnumber = "1"  # comment\n\n[[plane]]\nname = "a"\n[[plane]]\nname = "b"\n'
            '[measurement.readings]\n"b plane" = "1 g@0"\nplain = 2\n')
    lines = key_lines(text)
    assert lines[("order", "number")] == 2
    assert lines[("plane", 0, "name")] == 5
    assert lines[("plane", 1)] == 6 and lines[("plane", 1, "name")] == 7
    assert lines[("measurement", "readings", "b plane")] == 9
    assert lines[("measurement", "readings", "plain")] == 10


@settings(max_examples=40, deadline=None)
@given(st.lists(st.text(alphabet="abcdefgh", min_size=1, max_size=6), min_size=1, max_size=6, unique=True),
       st.integers(min_value=0, max_value=3))
def test_key_lines_of_any_array_of_tables(names, blanks):
    """Property: in a file of N [[plane]] tables, the i-th name sits where we wrote it."""
    text, expected, line = "", {}, 0
    for i, name in enumerate(names):
        text += "\n" * blanks + "[[plane]]\n" + f'name = "{name}"\n'
        line += blanks + 2
        expected[("plane", i, "name")] = line
    got = key_lines(text)
    for key, value in expected.items():
        assert got[key] == value


@settings(max_examples=40, deadline=None)
@given(st.floats(min_value=0.01, max_value=5000), st.floats(min_value=0, max_value=359.9))
def test_reading_units_are_interchangeable(grams, angle):
    """Property (unit invariance): a mass at the radius, the same unbalance in g·mm, and in oz·in agree."""
    as_mass = EXAMPLE.replace('A = "21000 g*mm@40"', f'A = "{grams!r} g@{angle!r}"')
    as_g_mm = EXAMPLE.replace('A = "21000 g*mm@40"', f'A = "{grams * 300.0!r} g*mm@{angle!r}"')
    as_oz_in = EXAMPLE.replace('A = "21000 g*mm@40"', f'A = "{grams * 300.0 / 720.0779!r} oz*in@{angle!r}"')
    values = [parse_job(t).measurement.readings["A"] for t in (as_mass, as_g_mm, as_oz_in)]
    # 1 oz·in = 720.0779 g·mm (international avoirdupois ounce and inch definitions)
    for amount, a in values:
        assert amount.m_as("g*mm") == pytest.approx(grams * 300.0, rel=1e-6)
        assert a == pytest.approx(angle % 360.0, abs=1e-9)


def test_control_characters_in_text_are_refused():
    bad = EXAMPLE.replace('number = "INV-0001"', 'number = "INV\\u001f0001"')
    with pytest.raises(JobError, match=r"line 3, order.number: 'INV\\x1f0001' contains a control character "
                                       r"\(U\+001F\); remove it"):
        parse_job(bad)
    # tab and line feed are ordinary text
    assert parse_job(EXAMPLE.replace('rotor = "invented test rotor"', 'rotor = "invented\\ttest\\nrotor"'))


def test_order_number_is_one_line():
    # the order number names the files and heads every page: a tab or line break in it is refused
    bad = EXAMPLE.replace('number = "INV-0001"', 'number = "INV\\n0001"')
    with pytest.raises(JobError, match=r"order.number: 'INV\\n0001' contains a tab or line break \(U\+000A\); "
                                       r"write it on one line"):
        parse_job(bad)


# -- defaults the order states (issue 11): date, balancing speed, and the mark of a value the job gave ---------

def _used(job_text: str) -> dict:
    from toolkit.workorder.build import build_order

    order = build_order(parse_job(job_text))
    return order, {s.name: s for s in order.settings}


def test_a_job_without_date_is_dated_today_and_says_so():
    import datetime

    before = datetime.date.today().isoformat()
    order, used = _used(EXAMPLE)  # EXAMPLE has no [order] date
    after = datetime.date.today().isoformat()
    day = order.ident.date.split()[0]
    assert day in {before, after}  # the clock's date, whichever side of midnight the build ran
    assert "today" in order.ident.date and "no date" in order.ident.date
    assert not used["order date"].given and used["order date"].value.startswith(day)
    dated, used = _used(EXAMPLE.replace('rotor = "invented test rotor"',
                                        'rotor = "invented test rotor"\ndate = "2026-11-30"'))
    assert dated.ident.date == "2026-11-30" and "order date" not in used


def test_balancing_speed_default_is_listed_as_the_service_speed():
    _order, used = _used(EXAMPLE)
    assert used["balancing speed"].value == "1480 r/min (the service speed; the job gives no balancing speed)"
    assert not used["balancing speed"].given
    _order, used = _used(EXAMPLE.replace('service_speed = "1480 rpm"',
                                         'service_speed = "1480 rpm"\nbalancing_speed = "600 rpm"'))
    assert used["balancing speed"].value == "600 r/min" and used["balancing speed"].given
    assert used["balancing speed"].mark == "job"


def test_a_grade_from_the_job_is_marked_as_the_jobs_value():
    _order, used = _used(EXAMPLE)  # grade = "G 6.3" in the job
    assert used["grade"].given and used["grade"].mark == "job"
    _order, used = _used(EXAMPLE.replace('grade = "G 6.3"\n', ""))
    # the default G 6.3 is common practice for general machinery (job.DEFAULTS, marked CP)
    assert not used["grade"].given and used["grade"].mark == "CP" and used["grade"].value == "G 6.3"


FAN = Path(__file__).resolve().parent.parent / "examples" / "job-fan-readings.toml"


def test_the_shop_names_its_drills_in_the_job():
    from toolkit.workorder.build import build_order

    text = FAN.read_text(encoding="utf-8")
    job = parse_job(text, str(FAN), FAN.parent)
    assert [d.size for d in job.shop.drills][:2] == ["6.0 mm", "8.0 mm"]
    order = build_order(job)
    assert all(op.radius_mm and ("20 mm" in op.description or op.kind != "hole") for op in order.operations)
    used = {s.name: s for s in order.settings}["drill set"]
    assert used.given and used.value.startswith("the job's list: 6.0 mm, 8.0 mm")
    # without a list the order drills from the basic set of its unit system, and says so
    plain = text.replace('drills = ["6 mm", "8 mm", "10 mm", "12 mm", "14 mm", "16 mm", "20 mm"]', "")
    order = build_order(parse_job(plain, str(FAN), FAN.parent))
    used = {s.name: s for s in order.settings}["drill set"]
    assert not used.given and used.mark == "CP"
    assert used.value == "the basic metric set (3, 4, 5, 6, 8, 10, 12, 14, 16, 18, 20, 22, 25 mm), the default for metric units"


def test_a_bad_drill_list_names_its_line_and_item():
    text = FAN.read_text(encoding="utf-8")
    line = 1 + text[:text.index('drills = ["6 mm"')].count("\n")
    bad = text.replace('"8 mm", "10 mm"', '"8 mm", "ten"')
    with pytest.raises(JobError) as info:
        parse_job(bad, "fan.toml", FAN.parent)
    # the library's error is about "drills 3" (the parameter, then the item): the key's third item, its line
    assert f"line {line}, shop.drilling.drills[3]: 'ten' is neither a size of the drill tables" in str(info.value)
    twice = text.replace('[shop]\n', '[shop]\ndrills = "metric"\n', 1)
    with pytest.raises(JobError, match="the drills are given twice"):
        parse_job(twice, "fan.toml", FAN.parent)
