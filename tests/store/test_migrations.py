"""Migrations: up, down and up again on each engine, and no drift from the models."""

from __future__ import annotations

import pytest
from alembic.autogenerate import compare_metadata
from alembic.runtime.migration import MigrationContext
from sqlalchemy import inspect

from logbook.errors import ConfigError, ConflictError
from logbook.store import migrate
from logbook.store.engine import Database
from logbook.store.models import Base


def _tables(database: Database) -> set[str]:
    return set(inspect(database.engine).get_table_names()) - {"alembic_version"}


def test_upgrade_downgrade_upgrade(empty_database: Database) -> None:
    assert migrate.current_revision(empty_database) is None
    assert migrate.init_database(empty_database) == migrate.head_revision()
    assert _tables(empty_database) == set(Base.metadata.tables)
    assert migrate.downgrade(empty_database, "base") is None
    assert _tables(empty_database) == set()
    assert migrate.upgrade(empty_database) == migrate.head_revision()
    assert _tables(empty_database) == set(Base.metadata.tables)


def test_models_match_the_newest_migration(database: Database) -> None:
    """Fails when a model changes without a migration (autogenerate finds a diff)."""
    with database.engine.connect() as connection:
        context = MigrationContext.configure(connection, opts={"compare_type": True})
        diff = compare_metadata(context, Base.metadata)
    assert diff == []


def test_require_current_names_the_fix(empty_database: Database) -> None:
    with pytest.raises(ConfigError, match="logbook init"):
        migrate.require_current(empty_database)
    migrate.init_database(empty_database)
    migrate.require_current(empty_database)
    migrate.downgrade(empty_database, "base")
    with pytest.raises(ConfigError, match="logbook init"):
        migrate.require_current(empty_database)


def test_init_refuses_an_existing_logbook(database: Database) -> None:
    with pytest.raises(ConflictError, match="db upgrade"):
        migrate.init_database(database)
