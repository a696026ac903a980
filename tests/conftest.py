"""Shared fixtures: a fresh logbook per test, on SQLite and (when configured) PostgreSQL.

``database`` is parametrised over the engines: SQLite always, PostgreSQL when
``LOGBOOK_TEST_PG_URL`` names a server. Each PostgreSQL test gets a database of
its own, created from the server URL and dropped afterwards.
"""

from __future__ import annotations

import os
import uuid
from collections.abc import Iterator
from pathlib import Path

import pytest
from sqlalchemy import create_engine, text
from sqlalchemy.engine import make_url

from logbook.store.config import resolve_url
from logbook.store.engine import Database
from logbook.store.migrate import init_database

PG_ENV = "LOGBOOK_TEST_PG_URL"


def _pg_server_url() -> str | None:
    return os.environ.get(PG_ENV) or None


@pytest.fixture
def sqlite_url(tmp_path: Path) -> str:
    return str(tmp_path / "logbook.db")


@pytest.fixture
def pg_url() -> Iterator[str]:
    """A fresh, empty PostgreSQL database, dropped after the test."""
    server = _pg_server_url()
    if server is None:
        pytest.skip(
            f"PostgreSQL tests need {PG_ENV} (e.g. postgresql+psycopg://postgres@127.0.0.1:5432/test)"
        )
    name = f"logbook_test_{uuid.uuid4().hex[:12]}"
    admin = create_engine(make_url(server), isolation_level="AUTOCOMMIT")
    with admin.connect() as connection:
        connection.execute(text(f'CREATE DATABASE "{name}"'))
    try:
        yield make_url(server).set(database=name).render_as_string(hide_password=False)
    finally:
        with admin.connect() as connection:
            connection.execute(text(f'DROP DATABASE IF EXISTS "{name}" WITH (FORCE)'))
        admin.dispose()


@pytest.fixture(params=["sqlite", pytest.param("postgresql", marks=pytest.mark.postgres)])
def empty_database(request: pytest.FixtureRequest) -> Iterator[Database]:
    """An empty database (no schema) on each engine."""
    location = request.getfixturevalue("sqlite_url" if request.param == "sqlite" else "pg_url")
    database = Database(resolve_url(location))
    yield database
    database.dispose()


@pytest.fixture
def database(empty_database: Database) -> Database:
    """A fresh logbook at the newest schema revision, on each engine."""
    init_database(empty_database)
    return empty_database
