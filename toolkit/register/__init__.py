"""The shop register: rotor types, jobs with their work orders, check runs, sign-offs, influence coefficients
per rotor type, certificates and series statistics, in SQLite (default) or PostgreSQL.

``open_register(where)`` opens it (see :mod:`toolkit.register.store`); the contents are in
:mod:`toolkit.register.records`, the workbook read-back in :mod:`toolkit.register.readback`, the
data of a certificate and of the statistics in :mod:`toolkit.register.reports` (their files are drawn by
:mod:`toolkit.export.certificate` and :mod:`toolkit.export.statistics`), export and import in
:mod:`toolkit.register.portable`. docs/register.md describes the schema.
"""

from toolkit.register.store import Register, open_register, resolve, shown_url

__all__ = ["Register", "open_register", "resolve", "shown_url"]
