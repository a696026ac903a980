"""Slow reads run on a worker thread, so a page can show everything else first.

A regression scan of one axis takes about a second and a half on a logbook of
10,000 runs; the overview needs one per axis. :func:`read_soon` starts such a read
on the server's worker thread (one, shared by every visitor) and returns its result
once it is done, or None while it runs; the page shows what it has and polls
(:func:`poll_until_done`). Results are kept per database, data version and
arguments, like :func:`logbook.ui.common.read`; those of an older data version
are dropped when a newer one is asked for.
"""

from __future__ import annotations

import threading
from collections.abc import Callable
from concurrent.futures import Future, ThreadPoolExecutor
from typing import Any, TypeVar

import streamlit as st

from logbook.ui.common import data_version, database, logbook_url

T = TypeVar("T")
POLL_S = 1.0

_Key = tuple[str, str, tuple[Any, ...], tuple[tuple[str, Any], ...]]


class _Jobs:
    """Futures by (url, function, arguments), each with the data version it read."""

    def __init__(self) -> None:
        self.pool = ThreadPoolExecutor(max_workers=1, thread_name_prefix="logbook-read")
        self.lock = threading.Lock()
        self.jobs: dict[_Key, tuple[tuple[int, ...], Future[Any]]] = {}

    def submit(self, key: _Key, version: tuple[int, ...], call: Callable[[], Any]) -> Future[Any]:
        with self.lock:
            known = self.jobs.get(key)
            if known is None or known[0] != version:
                known = (version, self.pool.submit(call))
                self.jobs[key] = known
            return known[1]

    def close(self) -> None:
        self.pool.shutdown(wait=False, cancel_futures=True)


@st.cache_resource(show_spinner=False, on_release=_Jobs.close)
def _jobs() -> _Jobs:
    return _Jobs()


def read_soon(fn: Callable[..., T], /, *args: Any, **kwargs: Any) -> T | None:
    """``fn(session, *args, **kwargs)``'s result if a worker has computed it for the
    current data, else None (and the worker is set to it). Errors are raised here."""
    url, version = logbook_url(), data_version()
    db = database()

    def call() -> T:
        with db.session() as session:
            return fn(session, *args, **kwargs)

    key = (url, f"{fn.__module__}.{fn.__qualname__}", args, tuple(sorted(kwargs.items())))
    future = _jobs().submit(key, version, call)
    return future.result() if future.done() else None


def poll_until_done(pending: bool) -> None:
    """While ``pending``, rerun the page every :data:`POLL_S` seconds to pick up results."""
    if pending:
        st.fragment(_rerun_when_idle, run_every=POLL_S)()


def _rerun_when_idle() -> None:
    with _jobs().lock:
        busy = any(not future.done() for _, future in _jobs().jobs.values())
    if not busy:
        st.rerun(scope="app")
