"""``logbook init`` and ``logbook db upgrade|current|downgrade``."""

from __future__ import annotations

import click

from logbook.cli.base import db_option, open_logbook
from logbook.store import migrate


@click.command("init")
@db_option
def init_command(db: str | None) -> None:
    """Create a new, empty logbook at the newest schema revision.

    Example: logbook init --db bench.db
    """
    database = open_logbook(db, check_schema=False)
    revision = migrate.init_database(database)
    click.echo(f"created logbook at {database.display_url} (schema {revision})")


@click.group("db")
def db_group() -> None:
    """Schema migrations of an existing logbook.

    Example: logbook db upgrade --db bench.db
    """


@db_group.command("upgrade")
@click.argument("revision", default="head")
@db_option
def upgrade_command(revision: str, db: str | None) -> None:
    """Migrate the schema forward to REVISION (default: the newest).

    Example: logbook db upgrade
    """
    database = open_logbook(db, check_schema=False)
    current = migrate.upgrade(database, revision)
    click.echo(f"{database.display_url} is at schema {current}")


@db_group.command("downgrade")
@click.argument("revision")
@db_option
def downgrade_command(revision: str, db: str | None) -> None:
    """Migrate the schema back to REVISION ('base' removes every table).

    Example: logbook db downgrade base
    """
    database = open_logbook(db, check_schema=False)
    current = migrate.downgrade(database, revision)
    click.echo(f"{database.display_url} is at schema {current or 'base (empty)'}")


@db_group.command("current")
@db_option
def current_command(db: str | None) -> None:
    """Show the schema revision of the logbook and the newest one this version knows.

    Example: logbook db current --db postgresql+psycopg://user@host/bench
    """
    database = open_logbook(db, check_schema=False)
    current = migrate.current_revision(database)
    head = migrate.head_revision()
    state = "up to date" if current == head else "needs 'logbook db upgrade'"
    if current is None:
        state = "no logbook here; run 'logbook init'"
    click.echo(f"{database.display_url}: schema {current or 'none'} (newest {head}; {state})")
