"""The register's tables (SQLAlchemy Core) and its migrations, as code.

Every table is created by exactly one migration; a migration only adds (tables, indexes), so the tables
below always describe the newest schema and an older database is brought up to date by running the
migrations it lacks, each in its own transaction, recorded in ``schema_version``. docs/register.md
describes every column.

Times are text in UTC, ``YYYY-MM-DDTHH:MM:SS.ffffffZ`` (sortable the same way in SQLite and PostgreSQL);
JSON values are stored as text.
"""

from __future__ import annotations

from sqlalchemy import (Column, Float, ForeignKey, Index, Integer, MetaData, Table, Text, UniqueConstraint)

metadata = MetaData()

schema_version = Table(
    "schema_version", metadata,
    Column("version", Integer, primary_key=True, autoincrement=False),
    Column("applied", Text, nullable=False),
    Column("note", Text, nullable=False),
)

# -- version 1 -----------------------------------------------------------------------------------------

settings = Table(
    "settings", metadata,
    Column("key", Text, primary_key=True),
    Column("value", Text, nullable=False),
)

counters = Table(
    "counters", metadata,
    Column("name", Text, primary_key=True),
    Column("value", Integer, nullable=False),
)

rotor_types = Table(
    "rotor_types", metadata,
    Column("id", Integer, primary_key=True),
    Column("name", Text, nullable=False, unique=True),
    Column("created", Text, nullable=False),
    Column("created_by", Text, nullable=False),
)

type_versions = Table(
    "rotor_type_versions", metadata,
    Column("id", Integer, primary_key=True),
    Column("type_id", Integer, ForeignKey("rotor_types.id"), nullable=False),
    Column("version", Integer, nullable=False),
    Column("template", Text, nullable=False),
    Column("template_sha256", Text, nullable=False),
    Column("note", Text, nullable=False),
    Column("created", Text, nullable=False),
    Column("created_by", Text, nullable=False),
    UniqueConstraint("type_id", "version", name="uq_type_version"),
)

jobs = Table(
    "jobs", metadata,
    Column("id", Integer, primary_key=True),
    Column("order_number", Text, nullable=False, unique=True),
    Column("type_version_id", Integer, ForeignKey("rotor_type_versions.id"), nullable=True),
    Column("serial", Text, nullable=False),
    Column("customer", Text, nullable=False),
    Column("job_sha256", Text, nullable=False),
    Column("predicted_pass", Integer, nullable=False),
    Column("status", Text, nullable=False),
    Column("created", Text, nullable=False),
    Column("created_by", Text, nullable=False),
    # the long texts last: a scan of the short columns does not walk their overflow pages (SQLite)
    Column("order_data", Text, nullable=False),
    Column("job_text", Text, nullable=False),
    Column("workorder", Text, nullable=False),
)

job_planes = Table(
    "job_planes", metadata,
    Column("id", Integer, primary_key=True),
    Column("job_id", Integer, ForeignKey("jobs.id"), nullable=False),
    Column("idx", Integer, nullable=False),
    Column("plane", Text, nullable=False),
    Column("u_per_g_mm", Float, nullable=False),
    Column("limit_g_mm", Float, nullable=False),
    Column("initial_g_mm", Float, nullable=False),
    Column("initial_deg", Float, nullable=False),
    Column("predicted_g_mm", Float, nullable=False),
    Column("operations", Integer, nullable=False),
    Column("mass_g", Float, nullable=False),
    Column("created", Text, nullable=False),       # the job's, repeated here for the monthly trend
    UniqueConstraint("job_id", "idx", name="uq_job_plane"),
)

job_files = Table(
    "job_files", metadata,
    Column("id", Integer, primary_key=True),
    Column("job_id", Integer, ForeignKey("jobs.id"), nullable=False),
    Column("path", Text, nullable=False),
    Column("sha256", Text, nullable=False),
    Column("size", Integer, nullable=False),
    Column("at", Text, nullable=False),
)

job_status = Table(
    "job_status", metadata,
    Column("id", Integer, primary_key=True),
    Column("job_id", Integer, ForeignKey("jobs.id"), nullable=False),
    Column("status", Text, nullable=False),
    Column("at", Text, nullable=False),
    Column("by", Text, nullable=False),
    Column("source", Text, nullable=False),
    Column("note", Text, nullable=False),
)

check_runs = Table(
    "check_runs", metadata,
    Column("id", Integer, primary_key=True),
    Column("job_id", Integer, ForeignKey("jobs.id"), nullable=False),
    Column("kind", Text, nullable=False),          # residual (per plane) or vibration (per sensor)
    Column("target", Text, nullable=False),        # plane or sensor name
    Column("amount", Float, nullable=False),
    Column("unit", Text, nullable=False),          # g*mm for a residual; the reading unit for vibration
    Column("angle_deg", Float, nullable=True),
    Column("limit_amount", Float, nullable=True),
    Column("passed", Integer, nullable=True),
    Column("at", Text, nullable=False),
    Column("by", Text, nullable=False),
    Column("source", Text, nullable=False),
)

operation_marks = Table(
    "operation_marks", metadata,
    Column("id", Integer, primary_key=True),
    Column("job_id", Integer, ForeignKey("jobs.id"), nullable=False),
    Column("operation", Integer, nullable=False),
    Column("status", Text, nullable=False),
    Column("remark", Text, nullable=False),
    Column("at", Text, nullable=False),
    Column("source", Text, nullable=False),
)

signoffs = Table(
    "signoffs", metadata,
    Column("id", Integer, primary_key=True),
    Column("job_id", Integer, ForeignKey("jobs.id"), nullable=False),
    Column("role", Text, nullable=False),
    Column("name", Text, nullable=False),
    Column("signed", Text, nullable=False),        # the date or time written by the signer ("" if none)
    Column("at", Text, nullable=False),
    Column("source", Text, nullable=False),
)

# -- version 2 -----------------------------------------------------------------------------------------

coefficient_sets = Table(
    "coefficient_sets", metadata,
    Column("id", Integer, primary_key=True),
    Column("type_id", Integer, ForeignKey("rotor_types.id"), nullable=False),
    Column("parent_id", Integer, ForeignKey("coefficient_sets.id"), nullable=True),
    Column("reason", Text, nullable=False),        # measured, file or trim
    Column("data", Text, nullable=False),          # toolkit.coefficients.Coefficients.to_dict() as JSON
    Column("speed_rpm", Float, nullable=True),
    Column("provenance", Text, nullable=False),    # JSON: jobs, date, sensors, senses, trial radius, quality
    Column("created", Text, nullable=False),
    Column("created_by", Text, nullable=False),
)

# -- version 3 -----------------------------------------------------------------------------------------

accounts = Table(
    "accounts", metadata,
    Column("id", Integer, primary_key=True),
    Column("name", Text, nullable=False, unique=True),
    Column("role", Text, nullable=False),          # operator, machinist, planner, inspector, administrator
    Column("password", Text, nullable=False),      # scrypt$N$r$p$salt_hex$hash_hex (toolkit/web/accounts.py)
    Column("units", Text, nullable=False),         # the person's own units: metric or imperial
    Column("created", Text, nullable=False),
    Column("changed", Text, nullable=False),       # last password or role change
)

# -- version 4 -----------------------------------------------------------------------------------------

trim_runs = Table(
    "trim_runs", metadata,
    Column("id", Integer, primary_key=True),
    Column("job_id", Integer, ForeignKey("jobs.id"), nullable=False),
    Column("step", Integer, nullable=False),       # 1 for the first trim of the job, 2 for the next, ...
    Column("kind", Text, nullable=False),          # coefficients (trial-run job) or machine (machine readings)
    Column("data", Text, nullable=False),          # JSON: before, installed, after, trim correction, residual
    Column("at", Text, nullable=False),
    Column("by", Text, nullable=False),
    Column("source", Text, nullable=False),
)

_V1 = (settings, counters, rotor_types, type_versions, jobs, job_planes, job_files, job_status, check_runs,
       operation_marks, signoffs)
_V1_INDEXES = (
    Index("ix_jobs_type_version", jobs.c.type_version_id),
    Index("ix_job_planes_job", job_planes.c.job_id),
    Index("ix_job_planes_plane", job_planes.c.plane, job_planes.c.job_id, job_planes.c.initial_g_mm,
          job_planes.c.initial_deg),
    Index("ix_job_status_job", job_status.c.job_id),
    Index("ix_job_status_status", job_status.c.status, job_status.c.job_id),
    Index("ix_check_runs_job", check_runs.c.job_id),
    Index("ix_signoffs_job", signoffs.c.job_id),
    Index("ix_operation_marks_job", operation_marks.c.job_id),
    Index("ix_job_files_job", job_files.c.job_id),
    Index("ix_jobs_created", jobs.c.created),
    Index("ix_jobs_status", jobs.c.status),
)
_V2_INDEXES = (
    Index("ix_coefficient_sets_type", coefficient_sets.c.type_id),
)

_V4_INDEXES = (
    Index("ix_trim_runs_job", trim_runs.c.job_id),
)


def _create(conn, tables=(), indexes=()) -> None:
    for table in tables:
        table.create(conn)
    for index in indexes:
        index.create(conn, checkfirst=True)  # created with its table already


def _migrate_1(conn) -> None:
    _create(conn, _V1, _V1_INDEXES)


def _migrate_2(conn) -> None:
    _create(conn, (coefficient_sets,), _V2_INDEXES)


def _migrate_3(conn) -> None:
    _create(conn, (accounts,))


def _migrate_4(conn) -> None:
    _create(conn, (trim_runs,), _V4_INDEXES)


#: (version, what it does, function) in order; the newest version is the last.
MIGRATIONS = (
    (1, "rotor types, jobs, check runs, sign-offs, order numbers", _migrate_1),
    (2, "influence coefficients per rotor type with trim history", _migrate_2),
    (3, "accounts of the browser face (names, roles, password hashes)", _migrate_3),
    (4, "trim runs recorded against a job", _migrate_4),
)
LATEST = MIGRATIONS[-1][0]
#: Tables in the order an export writes them (parents before children). ``accounts`` is not among them: an
#: export never carries password hashes; accounts are made again on the new register.
TABLES = (settings, counters, rotor_types, type_versions, jobs, job_planes, job_files, job_status, check_runs,
          operation_marks, signoffs, coefficient_sets, trim_runs)
