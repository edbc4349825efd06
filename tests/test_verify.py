"""Tests of toolkit.verify: the six-point check value, recovery of synthetic residuals, warnings, errors."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from toolkit.errors import BadInput
from toolkit.units import Q_
from toolkit.verify import verify_residual

SIX = ["44.8790@0", "53.6268@60", "58.6368@120", "56.0268@180", "47.7210@240", "41.4108@300"]


def test_six_point_reference():
    # procedure: API Std 617 7th ed. Annex B (six positions); fit: docs/methods.md 1.9 (D); readings
    # synthesised from a known residual (D): residual 35.00 g*mm at 130.0 deg, rel 2e-4 (readings printed
    # to 6 digits)
    v = verify_residual("200 g*mm", SIX)
    assert v.residual.m_as("g*mm") == pytest.approx(35.00, rel=2e-4)
    assert v.residual_angle_deg == pytest.approx(130.0, abs=0.05)
    assert v.consistency == pytest.approx(1.0, abs=1e-6)
    assert "API Std 617" in v.source


def test_shortcut_underestimates_with_few_positions():
    # docs/methods.md 1.9: the (max - min)/(max + min) shortcut underestimates with few positions [H];
    # here the residual lies between two positions
    v = verify_residual("200 g*mm", SIX)
    assert v.shortcut.m_as("g*mm") < v.residual.m_as("g*mm")


def _synthetic(residual, phi_deg, test, k, angles):
    th = np.radians(angles)
    return list(k * np.abs(residual * np.exp(1j * math.radians(phi_deg)) + test * np.exp(1j * th)))


@settings(max_examples=150)
@given(st.floats(0.0, 0.7), st.floats(0.0, 359.9), st.floats(1.0, 1e5), st.floats(1e-3, 10.0),
       st.integers(3, 12))
def test_recovers_synthetic_residual(ratio, phi, test, k, n):
    # derived here (D), checks our implementation: readings built from a known residual are fitted back
    angles = [360.0 * i / n for i in range(n)]
    readings = _synthetic(ratio * test, phi, test, k, angles)
    v = verify_residual(Q_(test, "g*mm"), readings, angles)
    assert v.residual.m_as("g*mm") == pytest.approx(ratio * test, rel=1e-6, abs=1e-9 * test)
    if ratio > 1e-3:
        diff = (v.residual_angle_deg - phi + 180) % 360 - 180
        assert abs(diff) < 1e-4
        assert v.sensitivity == pytest.approx(k, rel=1e-6)


@given(st.floats(0.05, 0.7), st.floats(0.0, 359.9), st.sampled_from(["oz*in", "g*cm", "kg*m"]))
def test_unit_invariance(ratio, phi, unit):
    angles = [0, 60, 120, 180, 240, 300]
    readings = _synthetic(ratio * 200, phi, 200, 0.25, angles)
    a = verify_residual("200 g*mm", readings, angles)
    b = verify_residual(Q_(200, "g*mm").to(unit), readings, angles)
    assert b.residual.m_as("g*mm") == pytest.approx(a.residual.m_as("g*mm"), rel=1e-9)


def test_pass_fail_and_test_ratio_warning():
    ok = verify_residual("200 g*mm", SIX, allowed="150 g*mm")
    assert ok.passed is True and not ok.warnings
    fail = verify_residual("200 g*mm", SIX, allowed="30 g*mm")
    assert fail.passed is False
    # API Std 617, 7th ed., Annex B: test unbalance 1 to 2 times the allowed residual [S]
    assert any("6.67 x the allowed residual" in w and "1 to 2" in w for w in fail.warnings)


def test_noisy_readings_warn():
    noisy = ["44.8790@0", "63.6268@60", "58.6368@120", "46.0268@180", "47.7210@240", "41.4108@300"]
    v = verify_residual("200 g*mm", noisy)
    assert v.consistency < 0.9
    assert any("do not lie near the expected circle" in w for w in v.warnings)
    assert not any("circle" in w for w in verify_residual("200 g*mm", noisy, min_consistency=0.1).warnings)


def test_three_positions_warn():
    v = verify_residual("200 g*mm", ["44.8790@0", "58.6368@120", "47.7210@240"])
    assert any("no redundancy" in w for w in v.warnings)


def test_cautions_present():
    v = verify_residual("200 g*mm", SIX)
    assert any("Secure the test mass" in c for c in v.cautions)
    assert v.to_dict()["cautions"]


@pytest.mark.parametrize("test, readings, message", [
    ("200", SIX, "test_unbalance: '200' has no unit"),
    ("200 g", SIX, "test_unbalance: '200 g' is not a unbalance"),
    ("-5 g*mm", SIX, "greater than zero"),
    ("200 g*mm", SIX[:2], "the fit needs the test mass at 3 or more different angles"),
    ("200 g*mm", ["1@0", "2@0", "3@360"], "at 1 different angle"),
    ("200 g*mm", ["44.9"] + SIX[1:], "readings 1: '44.9' is not a vector"),
    ("200 g*mm", ["abc@0"] + SIX[1:], "readings 1: amount 'abc' is not a number"),
    ("200 g*mm", ["-4@0"] + SIX[1:], "zero or more"),
    ("200 g*mm", ["0@0", "0@120", "0@240"], "every reading is zero"),
    ("200 g*mm", "44.9@0", "one reading per test-mass position"),
])
def test_errors(test, readings, message):
    with pytest.raises(BadInput, match=message):
        verify_residual(test, readings)


def test_angles_count_mismatch():
    with pytest.raises(BadInput, match="3 readings but 2 angles"):
        verify_residual("200 g*mm", [1.0, 2.0, 3.0], [0, 120])
