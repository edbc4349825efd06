"""Shared set-up of the register tests: a fresh register on SQLite, and on PostgreSQL when a server is
given through COUNTERPOISE_TEST_POSTGRES_URL (``.ci/run`` starts one; elsewhere those tests are skipped
with that reason). Each register test file loads it by path (the tests run in importlib mode).

Behaviour checks only: no published check value here, so none needs a source.
"""

from __future__ import annotations

import os
import uuid

import pytest

from toolkit.workorder.job import EXAMPLE

PG_ENV = "COUNTERPOISE_TEST_POSTGRES_URL"
SKIP_PG = (f"no PostgreSQL server: set {PG_ENV} to a server URL (postgresql://USER@HOST:PORT/DB) "
           "to run these tests; .ci/run starts a throwaway PostgreSQL 15 cluster and sets it")

#: An invented two-plane rotor type: the job loader's own invented example without its order number
#: (the register numbers each job).
TEMPLATE = EXAMPLE.replace('number = "INV-0001"\n', "").replace('rotor = "invented test rotor"',
                                                                'rotor = "invented fan rotor F-400"')
assert "INV-0001" not in TEMPLATE


def readings(a: str, b: str) -> str:
    """The per-rotor part of a job: machine readings of planes A and B."""
    return f'[measurement]\nkind = "machine"\n[measurement.readings]\nA = "{a}"\nB = "{b}"\n'


def postgres_database(base_url: str) -> str:
    """Create a fresh database on the server and return its URL (dropped by :func:`drop_database`)."""
    from sqlalchemy import create_engine, text
    from sqlalchemy.engine import make_url

    url = make_url(base_url).set(drivername="postgresql+psycopg")
    name = "cp_test_" + uuid.uuid4().hex[:12]
    engine = create_engine(url, isolation_level="AUTOCOMMIT")
    with engine.connect() as conn:
        conn.execute(text(f'CREATE DATABASE "{name}"'))
    engine.dispose()
    return url.set(database=name).render_as_string(hide_password=False)


def drop_database(db_url: str) -> None:
    from sqlalchemy import create_engine, text
    from sqlalchemy.engine import make_url

    url = make_url(db_url)
    name = url.database
    engine = create_engine(url.set(database="postgres"), isolation_level="AUTOCOMMIT")
    with engine.connect() as conn:
        conn.execute(text(f'DROP DATABASE IF EXISTS "{name}" WITH (FORCE)'))
    engine.dispose()


#: In CI (CI=true) the PostgreSQL tests never skip: .ci/run starts the server, and a missing one fails.
SKIP = not os.environ.get(PG_ENV) and os.environ.get("CI", "").lower() not in ("true", "1")


def backends():
    """pytest params: sqlite always, postgresql when a server is given (always in CI)."""
    return [pytest.param("sqlite", id="sqlite"),
            pytest.param("postgresql", id="postgresql", marks=pytest.mark.skipif(SKIP, reason=SKIP_PG))]


def make_location(backend: str, tmp_path):
    """(location, cleanup) of a fresh, empty register."""
    if backend == "sqlite":
        return str(tmp_path / "register.sqlite3"), (lambda: None)
    url = postgres_database(os.environ[PG_ENV])
    return url, (lambda: drop_database(url))
