"""Malformed readings for the residual verification (toolkit/verify.py).

Behaviour checks only (the contract of exit statuses and one-line refusals, see tests/fault_support.py):
the generated values are not published figures, so no value here needs a source.
"""

from __future__ import annotations

import pytest


@pytest.mark.parametrize("bad", [[], (1.0,), ("1", 30), (float("nan"), 30), (-1.0, 30), (True, 30), None])
def test_verify_refuses_malformed_reading_pairs(bad):
    # found by this file through "--reading=--", which once reached verify_residual as [] (IndexError)
    from toolkit import BadInput
    from toolkit.verify import verify_residual

    with pytest.raises(BadInput, match=r"readings 1: .* is not a reading"):
        verify_residual("200 g*mm", [bad, "53.63@60", "58.64@120"])
