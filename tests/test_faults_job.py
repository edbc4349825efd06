"""Bad job files (toolkit/workorder/job.py): order and demo command lines, spoiled job files, extreme
quantities in every example job, malformed TOML named by line and column, control characters.

Behaviour checks only (the contract of exit statuses and one-line refusals, see tests/fault_support.py):
the generated values are not published figures, so no value here needs a source.
"""

from __future__ import annotations

import json
import re
import tempfile
from pathlib import Path

import pytest
from hypothesis import given, strategies as st

from fault_support import (EXAMPLES, JOBS, RUNS, SETTINGS, VALUE, _copy_companions, check, spoiled_text)


# -- demo, order: command lines that write files ---------------------------------------------------------------

ORDER_VALUES = st.one_of(VALUE, st.sampled_from(["xlsx", "pdf", "xlsx,pdf", "pdf,xlsx,pdf", "docx", "XLSX",
                                                 "xlsx,", ",", "xlsx;pdf"]))


@SETTINGS
@given(command=st.sampled_from(["demo", "order"]), fmt=ORDER_VALUES, job=st.one_of(VALUE, st.just("example")),
       out_kind=st.sampled_from(["fresh", "exists", "file", "weird"]), force=st.booleans())
def test_order_and_demo_command_lines(command, fmt, job, out_kind, force):
    with tempfile.TemporaryDirectory() as tmp:
        out = Path(tmp) / "out"
        if out_kind == "exists":
            out.mkdir()
            (out / "WO-2026-0117.xlsx").write_bytes(b"old")
        elif out_kind == "file":
            out.write_text("a file where the output folder should be")
        argv = [command]
        if command == "order":
            argv.append(str(EXAMPLES / "job-fan-readings.toml") if job == "example" else job)
        argv += ["--out", str(out) if out_kind != "weird" else str(out / "a\udcffb"), "--format=" + fmt, "--json"]
        if force:
            argv.append("--force")
        check(argv)


def test_examples_exist():
    assert JOBS and RUNS


@given(data=st.data(), which=st.integers(min_value=0, max_value=len(JOBS) - 1))
def test_spoiled_job_files(data, which):
    source = JOBS[which]
    content = data.draw(spoiled_text(source))
    with tempfile.TemporaryDirectory() as tmp:
        tmp = Path(tmp)
        _copy_companions(source, tmp)
        job = tmp / "job.toml"
        job.write_bytes(content)
        check(["order", str(job), "--out", str(tmp / "out"), "--format", "xlsx", "--json"])


_JOB_QUANTITY = re.compile(r'^(\s*[\w" .-]+=\s*")(-?[\d.]+)(\s*[A-Za-z][^"]*".*)$')


@pytest.mark.parametrize("source", JOBS, ids=lambda p: p.name)
def test_extreme_magnitudes_in_every_job_quantity(source, tmp_path):
    # every "NUMBER unit" value of every example job at the edges of the float range, one at a time
    lines = source.read_text(encoding="utf-8").splitlines()
    _copy_companions(source, tmp_path)
    job = tmp_path / "job.toml"
    count = 0
    for i, line in enumerate(lines):
        match = _JOB_QUANTITY.match(line)
        if not match:
            continue
        for extreme in ("1e300", "1e-300", "1.3e155"):
            count += 1
            changed = lines[:i] + [match.group(1) + extreme + match.group(3)] + lines[i + 1:]
            job.write_text("\n".join(changed) + "\n", encoding="utf-8")
            check(["order", str(job), "--out", str(tmp_path / f"out{count}"), "--format", "xlsx"])
    assert count >= 6  # the sweep did reach the job's quantities


@pytest.mark.parametrize("command", ["order", "solve"])
def test_malformed_toml_names_line_and_column(tmp_path, command):
    path = tmp_path / "broken.toml"
    path.write_text('# invented example\n[order]\nnumber = "A-1"\nrotor = fan rotor\n', encoding="utf-8")
    argv = [command, str(path)] + (["--out", str(tmp_path / "out")] if command == "order" else [])
    rc, out, err = check(argv)
    assert rc == 2
    # tomllib's own position of the error: line 4 ("rotor = fan rotor"), column 9 (the first bare word)
    assert re.search(r"line 4\b.*column 9\b", err), err
    assert str(path) in err


def test_nul_character_in_job_text(tmp_path):
    # TOML allows "\u0000" in a string; a spreadsheet cell cannot hold it. One line and exit 2, or the
    # character dropped from the work order: never an internal error.
    job = tmp_path / "job.toml"
    job.write_text((EXAMPLES / "job-fan-readings.toml").read_text(encoding="utf-8")
                   .replace('rotor = "Supply fan rotor', 'rotor = "Supply\\u0000fan rotor'), encoding="utf-8")
    rc, out, err = check(["order", str(job), "--out", str(tmp_path / "out"), "--json"])
    if rc != 2:
        assert "\x00" not in json.dumps(json.loads(out)["files"])
