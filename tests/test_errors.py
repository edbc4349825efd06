"""Errors that name their own parameters (toolkit/errors.py) and the faces that word them: the same
infeasible request through the library (the parameter's library name), the command line (its option) and a
job file (its key and line); values in the user's unit system; and no library message naming an option.

Behaviour checks only: no published check value here, so none needs a source.
"""

import ast
import pickle
import re
from pathlib import Path

import pytest

from toolkit.cli import main
from toolkit.errors import BadInput, Infeasible, OutputError, Worded, format_value, quantity_words, worded
from toolkit.fabricate.drilling import drill_correction
from toolkit.fabricate.plates import weld_plate

ROOT = Path(__file__).resolve().parent.parent
JOB = (ROOT / "examples" / "job-fan-readings.toml").read_text(encoding="utf-8")
FLAG = re.compile(r"(?<![\w-])--[a-z][a-z0-9-]*")


def _dashes(parameter: str) -> str:
    return "--" + parameter.replace("_", "-")


# -- the error itself ------------------------------------------------------------------------------------

def test_worded_names_parameters_and_quantities():
    e = Infeasible("{U} is more than the holes remove; raise {max_depth_ratio}", parameter="correction",
                   mentions=("max_depth_ratio",), quantities={"U": (2400.0, "g*mm")})
    assert str(e) == "correction: 2400 g·mm is more than the holes remove; raise max_depth_ratio"
    assert e.text() == "2400 g·mm is more than the holes remove; raise max_depth_ratio"
    shown = e.worded(_dashes, quantity_words("imperial"))
    assert shown == "--correction: 3.333 oz·in is more than the holes remove; raise --max-depth-ratio"


def test_fields_not_declared_stay_as_written():
    # a user's text that looks like a field is never replaced: only declared names are
    e = BadInput.about("material", "'{density}' is not a material name")
    assert str(e) == "material: '{density}' is not a material name"
    assert e.worded(_dashes) == "--material: '{density}' is not a material name"


def test_structure_survives_pickling():
    e = OutputError("o.pdf already exists; give {force} to overwrite it", mentions=("force",))
    back = pickle.loads(pickle.dumps(e))
    assert type(back) is OutputError and isinstance(back, OSError)
    assert back.worded(_dashes) == "o.pdf already exists; give --force to overwrite it"
    w = pickle.loads(pickle.dumps(Worded("give {static_share}", ("static_share",))))
    assert worded(w, _dashes) == "give --static-share" and str(w) == "give static_share"
    assert worded("plain text", _dashes) == "plain text"


def test_lengths_drop_trailing_zeros_unbalances_keep_four_figures():
    assert format_value(30.0, "mm") == "30 mm"
    assert format_value(50.0, "g*mm") == "50.00 g·mm"
    assert format_value(25.4, "mm", "in") == "1 in"  # 25.4 mm = 1 in exactly (the inch's definition)


# -- the same request through the three faces --------------------------------------------------------------

def _job(tmp_path, name: str, text: str) -> Path:
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


def _line_of(text: str, start: str) -> int:
    return next(i for i, line in enumerate(text.splitlines(), start=1) if line.startswith(start))


def _order_error(tmp_path, capsys, text: str) -> str:
    path = _job(tmp_path, "job.toml", text)
    assert main(["order", str(path), "--out", str(tmp_path / "out")]) == 2
    err = capsys.readouterr().err
    assert len(err.strip().splitlines()) == 1
    return err


def test_no_room_for_the_point_library_command_line_job(tmp_path, capsys):
    with pytest.raises(Infeasible) as caught:
        drill_correction("9800 g*mm", radius="180 mm", orientation="radial", material="steel", wall="3 mm")
    library = str(caught.value)
    assert "give a thicker wall, a flat-bottom tool (point_angle_deg 180)" in library
    assert not FLAG.search(library)

    assert main(["drill", "--unbalance", "9800 g*mm", "--radius", "180 mm", "--radial", "--material", "steel",
                 "--wall", "3 mm"]) == 2
    err = capsys.readouterr().err
    assert "give a thicker --wall, a flat-bottom tool (--point-angle 180)" in err

    text = JOB.replace('wall = "60 mm"', 'wall = "3 mm"').replace('max_depth = "45 mm"', "")
    err = _order_error(tmp_path, capsys, text)
    wall_line = _line_of(text, "wall = ")
    assert f"give a thicker plane[1].wall (line {wall_line}), a flat-bottom tool ([shop] point_angle 180)" in err
    assert not FLAG.search(err.split(": error: ", 1)[1])


def test_too_much_to_drill_library_command_line_job(tmp_path, capsys):
    with pytest.raises(Infeasible) as caught:
        drill_correction("900000 g*mm", radius="180 mm", orientation="radial", material="steel")
    assert "or raise max_depth_ratio if the rotor maker allows" in str(caught.value)
    assert caught.value.mentions == ("max_depth_ratio",)

    assert main(["drill", "--unbalance", "900000 g*mm", "--radius", "180 mm", "--radial",
                 "--material", "steel"]) == 2
    assert "or raise --max-depth-ratio if the rotor maker allows" in capsys.readouterr().err

    text = JOB.replace('hub = "9800 g*mm@318"', 'hub = "900000 g*mm@318"').replace('max_depth = "45 mm"', "")
    err = _order_error(tmp_path, capsys, text)
    ratio_line = _line_of(text, "max_depth_ratio = ")
    assert f"or raise [shop.drilling] max_depth_ratio (line {ratio_line}) if the rotor maker allows" in err
    assert "g·mm" in err and "oz·in" not in err

    imperial = text.replace('units = "metric"', 'units = "imperial"')
    err = _order_error(tmp_path, capsys, imperial)
    assert "1250 oz·in is more than" in err and "g·mm" not in err  # 900000 g·mm / 720.078 g·mm per oz·in


def test_plate_errors_in_the_unit_system_asked_for(capsys):
    argv = ["plate", "--unbalance", "240000 g*mm", "--radius", "100 mm", "--width", "30 mm", "--material",
            "steel", "--max-length", "60 mm", "--thickness", "10 mm"]
    with pytest.raises(Infeasible, match=r"240000 g·mm needs more .* within the 60 mm room \(max_length\)"):
        weld_plate("240000 g*mm", radius="100 mm", width="30 mm", material="steel", max_length="60 mm",
                   thickness="10 mm")
    assert main(argv) == 2
    metric = capsys.readouterr().err
    assert "240000 g·mm needs more" in metric and "within the 60 mm room (--max-length)" in metric
    assert main(argv + ["--units", "imperial"]) == 2
    imperial = capsys.readouterr().err
    # 240000 g·mm = 333.3 oz·in; 60 mm = 2.362 in; 30 mm = 1.181 in (1 oz·in = 720.078 g·mm, 1 in = 25.4 mm)
    assert "333.3 oz·in needs more" in imperial and "1.181 in wide" in imperial
    assert "within the 2.362 in room (--max-length)" in imperial and "g·mm" not in imperial


def test_washer_and_drill_errors_in_inch_pound_units(capsys):
    assert main(["washers", "--unbalance", "1 g*mm", "--radius", "100 mm", "--units", "imperial"]) == 2
    err = capsys.readouterr().err
    assert "oz·in is less than half of one" in err and "at 3.937 in" in err and "g·mm" not in err
    assert main(["drill", "--unbalance", "900000 g*mm", "--radius", "180 mm", "--radial", "--material", "steel",
                 "--units", "imperial"]) == 2
    err = capsys.readouterr().err
    assert "1250 oz·in is more than" in err and "g·mm" not in err


# -- no library message names a command-line option --------------------------------------------------------

def _library_modules():
    for path in sorted((ROOT / "toolkit").rglob("*.py")):
        rel = path.relative_to(ROOT).as_posix()
        if rel == "toolkit/cli.py" or rel.startswith(("toolkit/commands/", "toolkit/web/")):  # the faces
            continue
        yield rel


def _strings(tree):
    """Every string constant of a module except docstrings (which may explain the command line)."""
    docs = set()
    for node in ast.walk(tree):
        if isinstance(node, (ast.Module, ast.ClassDef, ast.FunctionDef, ast.AsyncFunctionDef)) and node.body \
                and isinstance(node.body[0], ast.Expr) and isinstance(node.body[0].value, ast.Constant):
            docs.add(id(node.body[0].value))
    for node in ast.walk(tree):
        if isinstance(node, ast.Constant) and isinstance(node.value, str) and id(node) not in docs:
            yield node


@pytest.mark.parametrize("module", list(_library_modules()))
def test_library_messages_name_no_option(module):
    tree = ast.parse((ROOT / module).read_text(encoding="utf-8"))
    found = [f"line {n.lineno}: {m.group()}" for n in _strings(tree) for m in FLAG.finditer(n.value)]
    assert not found, f"{module} names command-line options in its text: {found}"


def test_the_option_check_can_fail():
    tree = ast.parse('def f():\n    """Doc --force is fine."""\n    raise ValueError("give --force")\n')
    assert [FLAG.search(n.value).group() for n in _strings(tree) if FLAG.search(n.value)] == ["--force"]
