"""Bad runs files (toolkit/runs.py): spoiled runs files.

Behaviour checks only (the contract of exit statuses and one-line refusals, see tests/fault_support.py):
the generated values are not published figures, so no value here needs a source.
"""

from __future__ import annotations

import tempfile
from pathlib import Path

from hypothesis import given, strategies as st

from fault_support import (RUNS, check, spoiled_text)


@given(data=st.data(), which=st.integers(min_value=0, max_value=len(RUNS) - 1))
def test_spoiled_runs_files(data, which):
    content = data.draw(spoiled_text(RUNS[which]))
    with tempfile.TemporaryDirectory() as tmp:
        runs = Path(tmp) / "runs.toml"
        runs.write_bytes(content)
        check(["solve", str(runs), "--json"])
