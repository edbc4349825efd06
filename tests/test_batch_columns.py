"""Planner sheet columns for the one-plane rule, the static share, the rotor length and the key convention:
each fills its job key, and a bad cell names its column.

Check values: U_per = 1000 G m / Omega (ISO 21940-11:2016, 6.3.3); the one-plane rule gives one plane the
whole U_per (ISO 21940-11:2016, clause on one correction plane as reproduced in Bloch & Geitner, ch. 6);
the rest are behaviour checks (the same job with and without a column).
"""

from __future__ import annotations

import csv
import math
from pathlib import Path

import pytest

from toolkit.errors import BadInput
from toolkit.workorder.batch import COLUMNS, row_job, run_batch
from toolkit.workorder.build import build_order

ONE_PLANE = {
    "order": "PL-0100", "rotor": "Impeller (invented example)", "mass": "38 kg", "service_speed": "1480 rpm",
    "grade": "G 2.5", "bearing_span": "600 mm", "centre_of_mass": "200 mm", "reference": "keyway",
    "sense": "against rotation", "plane1_name": "hub", "plane1_position": "450 mm", "plane1_radius": "160 mm",
    "plane1_surface": "outer", "plane1_methods": "drill", "plane1_wall": "30 mm", "plane1_reading": "900 g*mm@40",
}
TWO_PLANES = dict(ONE_PLANE, order="PL-0101", plane2_name="back", plane2_position="520 mm",
                  plane2_radius="160 mm", plane2_surface="outer", plane2_methods="drill", plane2_wall="30 mm",
                  plane2_reading="700 g*mm@250")


def _row(base: dict, **cells) -> dict:
    return dict(base, **{k: v for k, v in cells.items()})


def test_the_new_columns_are_known():
    for column in ("one_plane_rule", "static_share", "rotor_length", "key_convention", "keyway_fill",
                   "key_marking"):
        assert column in COLUMNS


def test_one_plane_rule_column():
    u_per = 1000 * 2.5 * 38 / (1480 * 2 * math.pi / 60)   # ISO 21940-11:2016, 6.3.3: 612.95 g*mm
    whole = build_order(row_job(_row(ONE_PLANE), "sheet, row 2", Path(".")))
    # ISO 21940-11: one correction plane takes the whole U_per (the default)
    assert whole.planes[0].tolerance.u_per_g_mm == pytest.approx(u_per, rel=1e-4)
    statics = build_order(row_job(_row(ONE_PLANE, one_plane_rule="statics"), "sheet, row 2", Path(".")))
    assert statics.planes[0].tolerance.u_per_g_mm < whole.planes[0].tolerance.u_per_g_mm   # behaviour check
    with pytest.raises(BadInput, match=r"column one_plane_rule: 'halfway' is not allowed"):
        row_job(_row(ONE_PLANE, one_plane_rule="halfway"), "sheet, row 2", Path("."))


def test_rotor_length_column_fills_the_job_key():
    job = row_job(_row(ONE_PLANE, rotor_length="90 mm"), "sheet, row 2", Path("."))
    assert job.rotor_length.m_as("mm") == pytest.approx(90.0)
    with pytest.raises(BadInput, match=r"column rotor_length: .*no unit"):
        row_job(_row(ONE_PLANE, rotor_length="90"), "sheet, row 2", Path("."))


def test_static_share_column_is_read_as_a_number_and_changes_the_allowance():
    plain = build_order(row_job(_row(TWO_PLANES), "sheet, row 2", Path(".")))
    job = row_job(_row(TWO_PLANES, static_share="0.5"), "sheet, row 2", Path("."))
    assert job.static_share == 0.5
    shared = build_order(job)
    assert [p.tolerance.u_per_g_mm for p in shared.planes] != [p.tolerance.u_per_g_mm for p in plain.planes]
    for bad in ("half", "1.5"):
        with pytest.raises(BadInput, match=r"column static_share: .*is not allowed; give a fraction between 0 and 1"):
            row_job(_row(TWO_PLANES, static_share=bad), "sheet, row 2", Path("."))
    with pytest.raises(BadInput, match=r"column static_share: a static share needs two correction planes"):
        row_job(_row(ONE_PLANE, static_share="0.5"), "sheet, row 2", Path("."))


def test_key_columns_put_the_convention_on_the_order():
    job = row_job(_row(ONE_PLANE, key_convention="full-key"), "sheet, row 2", Path("."))
    order = build_order(job)
    assert (order.key_convention, order.keyway_fill, order.key_marking) == ("full-key", "key", "F")
    job = row_job(_row(ONE_PLANE, key_convention="half-key", keyway_fill="nothing", key_marking="H2"),
                  "sheet, row 2", Path("."))
    assert (job.key.fill, job.key.marking, job.key.marking_given) == ("nothing", "H2", True)
    assert any("does not follow the half-key convention" in w for w in job.key.warnings)
    with pytest.raises(BadInput, match=r"column key_convention: 'quarter-key' is not allowed"):
        row_job(_row(ONE_PLANE, key_convention="quarter-key"), "sheet, row 2", Path("."))
    with pytest.raises(BadInput, match=r"column key_convention: missing"):
        row_job(_row(ONE_PLANE, key_marking="H"), "sheet, row 2", Path("."))


def test_a_sheet_with_the_new_columns_runs(tmp_path):
    rows = [_row(ONE_PLANE, one_plane_rule="whole", rotor_length="90 mm", key_convention="half-key"),
            _row(TWO_PLANES, static_share="0.5", key_convention="no-key")]
    header = sorted({k for r in rows for k in r})
    sheet = tmp_path / "sheet.csv"
    with open(sheet, "w", encoding="utf-8", newline="") as handle:
        writer = csv.writer(handle)
        writer.writerow(header)
        writer.writerows([[r.get(h, "") for h in header] for r in rows])
    result = run_batch(sheet, tmp_path / "out")
    assert (result.rows, result.done, result.failures) == (2, 2, ())
