"""Bad stored-coefficient files (toolkit/coefficients.py): spoiled JSON and checked fields.

Behaviour checks only (the contract of exit statuses and one-line refusals, see tests/fault_support.py):
the generated values are not published figures, so no value here needs a source.
"""

from __future__ import annotations

import json
import tempfile
from pathlib import Path

import pytest
from hypothesis import given, strategies as st

from fault_support import (EXAMPLES, SETTINGS, check)


@pytest.fixture(scope="module")
def coefficients(tmp_path_factory) -> Path:
    path = tmp_path_factory.mktemp("coeff") / "coefficients.json"
    rc, out, err = check(["solve", str(EXAMPLES / "runs-two-plane.toml"), "--save-coefficients", str(path),
                          "--json"])
    assert rc in (0, 1) and path.exists(), err
    return path


JSON_VALUE = st.one_of(st.none(), st.booleans(), st.integers(min_value=-10**30, max_value=10**30),
                       st.floats(allow_nan=True, allow_infinity=True), st.text(max_size=10),
                       st.lists(st.integers(), max_size=3), st.dictionaries(st.text(max_size=5), st.integers(),
                                                                            max_size=2))


def _spoil_json(draw, value, depth=0):
    """Replace one randomly chosen leaf or branch of a JSON document."""
    if depth > 6 or not isinstance(value, (dict, list)) or not value or draw(st.integers(0, 4)) == 0:
        return draw(JSON_VALUE)
    if isinstance(value, dict):
        key = draw(st.sampled_from(sorted(value)))
        if draw(st.integers(0, 5)) == 0:
            return {k: v for k, v in value.items() if k != key}
        return {**value, key: _spoil_json(draw, value[key], depth + 1)}
    i = draw(st.integers(0, len(value) - 1))
    return value[:i] + [_spoil_json(draw, value[i], depth + 1)] + value[i + 1:]


@SETTINGS
@given(data=st.data())
def test_spoiled_coefficient_files(coefficients, data):
    document = json.loads(coefficients.read_text(encoding="utf-8"))
    spoilt = _spoil_json(data.draw, document)
    text = json.dumps(spoilt)  # NaN and Infinity come out as JSON extensions: readers must refuse or cope
    if data.draw(st.booleans()):
        cut = data.draw(st.integers(min_value=0, max_value=len(text)))
        text = text[:cut]
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "c.json"
        path.write_bytes(text.encode("utf-8") + data.draw(st.sampled_from([b"", b"\xff", b"\x00"])))
        argv = ["solve", "--coefficients", str(path), "--json"]
        for reading in ("10 um@200", "8 um@40", "20 um@250", "15 um@80"):
            argv += ["--original", reading]
        check(argv)


@pytest.mark.parametrize("field, value", [
    ("planes", None), ("planes", "near"), ("sensors", [1, 2]), ("sensors", []), ("reading_unit", ["um"]),
    ("radius_mm", [310]), ("radius_mm", {"near": "310 mm"}), ("speed_rpm", "1480 rpm"), ("speed_rpm", -1),
])
def test_coefficient_file_fields_are_checked(coefficients, tmp_path, field, value):
    # found by test_spoiled_coefficient_files: "planes": null once ended in an internal error (TypeError)
    document = json.loads(coefficients.read_text(encoding="utf-8"))
    document[field] = value
    path = tmp_path / "c.json"
    path.write_text(json.dumps(document), encoding="utf-8")
    rc, out, err = check(["solve", "--coefficients", str(path), "--original", "10 um@200", "--original", "8 um@40",
                          "--original", "20 um@250", "--original", "15 um@80"])
    assert rc == 2
    assert field in err, err
