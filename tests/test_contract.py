"""The command-line contract of DESIGN.md: every calculator's --json prints exactly one JSON object with the
fixed keys; the file-writing commands print the paths they wrote. Inputs are invented examples."""

import json
from pathlib import Path

import pytest

from toolkit.cli import main

EXAMPLES = Path(__file__).resolve().parent.parent / "examples"

CASES = [
    (["grades"], ["grades"], {"grades": ["grade_mm_s"]}),
    (["tolerance", "--grade", "G6.3", "--mass", "412 kg", "--speed", "1480 rpm", "--bearing-span", "900 mm",
      "--com-from-a", "400 mm"],
     ["grade_mm_s", "e_per_um", "u_per_g_mm", "planes"], {"planes": ["name", "u_per_g_mm"]}),
    (["solve", "--original", "4.20 mm/s@285", "--trial", "10 g@0", "--with-trial", "6.12 mm/s@251.5"],
     ["corrections", "influence", "condition_number", "predicted_residual", "warnings"],
     {"corrections": ["plane", "mass_g", "angle_deg", "action"]}),
    (["solve", str(EXAMPLES / "runs-two-plane.toml")], ["corrections"],
     {"corrections": ["plane", "mass_g", "angle_deg", "action"]}),
    (["split", "25 g@100", "--at", "90,135"], ["parts"], {"parts": ["angle_deg", "mass_g"]}),
    (["drill", "--unbalance", "2400 g*mm", "--radius", "150 mm", "--axial", "--diameter", "10 mm",
      "--material", "steel"],
     ["holes", "diameter_mm", "depth_mm", "tip_depth_mm", "removed_mass_g", "achieved_g_mm", "angle_offsets_deg",
      "warnings"], {}),
    (["plate", "--unbalance", "38 g", "--radius", "620 mm", "--thickness", "8 mm", "--width", "40 mm",
      "--material", "steel"],
     ["thickness_mm", "width_mm", "length_mm", "mass_g", "weld_mass_g", "centroid_radius_mm", "achieved_g_mm"], {}),
    (["washers", "--unbalance", "38 g", "--radius", "620 mm", "--size", "M12"],
     ["size", "count", "mass_g", "achieved_g_mm"], {}),
    (["materials"], ["materials"], {"materials": ["name", "density_kg_m3", "source"]}),
    (["verify", "--test", "200 g*mm", "--reading", "44.8790@0", "--reading", "53.6268@60", "--reading",
      "58.6368@120", "--reading", "56.0268@180", "--reading", "47.7210@240", "--reading", "41.4108@300",
      "--allowed", "60 g*mm"], ["residual_g_mm", "residual_angle_deg", "consistency", "passed"], {}),
]


@pytest.mark.parametrize("argv, keys, item_keys", CASES, ids=[" ".join(c[0][:2]) for c in CASES])
def test_json_keys(argv, keys, item_keys, capsys):
    status = main(argv + ["--json"])
    out = capsys.readouterr().out
    assert status == 0
    data = json.loads(out)  # exactly one JSON object: json.loads refuses trailing text
    assert isinstance(data, dict)
    for key in keys:
        assert key in data, f"{argv[0]} --json lacks {key!r}"
    for key, fields in item_keys.items():
        assert data[key], f"{argv[0]}: {key} is empty"
        for item in data[key]:
            for field in fields:
                assert field in item, f"{argv[0]}: an item of {key} lacks {field!r}"


def test_corrections_say_add_or_remove(capsys):
    main(["solve", str(EXAMPLES / "runs-two-plane.toml"), "--json"])
    actions = {c["action"] for c in json.loads(capsys.readouterr().out)["corrections"]}
    assert actions <= {"add", "remove"} and actions


@pytest.mark.parametrize("argv", [["demo"], ["order", str(EXAMPLES / "job-fan-readings.toml")],
                                  ["batch", str(EXAMPLES / "planner.csv")]])
def test_writing_commands_print_the_paths_they_wrote(argv, tmp_path, capsys):
    status = main(argv + ["--out", str(tmp_path)])
    out = capsys.readouterr().out
    assert status == 0
    written = sorted(p for p in tmp_path.rglob("*") if p.is_file())
    assert written, "nothing written"
    for path in written:
        assert str(path.relative_to(tmp_path)) in out or str(path) in out
