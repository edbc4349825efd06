"""One-run balancing: a new rotor of a stored type corrected from its original readings alone, with the
type's newest stored influence coefficients (:func:`toolkit.coefficients.solve_with_coefficients` through
the work-order chain), recorded in the register.

The recorded job text is the type's template with this rotor's ``[measurement]`` (kind ``coefficients``)
and names the coefficient set by its register number; the set itself is stored in the register. A set
older than the shop's ``stale_days`` setting, or measured at another speed, is flagged on the work order.
"""

from __future__ import annotations

import json
import tempfile
from pathlib import Path

from toolkit.errors import BadInput
from toolkit.register import records as R
from toolkit.register.store import DEFAULT_STALE_DAYS, Register

__all__ = ["balance_from_type", "set_reference", "referenced_set"]

_REFERENCE = "register coefficient set "


def set_reference(set_id: int) -> str:
    """How a recorded job names the register's coefficient set it was solved from (its
    ``measurement.coefficients``).

    >>> set_reference(3), referenced_set(set_reference(3)), referenced_set("coefficients.json")
    ('register coefficient set 3', 3, None)
    """
    return f"{_REFERENCE}{int(set_id)}"


def referenced_set(text) -> int | None:
    """The set number a job's ``measurement.coefficients`` names (:func:`set_reference`), or None for a file."""
    if isinstance(text, str) and text.startswith(_REFERENCE) and text[len(_REFERENCE):].isdigit():
        return int(text[len(_REFERENCE):])
    return None


def balance_from_type(reg: Register, type_name: str, *, serial: str, original, customer: str | None = None,
                      by: str = ""):
    """Compose, build and record the job of a new rotor of ``type_name`` from its ``original`` readings
    (one per sensor of the stored set). Returns ``(order, record)``."""
    from toolkit.workorder.job import job_from_data

    if not serial or not str(serial).strip():
        raise BadInput.about("serial", "give the rotor's serial number")
    original = [str(r) for r in (original or [])]
    set_id, coefficients, created = R.latest_coefficients(reg, type_name)
    if len(original) != len(coefficients.sensors):
        raise BadInput.about("original", f"give {len(coefficients.sensors)} reading(s), one per sensor "
                       f"({', '.join(coefficients.sensors)}), in that order")
    over = {"order": {"serial": str(serial).strip()},
            "measurement": {"kind": "coefficients", "coefficients": set_reference(set_id),
                            "original": original}}
    if customer is not None:
        over["order"]["customer"] = customer
    t, text = R.compose_job(reg, type_name, R.toml_text(over))
    data = R._loads(text, "composed job")
    try:
        days = float(reg.setting("stale_days", f"{DEFAULT_STALE_DAYS:g}"))
    except ValueError:
        days = float(DEFAULT_STALE_DAYS)
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / f"coefficient-set-{set_id}.json"
        path.write_text(json.dumps(coefficients.to_dict()), encoding="utf-8")
        data["measurement"]["coefficients"] = str(path)
        job = job_from_data(data, f"rotor type {t['type']} version {t['version']}", what="the composed job")
        warnings = tuple(R.stale_warnings(created, coefficients.speed_rpm, job.balancing_speed_rpm, days))
        order, record = R.record_job(reg, text, job=job, type_version_id=t["version_id"], by=by,
                                     extra_warnings=warnings)
    record["coefficient_set"] = set_id
    record["stale"] = list(warnings)
    return order, record
