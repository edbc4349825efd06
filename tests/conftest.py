"""Test set-up: the shared fault-injection helpers (tests/fault_support.py) import as ``fault_support``.

Behaviour checks only: nothing here holds a check value.
"""

import sys
from pathlib import Path

_HERE = str(Path(__file__).resolve().parent)
if _HERE not in sys.path:
    sys.path.insert(0, _HERE)
