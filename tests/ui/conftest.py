"""Fixtures for the front-end tests: a small logbook per test and the app on it."""

from __future__ import annotations

import base64
import json
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import numpy as np
import pytest
import streamlit as st
from streamlit.testing.v1 import AppTest

import logbook.ui
from logbook.store.config import ENV_VAR
from tests.ui.small_logbook import small_logbook, small_logbook_template

__all__ = ["small_logbook", "small_logbook_template"]

APP = Path(logbook.ui.__file__).parent / "app.py"


@pytest.fixture(autouse=True)
def fresh_caches() -> Iterator[None]:
    """Streamlit's caches live in the process: empty them after every test."""
    yield
    st.cache_data.clear()
    st.cache_resource.clear()  # disposes the cached database engines


@pytest.fixture
def app(small_logbook: Path, monkeypatch: pytest.MonkeyPatch) -> AppTest:
    """The app (not yet run) serving a private copy of the small logbook."""
    monkeypatch.setenv(ENV_VAR, str(small_logbook))
    return AppTest.from_file(APP, default_timeout=30)


def open_page(at: AppTest, page: str) -> AppTest:
    """Run the app, switch to ``page`` (a module of logbook.ui) and run it; no exception."""
    at.run()
    at.switch_page(page).run()
    assert not at.exception, [e.value for e in at.exception]
    return at


def rerun(at: AppTest) -> AppTest:
    at.run()
    assert not at.exception, [e.value for e in at.exception]
    return at


def plotly_specs(at: AppTest) -> list[dict[str, Any]]:
    """The Plotly figures on the page, as their JSON."""
    return [json.loads(chart.proto.spec) for chart in at.get("plotly_chart")]


def texts(at: AppTest) -> str:
    """Every markdown, caption, info, warning, error and success text, one per line."""
    parts = []
    for kind in (
        "title",
        "header",
        "subheader",
        "markdown",
        "caption",
        "info",
        "warning",
        "error",
        "success",
        "code",
    ):
        parts += [str(e.value) for e in getattr(at, kind)]
    return "\n".join(parts)


def values(data: Any) -> np.ndarray:
    """A data array of a figure's JSON: a list, or Plotly's base64 typed array."""
    if isinstance(data, dict) and "bdata" in data:
        return np.frombuffer(base64.b64decode(data["bdata"]), dtype=np.dtype(data["dtype"]))
    return np.asarray(data)
