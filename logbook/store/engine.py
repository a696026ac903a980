"""Engines and sessions for both back ends.

SQLite is opened in WAL mode with foreign keys on and a busy timeout, so several
processes can share one file; write sessions start with ``BEGIN IMMEDIATE`` so two
writers queue on the busy timeout instead of failing when a reader upgrades to a
writer. PostgreSQL needs none of this.
"""

from __future__ import annotations

from collections.abc import Iterator
from contextlib import contextmanager
from typing import Any

from sqlalchemy import Engine, create_engine, event
from sqlalchemy.engine import URL
from sqlalchemy.exc import DBAPIError, OperationalError
from sqlalchemy.orm import Session, sessionmaker

from logbook.errors import ConfigError, LockedError
from logbook.store.config import display_url, mask_text, resolve_url

SQLITE_BUSY_TIMEOUT_MS = 60_000
# Start of the message raised by the run-lock triggers (see migration 0001).
LOCK_MARKER = "LOGBOOK_LOCKED"
_WRITE_OPTION = "logbook_write"


def create_logbook_engine(url: URL) -> Engine:
    """An engine for ``url`` with the per-backend settings above."""
    if url.get_backend_name() == "sqlite":
        engine = create_engine(url, connect_args={"timeout": SQLITE_BUSY_TIMEOUT_MS / 1000})
        _configure_sqlite(engine)
        return engine
    return create_engine(url, pool_pre_ping=True)


def _configure_sqlite(engine: Engine) -> None:
    @event.listens_for(engine, "connect")
    def _on_connect(dbapi_connection: Any, _record: Any) -> None:
        # Let SQLAlchemy, not the driver, decide when transactions begin.
        dbapi_connection.isolation_level = None
        cursor = dbapi_connection.cursor()
        # A new file gets 64 KiB pages (an existing one keeps its own): each run
        # stores megabytes of blobs, which then span 16 times fewer overflow pages;
        # that halves the time of an import's commit (benchmarks/bench_import.py).
        cursor.execute("PRAGMA page_size=65536")
        cursor.execute("PRAGMA journal_mode=WAL")
        cursor.execute("PRAGMA foreign_keys=ON")
        cursor.execute(f"PRAGMA busy_timeout={SQLITE_BUSY_TIMEOUT_MS}")
        cursor.execute("PRAGMA synchronous=NORMAL")
        cursor.close()

    @event.listens_for(engine, "begin")
    def _on_begin(connection: Any) -> None:
        immediate = connection.get_execution_options().get(_WRITE_OPTION, False)
        connection.exec_driver_sql("BEGIN IMMEDIATE" if immediate else "BEGIN")


class Database:
    """One logbook database: its URL, engine and session factories."""

    def __init__(self, url: URL) -> None:
        self.url = url
        self.engine = create_logbook_engine(url)
        self._read = sessionmaker(self.engine, expire_on_commit=False)
        self._write = sessionmaker(
            self.engine.execution_options(**{_WRITE_OPTION: True}), expire_on_commit=False
        )

    @classmethod
    def open(cls, db: str | None = None) -> Database:
        """Open the database named by ``--db``/``$LOGBOOK_DB``/the default file."""
        return cls(resolve_url(db))

    @property
    def display_url(self) -> str:
        return display_url(self.url)

    @property
    def dialect(self) -> str:
        return self.url.get_backend_name()

    @contextmanager
    def session(self, *, write: bool = False) -> Iterator[Session]:
        """A session in one transaction: committed on success, rolled back on error.

        Pass ``write=True`` for sessions that change the database. Database errors
        come out as :class:`LogbookError` subclasses with passwords masked.
        """
        factory = self._write if write else self._read
        try:
            with factory() as session, session.begin():
                yield session
        except DBAPIError as exc:
            raise self.translate(exc) from None

    def translate(self, exc: DBAPIError) -> Exception:
        """Map a driver error to the project's errors (never leaking the password)."""
        text = str(exc.orig) if exc.orig is not None else str(exc)
        if LOCK_MARKER in text:
            detail = text.split(LOCK_MARKER, 1)[1].lstrip(": ").splitlines()[0]
            return LockedError(f"{detail}; record a corrected run instead of editing this one")
        if isinstance(exc, OperationalError):
            first = mask_text(text, self.url).strip().splitlines()[0] if text.strip() else ""
            return ConfigError(f"cannot use database {self.display_url}: {first}")
        return exc

    def dispose(self) -> None:
        self.engine.dispose()
