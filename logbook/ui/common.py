"""What every page shares: the database, cached reads, writes, errors and pickers.

The database comes from ``$LOGBOOK_DB`` (``logbook ui --db`` sets it), else
``logbook.db`` in the current folder, as for every command. Reads go through
:func:`read`, which caches a service function's result per database and *data
version* (:func:`logbook.services.views.data_version`), so a page renders from
memory until something is added; :func:`write` runs a change in one transaction
and empties the caches, since an edit does not change the data version.
"""

from __future__ import annotations

import os
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path
from typing import Any, TypeVar

import streamlit as st
from sqlalchemy.engine import make_url
from sqlalchemy.orm import Session

from logbook.acceptance.rules import Verdict
from logbook.analysis.catalog import METRICS
from logbook.errors import ConfigError, LogbookError
from logbook.services import catalog, views
from logbook.store.config import ENV_VAR, resolve_url
from logbook.store.engine import Database
from logbook.store.migrate import require_current

T = TypeVar("T")
VERDICT_COLOURS: dict[str, str] = {
    Verdict.PASS.value: "green",
    Verdict.CONDITIONAL_PASS.value: "yellow",
    Verdict.CONDITIONAL_FAIL.value: "orange",
    Verdict.FAIL.value: "red",
}
UI_DIR = Path(__file__).resolve().parent


def page_file(name: str) -> str:
    """The path of a page module in this package (``st.Page`` runs it as a script)."""
    return str(UI_DIR / name)


def logbook_url() -> str:
    """The database URL (password included, never shown) this app serves."""
    return resolve_url(os.environ.get(ENV_VAR) or None).render_as_string(hide_password=False)


@st.cache_resource(show_spinner=False, on_release=Database.dispose)
def _open(url: str) -> Database:
    return Database(make_url(url))


def database() -> Database:
    return _open(logbook_url())


@dataclass(frozen=True)
class Problem:
    """Why the logbook cannot be shown, and the commands that would fix it."""

    message: str
    commands: tuple[str, ...]


def database_problem() -> Problem | None:
    """None when the logbook exists at the newest schema, else what to do about it.

    A SQLite file that does not exist is reported, not created: opening it would
    leave an empty file behind.
    """
    url = make_url(logbook_url())
    where = f" --db {url.database}" if url.get_backend_name() == "sqlite" else " --db URL"
    create = (f"logbook init{where}", f"logbook demo{where}")
    if url.get_backend_name() == "sqlite" and not Path(url.database or "").is_file():
        return Problem(f"there is no logbook file at {url.database}", create)
    try:
        require_current(database())
    except ConfigError as exc:
        if "db upgrade" in str(exc):
            return Problem(str(exc), (f"logbook db upgrade{where}",))
        return Problem(str(exc), create)
    return None


def data_version() -> tuple[int, ...]:
    with database().session() as session:
        return views.data_version(session)


def read(fn: Callable[..., T], /, *args: Any, **kwargs: Any) -> T:
    """``fn(session, *args, **kwargs)`` in a read session, cached until the data change.

    ``fn`` must return plain data (no ORM rows): the result is pickled into the cache.
    """
    name = f"{fn.__module__}.{fn.__qualname__}"
    return _read(logbook_url(), data_version(), name, args, tuple(sorted(kwargs.items())), fn)


@st.cache_data(show_spinner=False, max_entries=256)
def _read(
    url: str,
    version: tuple[int, ...],
    name: str,
    args: tuple[Any, ...],
    kwargs: tuple[tuple[str, Any], ...],
    _fn: Callable[..., Any],
) -> Any:
    with _open(url).session() as session:
        return _fn(session, *args, **dict(kwargs))


def write(fn: Callable[..., T], /, *args: Any, **kwargs: Any) -> T:
    """``fn(session, *args, **kwargs)`` in one write transaction; then the caches are cleared."""
    with database().session(write=True) as session:
        result = fn(session, *args, **kwargs)
    clear_caches()
    return result


def clear_caches() -> None:
    _read.clear()


@contextmanager
def shown_errors() -> Iterator[None]:
    """Show a :class:`LogbookError` raised inside as an error box instead of a traceback."""
    try:
        yield
    except LogbookError as exc:
        st.error(str(exc), icon=":material/error:")


def metric_label(name: str, unit: str | None = None) -> str:
    """``overshoot_pct [%]``: a metric's name with its unit on this axis."""
    unit = unit if unit is not None else METRICS[name].unit if name in METRICS else ""
    return f"{name} [{unit}]" if unit else name


def axis_picker(axes: list[str], *, key: str = "axis") -> str | None:
    """A selectbox of the axes that keeps its choice while the user moves between pages
    (every page's picker shares the key ``axis``)."""
    if not axes:
        st.info("The logbook has no axes yet: add one on the Setup page.")
        return None
    return st.selectbox("Axis", axes, key=key, persist_state="session")


def axis_names(session: Session) -> list[str]:
    """The axes, by name (a plain list, for :func:`read`)."""
    return [axis.name for axis in catalog.list_axes(session)]


def verdict_badge(verdict: str) -> str:
    """Markdown of a coloured label for a verdict; undetermined ones (no data, too few
    runs, wrong test kind) grey."""
    return f":{VERDICT_COLOURS.get(verdict, 'gray')}-badge[{verdict}]"


def gain_names(session: Session) -> list[str]:
    """The gain sets as the pages name them (``#id`` for unnamed ones)."""
    return [catalog.gain_label(g.name, g.id) for g in catalog.list_gain_sets(session)]


_FLASH_KEY = "flash_message"


def flash(message: str) -> None:
    """Rerun the page now (so its tables show the change) and show ``message`` on it."""
    st.session_state[_FLASH_KEY] = message
    st.rerun()


def show_flash() -> None:
    """Show, once, the message left by :func:`flash`."""
    message = st.session_state.pop(_FLASH_KEY, None)
    if message:
        st.success(message, icon=":material/check_circle:")
