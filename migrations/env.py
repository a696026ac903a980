"""Alembic environment: migrations run against the engine handed in by the logbook.

``logbook.store.migrate`` builds the configuration in code and passes the engine in
``config.attributes["engine"]``. SQLite runs in batch mode so ALTERs work.
"""

from __future__ import annotations

from alembic import context

from logbook.store.models import Base

config = context.config
target_metadata = Base.metadata


def run_migrations_online() -> None:
    engine = config.attributes["engine"]
    with engine.connect() as connection:
        context.configure(
            connection=connection,
            target_metadata=target_metadata,
            render_as_batch=connection.dialect.name == "sqlite",
            compare_type=True,
        )
        with context.begin_transaction():
            context.run_migrations()
        connection.commit()


if context.is_offline_mode():
    raise SystemExit("offline (SQL script) migrations are not supported; pass a database")
run_migrations_online()
