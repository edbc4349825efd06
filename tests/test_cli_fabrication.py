"""The drill, plate, washers and materials commands: JSON keys of the contract, exit codes, one-line errors,
cautions in the text output, and a light module import."""

import json
import subprocess
import sys

import pytest

from toolkit.cli import main


def _json(capsys, argv):
    code = main(argv + ["--json"])
    out = capsys.readouterr().out
    return code, json.loads(out)


def test_drill_json_keys(capsys):
    code, d = _json(capsys, ["drill", "--unbalance", "2400 g*mm", "--radius", "150 mm", "--axial",
                             "--diameter", "10 mm", "--material", "steel"])
    assert code == 0
    for key in ("holes", "diameter_mm", "depth_mm", "tip_depth_mm", "removed_mass_g", "achieved_g_mm",
                "angle_offsets_deg", "warnings"):
        assert key in d
    assert d["holes"] == 1 and d["diameter_mm"] == 10
    # references/fabrication.csv axial-hole (D): 10 mm shoulder at 100 mm removes 678.28 g*mm, so 2400 g*mm at
    # 150 mm needs L = 2400/678.28 * (100/150) * (10 + h/3) - h/3 ~ 24.95 mm, rounded to the 0.1 mm step
    assert d["depth_mm"] == pytest.approx(24.9, abs=1e-9)
    assert d["tip_depth_mm"] == pytest.approx(24.9 + 3.0043, abs=1e-3)
    assert d["limits_used"]["warn_depth_ratio"] == 3 and "common practice" in d["limits_used"]["mark"]


def test_drill_add_is_drilled_opposite_in_words(capsys):
    code = main(["drill", "--unbalance", "2400 g*mm@131", "--radius", "150 mm", "--radial", "--material", "steel",
                 "--action", "add"])
    out = capsys.readouterr().out
    assert code == 0
    assert "remove it at the heavy spot, 311° (= 131° + 180°)" in out
    assert "lock-out/tag-out" in out and "rotor maker" in out and "Cautions:" in out
    assert "limits used" in out and "common practice, overridable" in out


def test_drill_limit_override_is_reported(capsys):
    code, d = _json(capsys, ["drill", "--unbalance", "3000 g*mm", "--radius", "100 mm", "--axial",
                             "--diameter", "8 mm", "--material", "steel", "--max-holes", "1",
                             "--max-depth-ratio", "10", "--warn-depth-ratio", "8"])
    assert code == 0 and d["limits_used"]["max_depth_ratio"] == 10 and d["tip_depth_mm"] > 40


def test_drill_infeasible_one_line_with_alternative(capsys):
    code = main(["drill", "--unbalance", "3000 g*mm", "--radius", "100 mm", "--axial", "--diameter", "8 mm",
                 "--material", "steel", "--max-holes", "1"])
    err = capsys.readouterr().err
    assert code == 2 and err.count("\n") == 1 and "nearest" in err and "Traceback" not in err


def test_drill_bare_number_and_mass_without_radius(capsys):
    assert main(["drill", "--unbalance", "2400", "--radius", "150 mm", "--axial", "--material", "steel"]) == 2
    assert "has no unit" in capsys.readouterr().err
    assert main(["drill", "--unbalance", "16 g", "--radius", "150 mm", "--axial", "--material", "steel",
                 "--json"]) == 0
    assert json.loads(capsys.readouterr().out)["requested_g_mm"] == pytest.approx(2400)


def test_drill_malformed_shop_table(tmp_path, capsys):
    bad = tmp_path / "rack.csv"
    bad.write_text("size,diameter,unit,source\nA,6,mm,x\nB,,mm,x\n")
    assert main(["drill", "--unbalance", "2400 g*mm", "--radius", "150 mm", "--axial", "--material", "steel",
                 "--drills", str(bad)]) == 2
    assert "rack.csv, line 3, column 'diameter'" in capsys.readouterr().err


def test_drill_fixed_positions(capsys):
    code, d = _json(capsys, ["drill", "--unbalance", "2400 g*mm@20", "--radius", "150 mm", "--radial",
                             "--diameter", "8 mm", "--material", "steel", "--positions", "0,30,60,90"])
    assert code == 0 and sorted(h["angle_deg"] for h in d["hole_list"]) == [0, 30]


def test_plate_json_keys_and_imperial_text(capsys):
    code, d = _json(capsys, ["plate", "--unbalance", "38 g@307", "--radius", "620 mm", "--width", "40 mm",
                             "--material", "steel", "--shape", "rolled"])
    assert code == 0
    for key in ("thickness_mm", "width_mm", "length_mm", "mass_g", "weld_mass_g", "centroid_radius_mm",
                "achieved_g_mm"):
        assert key in d
    assert d["requested_g_mm"] == pytest.approx(38 * 620)
    code = main(["plate", "--unbalance", "38 g@307", "--radius", "620 mm", "--width", "40 mm", "--material",
                 "steel", "--units", "imperial", "--convexity", "0.3"])
    out = capsys.readouterr().out
    assert code == 0 and "oz·in" in out and "qualified procedure" in out and "convexity 0.3: given" in out


def test_plate_not_weldable_and_allowance_exit_1(capsys):
    assert main(["plate", "--unbalance", "2000 g*mm", "--radius", "300 mm", "--width", "30 mm",
                 "--material", "grey cast iron"]) == 2
    assert "not weldable" in capsys.readouterr().err
    assert main(["plate", "--unbalance", "200000 g*mm", "--radius", "300 mm", "--width", "30 mm",
                 "--material", "steel", "--thickness", "25 mm", "--allowance", "0.001 g*mm"]) == 1
    assert "NOT within" in capsys.readouterr().out


def test_washers_json_keys(capsys):
    code, d = _json(capsys, ["washers", "--unbalance", "2400 g*mm", "--radius", "150 mm", "--size", "M10"])
    assert code == 0
    for key in ("size", "count", "mass_g", "achieved_g_mm"):
        assert key in d
    assert d["size"] == "M10" and d["count"] == 4  # 4 x 3.573 g x 150 mm = 2144 g*mm is nearest (D)


def test_materials_json(capsys):
    code, d = _json(capsys, ["materials"])
    assert code == 0
    assert all({"name", "density_kg_m3", "source"} <= set(m) for m in d["materials"])
    assert main(["materials"]) == 0
    assert "common practice" in capsys.readouterr().out


def test_module_import_stays_light():
    code = ("import sys, toolkit.commands.fabrication; "
            "print(any(m in sys.modules for m in ('numpy', 'pint', 'openpyxl', 'reportlab')))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert out.strip() == "False"


def test_plate_weld_options_reach_the_plan(capsys):
    code, d = _json(capsys, ["plate", "--unbalance", "20000 g*mm", "--radius", "200 mm", "--width", "30 mm",
                             "--thickness", "10 mm", "--shape", "face", "--material", "steel", "--fillet", "4 mm",
                             "--convexity", "0.1", "--weld", "ends"])
    assert code == 0 and d["fillet_mm"] == 4 and d["convexity"] == 0.1 and d["weld_run"] == "ends"
    # derived (D): two end welds of 30 mm, leg 4 mm, 10 % convexity
    assert d["weld_mass_g"] == pytest.approx(7.85e-3 * 16 / 2 * 1.1 * 60)


def test_imperial_text_uses_inch_and_ounce(capsys):
    code = main(["drill", "--unbalance", "3.3 oz*in@40", "--radius", "6 in", "--axial", "--drills", "inch",
                 "--material", "1045", "--units", "imperial", "--action", "add"])
    out = capsys.readouterr().out
    assert code == 0
    assert "add 3.300 oz·in at 40°: remove it at the heavy spot, 220° (= 40° + 180°)" in out
    assert " in deep to the shoulder" in out and " oz" in out and " mm" not in out.split("Cautions:")[0]


def test_plate_shows_material_note_and_ce_guidance(capsys):
    code = main(["plate", "--unbalance", "38 g@307", "--radius", "620 mm", "--width", "40 mm", "--material",
                 "42CrMo4", "--shape", "rolled", "--ce", "0.72"])
    out = capsys.readouterr().out
    assert code == 0 and "low-alloy steel: weldable only with a qualified procedure" in out
    assert "CE 0.72: preheat" in out


def test_an_inch_shop_drills_with_inch_drills_by_default(capsys):
    # 1 in = 25.4 mm exactly (international yard and pound agreement, 1959): every inch drill's diameter is a
    # whole number of 1/64 in (ANSI B94.11M fractional sizes [H]), which no metric ladder size is here
    code, d = _json(capsys, ["drill", "--unbalance", "2 oz*in", "--radius", "6 in", "--axial", "--material",
                             "steel", "--units", "imperial"])
    assert code == 0
    assert d["drill"].endswith(" in")
    assert d["diameter_mm"] / 25.4 * 64 == pytest.approx(round(d["diameter_mm"] / 25.4 * 64), abs=1e-9)
    code, d = _json(capsys, ["drill", "--unbalance", "2 oz*in", "--radius", "6 in", "--axial", "--material",
                             "steel", "--units", "imperial", "--drills", "metric"])
    assert code == 0 and d["drill"].endswith(" mm")  # the shop's own choice wins


def test_drill_list_errors_name_the_option_and_the_item(capsys):
    # the library's error is about its parameter (drills) and the item (the second is 2): the command line
    # words it as --drills, a job as its key with the line (tests/test_build.py)
    base = ["drill", "--unbalance", "500 g*mm", "--radius", "100 mm", "--axial", "--drills"]
    assert main(base + ["6 mm,6 mm"]) == 2
    assert capsys.readouterr().err == ("counterpoise drill: error: --drills 2: '6 mm' repeats a diameter "
                                       "already in the list\n")
    assert main(base + ["6 mm,zz"]) == 2
    assert capsys.readouterr().err.startswith("counterpoise drill: error: --drills 2: 'zz' is neither a size")
