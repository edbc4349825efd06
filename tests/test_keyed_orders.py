"""Keyed rotors in the job file and on the work order: the [key] table, the key mismatch shared onto the
planes and corrected with the measured unbalance, the convention and marking on both exporters, and the
tolerance command's key options.

Check values: the key mismatch of the hand-worked example in docs/tour-assembly.md (derived here, D, from
the rectangular-bar formula written out step by step there); plane shares by the moment balance of a rigid
rotor (statics, derived here, D) computed in the test from the hand-worked parts, not from the library.
"""

from __future__ import annotations

import cmath
import io
import json
import math
from pathlib import Path

import openpyxl
import pytest
from hypothesis import given, settings, strategies as st
from pypdf import PdfReader

from toolkit.cli import main
from toolkit.export import pdf, xlsx
from toolkit.workorder.build import build_order
from toolkit.workorder.job import JobError, load_job, parse_job

EXAMPLE = Path(__file__).resolve().parent.parent / "examples" / "job-pump-keyed.toml"
TEXT = EXAMPLE.read_text(encoding="utf-8")

# docs/tour-assembly.md hand-worked example (derived here, D): steel 7.85e-3 g/mm^3, 14 mm wide key
RHO_W = 7.85e-3 * 14
PROTRUDING = RHO_W * 14 * (28.5 ** 2 - 24.0 ** 2) / 2        # +181.75 g*mm over 0..14 mm of the keyway
UNDER_HUB = RHO_W * 56 * ((28.5 ** 2 - 24.0 ** 2) - (28.8 ** 2 - 24.3 ** 2)) / 2   # -8.31 g*mm over 14..70 mm


def _shares(keyway_start: float, z1: float, z2: float) -> tuple[float, float]:
    """Signed shares (along the keyway's angle) of the two hand-worked parts in planes at z1 and z2, each part
    at its own axial centre: U_1 = U (z2 - z)/(z2 - z1), U_2 = U (z - z1)/(z2 - z1) (statics, D)."""
    parts = ((PROTRUDING, keyway_start + 7.0), (UNDER_HUB, keyway_start + 42.0))
    u1 = sum(u * (z2 - z) / (z2 - z1) for u, z in parts)
    u2 = sum(u * (z - z1) / (z2 - z1) for u, z in parts)
    return u1, u2


def _with_key(table: str) -> str:
    """The example with its [key] table replaced by ``table``."""
    head, rest = TEXT.split("\n[key]\n")
    return head + "\n" + table + "\n[angles]\n" + rest.split("\n[angles]\n")[1]


def test_the_example_is_invented_and_carries_the_key():
    job = load_job(EXAMPLE)
    assert "invented example" in TEXT.lower() and "invented" in job.order["rotor"].lower()
    assert (job.key.convention, job.key.fill, job.key.marking, job.key.component) == ("half-key", "half-key",
                                                                                      "H", "shaft")
    # docs/tour-assembly.md hand-worked example: 173.44 g*mm at the keyway's angle (derived here, D)
    assert job.key.result.amount_g_mm == pytest.approx(PROTRUDING + UNDER_HUB, rel=1e-9)
    assert PROTRUDING + UNDER_HUB == pytest.approx(173.44, abs=0.005)   # docs/tour-assembly.md, printed to 0.01


def test_key_shares_follow_statics_and_the_correction_covers_them():
    order = build_order(load_job(EXAMPLE))
    u1, u2 = _shares(420.0, 60.0, 340.0)   # statics (D), the planes and keyway of the example
    one, two = order.planes
    # plane I lies on the far side of the key's centre: its share is light at the keyway (heavy at 270°)
    assert (one.key_g_mm, one.key_deg) == (pytest.approx(abs(u1), rel=1e-9), pytest.approx(270.0))
    assert (two.key_g_mm, two.key_deg) == (pytest.approx(u2, rel=1e-9), pytest.approx(90.0))
    for plane in order.planes:
        measured = cmath.rect(plane.initial_g_mm, math.radians(plane.initial_deg))
        key = cmath.rect(plane.key_g_mm, math.radians(plane.key_deg))
        # the correction is for the measured unbalance and the key share together (vector sum, D)
        assert plane.correction_g_mm == pytest.approx(abs(measured + key), rel=1e-9)
        z = measured + key + sum(op.effect for op in plane.operations)
        assert plane.predicted_g_mm == pytest.approx(abs(z), abs=1e-6)
    assert order.passed
    assert (order.key_convention, order.keyway_fill, order.key_marking, order.key_marking_given) == (
        "half-key", "half-key", "H", True)
    assert order.key_unbalance["amount_g_mm"] == pytest.approx(PROTRUDING + UNDER_HUB)
    # each plane's key share against that plane's allowance: plane II's 226 g*mm exceeds its 125.5 g*mm
    assert [(c["where"], c["passed"]) for c in order.key_unbalance["checks"]] == [("I", True), ("II", False)]
    assert order.key_unbalance["passed"] is False
    text = " ".join(order.warnings)
    assert "check run reads about" in text                           # what the machine shows in this set-up
    assert "the key share alone exceeds the allowance" in text        # plane II: 226 against 125.5 g*mm
    assert "cut the key's part outside the hub" in text               # the key's own remedy is offered
    assert any("Keys and half-keys must be secured" in c for c in order.cautions)


def test_without_the_key_table_nothing_changes():
    order = build_order(parse_job(_with_key("")))
    assert order.key_convention == "" and order.key_unbalance is None
    assert all(p.key_g_mm is None for p in order.planes)
    assert all(p.correction_g_mm == p.initial_g_mm for p in order.planes)


def test_convention_without_geometry_is_printed_and_the_marking_is_a_setting():
    job = parse_job(_with_key('[key]\nconvention = "full-key"\n'))
    assert (job.key.fill, job.key.marking, job.key.marking_given, job.key.result) == ("key", "F", False, None)
    order = build_order(job)
    assert order.key_convention == "full-key" and order.key_marking == "F"
    setting = next(s for s in order.settings if s.name == "key marking")
    assert (setting.mark, setting.given) == ("M", False)   # marking letters from memory: overridable
    assert all(p.correction_g_mm == p.initial_g_mm for p in order.planes)
    pages = [p.extract_text() for p in PdfReader(io.BytesIO(pdf.to_bytes(order))).pages]
    first = " ".join(pages[0].split())
    assert "Key convention" in first and "full-key (ISO 21940-32)" in first and "the key in the keyway" in first
    assert "Key marking F (by convention)" in first


def test_both_exporters_print_the_convention_the_marking_and_the_mismatch():
    order = build_order(load_job(EXAMPLE))
    first = " ".join(PdfReader(io.BytesIO(pdf.to_bytes(order))).pages[0].extract_text().split())
    for needle in ("Key convention", "half-key (ISO 21940-32); a half-key in the keyway while balanced",
                   "Key marking H", "Key mismatch in service", "173.4 g·mm at 90°"):
        assert needle in first, needle
    ws = openpyxl.load_workbook(io.BytesIO(xlsx.to_bytes(order))).active
    cells = {ws.cell(row=r, column=1).value: ws.cell(row=r, column=3).value for r in range(1, ws.max_row + 1)}
    assert cells["Key convention"].startswith("half-key (ISO 21940-32)")
    assert cells["Key marking"] == "H"
    assert cells["Key mismatch in service"].startswith("173.4 g·mm at 90°")


@pytest.mark.parametrize("change, needle", [
    (('convention = "half-key"', 'convention = "quarter-key"'), "key.convention: 'quarter-key' is not allowed"),
    (('fill = "half-key"', 'fill = "grease"'), "key.fill: 'grease' is not allowed"),
    (('width = "14 mm"\n', ''), "key.width: missing; the key's geometry needs width"),
    (('height = "9 mm"', 'height = "9"'), "key.height: '9' has no unit"),
    (('keyway_length = "70 mm"', 'keyway_length = "70 mm"\nkey_length = "80 mm"'),
     "key.key_length: the key (80 mm from 420 mm) does not lie within the shaft keyway"),
    (('material = "carbon steel"', 'material = "carbon steel"\ncolour = "blue"'), "key.colour: unknown key"),
    (('mate = { convention = "half-key" }', 'mate = { convention = "half-key", size = 3 }'),
     "key.mate.size: unknown key"),
    (('component = "shaft"', 'component = "hub"\n'), None),
])
def test_key_table_problems_name_the_key_and_line(change, needle):
    text = TEXT.replace(*change)
    assert text != TEXT
    if needle is None:  # this rotor as the hub: the same joint seen from the other side is accepted
        job = parse_job(text, "keyed.toml")
        assert job.key.component == "hub" and job.key.result is not None
        return
    with pytest.raises(JobError) as info:
        parse_job(text, "keyed.toml")
    assert needle in str(info.value)
    assert "line " in str(info.value)


def test_a_run_without_its_key_needs_the_geometry():
    with pytest.raises(JobError, match=r"key.in_service: needs the key's geometry"):
        parse_job(_with_key('[key]\nconvention = "half-key"\nin_service = "nothing"\n'))


def test_order_command_refuses_a_bad_key_table_in_one_line(tmp_path, capsys):
    job = tmp_path / "bad.toml"
    job.write_text(TEXT.replace('convention = "half-key"', 'convention = "halfkey"'), encoding="utf-8")
    status = main(["order", str(job), "--out", str(tmp_path)])
    err = capsys.readouterr().err
    assert status == 2
    assert "key.convention" in err and "Traceback" not in err
    assert not list(tmp_path.glob("*.pdf"))


def test_tolerance_command_states_the_key_convention(capsys):
    base = ["tolerance", "--grade", "G2.5", "--mass", "30 kg", "--speed", "2950 rpm"]
    assert main(base + ["--key-convention", "half-key", "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["key"]["convention"] == "half-key" and data["key"]["fill"] == "half-key"
    assert data["key"]["marking"] == "H" and data["key"]["marking_mark"] == "M"
    assert main(base + ["--key-convention", "no-key", "--keyway-fill", "half-key", "--key-marking", "N"]) == 0
    out = capsys.readouterr().out
    assert "balanced to the no-key convention with a half-key in the keyway, marked N" in out
    assert "warning: --keyway-fill: a half-key does not follow the no-key convention" in out
    for argv, needle in ((["--key-convention", "quarter"], "--key-convention: 'quarter' is not allowed"),
                         (["--keyway-fill", "key"], "give --key-convention")):
        assert main(base + argv) == 2
        err = capsys.readouterr().err
        assert needle in err and len(err.strip().splitlines()) == 1


@settings(max_examples=25, deadline=None)
@given(z1=st.integers(-2000, 3000).map(lambda x: x / 10), gap=st.integers(200, 6000).map(lambda x: x / 10),
       angle=st.integers(0, 3599).map(lambda x: x / 10))
def test_key_shares_keep_the_resultant_and_the_moment(z1, gap, angle):
    """Statics (D): the planes' shares add up to the key's resultant and keep its moment about bearing A."""
    z2 = z1 + gap
    text = (TEXT.replace('position = "60 mm"', f'position = "{z1!r} mm"')
            .replace('position = "340 mm"', f'position = "{z2!r} mm"')
            .replace("keyway_angle = 90 ", f"keyway_angle = {angle!r} "))
    key = parse_job(text).key.result
    shares = [cmath.rect(s.amount_g_mm, math.radians(s.angle_deg)) for s in key.planes]
    resultant = cmath.rect(key.amount_g_mm, math.radians(key.angle_deg))
    scale = max(1.0, abs(resultant))
    assert abs(sum(shares) - resultant) <= 1e-9 * scale * (1 + abs(z1) + gap)
    moment = sum(z * s for z, s in zip((z1, z2), shares))
    assert abs(moment - resultant * key.axial_centre_mm) <= 1e-7 * scale * (1 + abs(z1) + gap) ** 2
