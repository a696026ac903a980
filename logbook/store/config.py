"""Where the logbook lives: resolving ``--db`` and masking passwords.

Precedence: the ``--db`` option, else ``$LOGBOOK_DB``, else ``logbook.db`` in the
current folder. A value with ``://`` is a SQLAlchemy URL (PostgreSQL through
``postgresql+psycopg://…``); anything else is a path to a SQLite file.
"""

from __future__ import annotations

import os
from collections.abc import Mapping
from pathlib import Path

from sqlalchemy.engine import URL, make_url
from sqlalchemy.exc import ArgumentError

from logbook.errors import ConfigError

DEFAULT_DB_FILE = "logbook.db"
ENV_VAR = "LOGBOOK_DB"
SUPPORTED_BACKENDS = ("sqlite", "postgresql")


def resolve_url(db: str | None = None, environ: Mapping[str, str] | None = None) -> URL:
    """Turn the user's database choice into a SQLAlchemy URL."""
    environ = os.environ if environ is None else environ
    chosen = db or environ.get(ENV_VAR) or DEFAULT_DB_FILE
    if "://" not in chosen:
        return URL.create("sqlite", database=str(Path(chosen).expanduser().resolve()))
    try:
        url = make_url(chosen)
    except ArgumentError:
        raise ConfigError(f"cannot read database URL {mask_text(chosen)}") from None
    if url.get_backend_name() not in SUPPORTED_BACKENDS:
        raise ConfigError(
            f"unsupported database {url.get_backend_name()!r} in {display_url(url)}; "
            "use a SQLite path or a postgresql+psycopg:// URL"
        )
    if url.get_backend_name() == "postgresql" and url.drivername != "postgresql+psycopg":
        url = url.set(drivername="postgresql+psycopg")
    return url


def display_url(url: URL | str) -> str:
    """The URL as it may be shown: password replaced by ``***``."""
    if isinstance(url, str):
        return mask_text(url)
    return url.render_as_string(hide_password=True)


def mask_text(text: str, url: URL | None = None) -> str:
    """Remove passwords from free text (error messages of drivers, user input).

    Masks the password of ``url`` wherever it appears, and any ``user:secret@``
    credential inside a URL-looking fragment.
    """
    if url is not None and url.password:
        text = text.replace(str(url.password), "***")
    out = []
    for word in text.split(" "):
        scheme, sep, rest = word.partition("://")
        if sep and "@" in rest:
            credentials, at, host = rest.rpartition("@")
            user, colon, _secret = credentials.partition(":")
            if colon:
                word = f"{scheme}://{user}:***{at}{host}"
        out.append(word)
    return " ".join(out)
