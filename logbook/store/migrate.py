"""Running the Alembic migrations from the package, checkout or installed wheel.

The Alembic environment lives in ``migrations/`` at the top of the checkout and is
shipped inside the wheel as the package ``logbook.migrations``; this module finds
it either way, builds the Alembic configuration in code (no ``alembic.ini``
needed), and reports a database's state in plain words.
"""

from __future__ import annotations

import importlib.util
from pathlib import Path

from alembic import command
from alembic.config import Config
from alembic.runtime.migration import MigrationContext
from alembic.script import ScriptDirectory
from alembic.util.exc import CommandError
from sqlalchemy import inspect

from logbook.errors import ConfigError, ConflictError
from logbook.store.engine import Database


def migrations_dir() -> Path:
    """The folder holding ``env.py`` and ``versions/``."""
    spec = importlib.util.find_spec("logbook.migrations")
    if spec is not None and spec.submodule_search_locations:
        return Path(next(iter(spec.submodule_search_locations)))
    checkout = Path(__file__).resolve().parents[2] / "migrations"
    if (checkout / "env.py").is_file():
        return checkout
    raise ConfigError("the logbook's migrations are missing from this installation")


def alembic_config(db: Database) -> Config:
    """An Alembic configuration bound to ``db``'s engine."""
    config = Config()
    config.set_main_option("script_location", str(migrations_dir()))
    config.attributes["engine"] = db.engine
    return config


def head_revision() -> str:
    """The newest migration's identifier."""
    script = ScriptDirectory(str(migrations_dir()))
    head = script.get_current_head()
    assert head is not None, "the migrations folder has no revisions"
    return head


def current_revision(db: Database) -> str | None:
    """The database's migration revision, or None when it holds no logbook."""
    with db.engine.connect() as connection:
        return MigrationContext.configure(connection).get_current_revision()


def init_database(db: Database) -> str:
    """Create a new logbook at the newest revision; refuse an existing one."""
    if current_revision(db) is not None or inspect(db.engine).get_table_names():
        raise ConflictError(
            f"{db.display_url} already holds a database; use 'logbook db upgrade' to update it"
        )
    command.upgrade(alembic_config(db), "head")
    return head_revision()


def upgrade(db: Database, revision: str = "head") -> str | None:
    """Migrate forward to ``revision``; return the revision reached."""
    try:
        command.upgrade(alembic_config(db), revision)
    except CommandError as exc:
        raise ConfigError(f"cannot upgrade to {revision!r}: {exc}") from None
    return current_revision(db)


def downgrade(db: Database, revision: str) -> str | None:
    """Migrate back to ``revision`` ("base" removes everything); return where it is."""
    try:
        command.downgrade(alembic_config(db), revision)
    except CommandError as exc:
        raise ConfigError(f"cannot downgrade to {revision!r}: {exc}") from None
    return current_revision(db)


def require_current(db: Database) -> None:
    """Raise a clear error unless ``db`` is a logbook at the newest revision."""
    current = current_revision(db)
    if current is None:
        raise ConfigError(f"no logbook at {db.display_url}; create one with 'logbook init'")
    head = head_revision()
    if current != head:
        raise ConfigError(
            f"the logbook at {db.display_url} is at schema revision {current}, "
            f"this version needs {head}; run 'logbook db upgrade'"
        )
