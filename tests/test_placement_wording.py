"""Where a correction goes, in words: each of drill, plate and washers says it once, for a correction given
as add or as remove, without a doubled word ("at at")."""

import re

import pytest

from toolkit.cli import main

BASE = {
    "drill": ["drill", "--unbalance", "2400 g*mm@131", "--radius", "150 mm", "--axial", "--material", "steel"],
    "plate": ["plate", "--unbalance", "38 g@131", "--radius", "620 mm", "--width", "40 mm",
              "--material", "steel"],
    "washers": ["washers", "--unbalance", "2400 g*mm@131", "--radius", "150 mm"],
}


@pytest.mark.parametrize("command", sorted(BASE))
@pytest.mark.parametrize("action", ["add", "remove"])
def test_placement_line_has_no_doubled_word(capsys, command, action):
    code = main(BASE[command] + ["--action", action])
    out = capsys.readouterr().out
    assert code in (0, 1), out
    first = out.splitlines()[0]
    assert not re.search(r"\b(\w+) \1\b", first), first


def test_drill_remove_as_given_names_the_heavy_spot_once(capsys):
    # common practice, no source: holes remove mass at the heavy spot, so "remove at 131°" is drilled at 131°
    assert main(BASE["drill"] + ["--action", "remove"]) == 0
    first = capsys.readouterr().out.splitlines()[0]
    assert first == "Drill: remove 2400 g·mm at the heavy spot, 131°"
