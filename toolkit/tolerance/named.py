"""``NAME=VALUE`` items (``"I=-120 mm"``, ``"A=206 kg"``, ``"I=180 g*mm@40"``).
"""

from __future__ import annotations

import re

from toolkit.errors import BadInput

_NAME = re.compile(r"^[A-Za-z0-9][A-Za-z0-9 _.\-]{0,39}$")


def parse_named(text, kind: str, option: str):
    """Split ``NAME=VALUE`` (``"I=-120 mm"``, ``"A=206 kg"``, ``"I=180 g*mm@40"``); return (name, value
    text). Names are 1-40 letters, digits, spaces, ``_``, ``.`` or ``-``, starting with a letter or digit.

    >>> parse_named("I = -120 mm", "plane", "--plane")
    ('I', '-120 mm')
    """
    if not isinstance(text, str) or "=" not in text:
        raise BadInput(f"{option}: {text!r} is malformed; write NAME=VALUE, e.g. "
                       f"{_NAMED_EXAMPLES.get(kind, 'I=-120 mm')!r}")
    name, value = (part.strip() for part in text.split("=", 1))
    if not _NAME.match(name) or not value:
        raise BadInput(f"{option}: {text!r} is malformed; write NAME=VALUE with a short name, e.g. "
                       f"{_NAMED_EXAMPLES.get(kind, 'I=-120 mm')!r}")
    return name, value


_NAMED_EXAMPLES = {"plane": "I=-120 mm", "journal load": "A=206 kg", "residual": "I=180 g*mm@40"}
