"""What the fabrication modules share (toolkit/fabricate/shared.py): a correction read as an unbalance, angles
normalised and compared, and the bracketed root finder.

Check values: 1 oz·in = 28.349523125 g x 25.4 mm = 720.0779 g·mm (the avoirdupois ounce and the inch by
definition, NIST SP 811, appendix B); the other values are behaviour checks, derived here.
"""

import pytest

from toolkit.errors import BadInput
from toolkit.fabricate.shared import correction_g_mm, describe_placement, norm_angle, offset_angle, solve_bracketed


def test_correction_as_unbalance_or_mass_at_radius():
    assert correction_g_mm("1 oz*in") == pytest.approx(720.0779, rel=1e-7)  # NIST SP 811, appendix B
    assert correction_g_mm("38 g", "620 mm") == pytest.approx(38 * 620)  # derived here: U = m r
    with pytest.raises(BadInput, match=r"correction: 38 g is a mass; give its radius too \(radius"):
        correction_g_mm("38 g")
    with pytest.raises(BadInput, match="correction: 2400 has no unit"):
        correction_g_mm(2400)


def test_angles():
    assert norm_angle(-30.0) == 330.0 and norm_angle(360.0) == 0.0
    assert offset_angle(10.0, 350.0) == 20.0 and offset_angle(180.0, 0.0) == -180.0


def test_placement_says_when_the_method_works_opposite():
    text = describe_placement("remove", "add", 2400.0, 131.0, 311.0, "remove it at the heavy spot,")
    assert text.startswith("correction given as add") and "311° (= 131° + 180°)" in text


def test_solver_brackets_or_refuses():
    assert solve_bracketed(lambda x: x ** 3 - 8, 0, 5) == pytest.approx(2, rel=1e-10)
    with pytest.raises(ValueError):
        solve_bracketed(lambda x: x * x + 1, -1, 1)
