"""Fabrication at the edges (toolkit/fabricate/): fixed hole positions, absurd radii for holes and
rolled plates, radial holes on a radius smaller than every drill.

Behaviour checks only (the contract of exit statuses and one-line refusals, see tests/fault_support.py):
the generated values are not published figures, so no value here needs a source.
"""

from __future__ import annotations

import pytest

from fault_support import (check)


def test_fixed_positions_beyond_the_limit_give_the_true_reason():
    # 3000 g·mm split onto 340° and 20° needs about 1596 g·mm per 8 mm hole at 100 mm, more than one hole
    # removes at 5·d (derived here (D) from the drill command's own figure, 1515 g·mm); the refusal must say
    # "more", not that the request is less than the drill's point removes.
    rc, out, err = check(["drill", "--unbalance", "3000 g*mm", "--radius", "100 mm", "--axial", "--diameter",
                          "8 mm", "--density", "7850 kg/m^3", "--positions", "340,20"])
    assert rc == 2
    assert "less than" not in err, err
    # the most the pair removes is one hole's limit over the larger share, times the whole: 3000 * 1515 / 1596
    assert "is more than the 8 mm holes can remove" in err, err


@pytest.mark.parametrize("radius", ["1e300 mm", "1e-300 mm"])
def test_absurd_radius_for_holes(radius):
    # found while fixing the case above: a pitch that rounds to nothing divided by zero
    rc, out, err = check(["drill", "--unbalance", "2400 g*mm", "--radius", radius, "--axial", "--material",
                          "steel"])
    assert rc == 2


@pytest.mark.parametrize("surface", ["outer", "inner"])
@pytest.mark.parametrize("radius", ["36028797018964.0m", "1e300 mm"])
def test_rolled_plate_on_an_absurd_radius(radius, surface):
    # found by test_spoiled_command_lines[plate] with 800 examples: Ro² - R² cancelled to 0, then 0/0
    check(["plate", "--unbalance", "38 g@307", "--radius", radius, "--width", "40 mm", "--material", "steel",
           "--shape", "rolled", "--surface", surface])


def test_rolled_plate_centroid_unchanged_on_shop_radii():
    # derived here (D): the factored centroid formula equals the textbook |Ro³ - R³| / |Ro² - R²| form for
    # shop-sized plates (annular sector centroid, 2/3·sin(a)/a·(Ro³ - R³)/(Ro² - R²))
    import math

    from toolkit.fabricate.plates import _plate_kernel

    for R, t, w, b, surface in [(620.0, 6.0, 40.0, 34.0, "outer"), (150.0, 3.0, 20.0, 60.0, "inner"),
                                (2000.0, 25.0, 80.0, 300.0, "outer")]:
        Ro = R + t if surface == "outer" else R - t
        alpha = b / (2 * R)
        textbook = (2 / 3) * math.sin(alpha) / alpha * abs(Ro ** 3 - R ** 3) / abs(Ro ** 2 - R ** 2)
        mass, rbar = _plate_kernel("rolled", surface, R, t, w, b, 0.00785)
        assert rbar == pytest.approx(textbook, rel=1e-12)
        assert mass == pytest.approx(0.00785 * w * alpha * abs(Ro ** 2 - R ** 2), rel=1e-12)


@pytest.mark.parametrize("radius", ["1 mm", "1e-6 mm"])  # 1e-6 mm: the smallest length the reader takes
def test_radial_holes_on_a_radius_smaller_than_every_drill(radius):
    # found by an extreme-magnitude sweep of the example jobs: no drill fitted, then an IndexError (exit 3)
    rc, out, err = check(["drill", "--unbalance", "2400 g*mm", "--radius", radius, "--radial", "--material",
                          "steel"])
    assert rc == 2 and "smaller than the" in err
