"""The trial-mass suggestion at the edge of the speed range (toolkit/influence.py).

Behaviour checks only (the contract of exit statuses and one-line refusals, see tests/fault_support.py):
the generated values are not published figures, so no value here needs a source.
"""

from __future__ import annotations

from fault_support import (check)


def test_trial_suggestion_at_a_huge_speed():
    # found by test_spoiled_command_lines[solve] with 1,500 examples: 1.3e155 r/min squared overflowed; the
    # reader now refuses a speed above its bound (1e7 r/min), and at the bound the answer is a tiny but
    # computable trial mass (exit 0), never an internal error
    rc, out, err = check(["solve", "--bearing-mass", "200 kg", "--radius", "150 mm", "--speed", "1.3e155 rpm",
                          "--json"])
    assert rc == 2 and "speed" in err and "1e+07 rpm" in err
    rc, out, err = check(["solve", "--bearing-mass", "200 kg", "--radius", "150 mm", "--speed", "1e7 rpm",
                          "--json"])
    assert rc == 0
