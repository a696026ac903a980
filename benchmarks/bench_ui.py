"""Benchmark: first render of every page of the web front end on a logbook of 10,000 runs.

Run:  python benchmarks/bench_ui.py [--runs 10000]

Builds the logbook of ``bench_regressions.py`` (3 axes, 10 revisions each, 3 gain
sets, RUNS runs with a trace blob and 11 figures each, by bulk insert) plus one
spec per axis, then renders each page with Streamlit's AppTest:

* **first render**: every cache emptied first, so the page runs all its queries
  (what the first visitor after a change waits for);
* **again**: the same page re-run at once, from the caches (what every later
  click costs).

The overview renders its cards at once and fills in the regression findings from a
worker thread; the time until every axis's findings are shown is printed too.

The runs page is also timed with one run opened (its trace loaded). Python's
imports are paid once before timing. Target (issue 8): each first render < 2 s.
"""

from __future__ import annotations

import argparse
import os
import tempfile
import time
from pathlib import Path

import streamlit as st
from bench_regressions import AXES, build  # the same 10,000-run logbook
from streamlit.testing.v1 import AppTest

import logbook.ui
from logbook.acceptance.spec_file import spec_from_mapping
from logbook.services import specs
from logbook.store.config import ENV_VAR, resolve_url
from logbook.store.engine import Database
from logbook.store.migrate import init_database

APP = Path(logbook.ui.__file__).parent / "app.py"
PAGES = (
    ("overview", None),
    ("runs", "pages_runs.py"),
    ("trends", "pages_trends.py"),
    ("acceptance", "pages_acceptance.py"),
    ("import", "pages_import.py"),
    ("setup", "pages_setup.py"),
)
TARGET_S = 2.0


def add_specs(database: Database) -> None:
    with database.session(write=True) as session:
        for axis in AXES:
            spec = {
                "name": f"{axis}-acceptance",
                "version": "1.0",
                "test_kind": "position_step",
                "axes": [axis],
                "statistic": "median",
                "required_runs": 5,
                "limits": {
                    "overshoot_pct": {"upper": 10.0, "unit": "%"},
                    "settling_time_s": {"upper": 0.15, "unit": "s"},
                    "rise_time_s": {"upper": 0.05, "unit": "s"},
                },
            }
            specs.add_spec(session, spec_from_mapping(spec))


SCANNING = "Comparing each revision with its parent…"


def scanning(at: AppTest) -> bool:
    return any(SCANNING in str(c.value) for c in at.caption)


def findings_after(started: float) -> float:
    """Seconds from ``started`` until the overview shows every axis's findings."""
    at = AppTest.from_file(APP, default_timeout=120).run()
    while scanning(at):
        time.sleep(0.05)
        at.run()
    return time.perf_counter() - started


def render(page: str | None, *, open_run: bool = False) -> tuple[float, float]:
    """(first render with empty caches, re-run from the caches) of ``page``, in s."""
    at = AppTest.from_file(APP, default_timeout=120).run()
    st.cache_data.clear()
    started = time.perf_counter()
    if page is not None:
        at.switch_page(page)
    at.run()
    if open_run:
        key = at.dataframe[0].key
        at.session_state[key] = {"selection": {"rows": [0], "columns": [], "cells": []}}
        started = time.perf_counter()  # only the opening: the table is already shown
        at.run()
    first = time.perf_counter() - started
    problems = [e.value for e in (*at.exception, *at.error)]
    if problems:  # a page that failed did not render: its time would mean nothing
        raise SystemExit(f"{page or 'overview'} did not render: {problems}")
    started = time.perf_counter()
    at.run()
    return first, time.perf_counter() - started


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--runs", type=int, default=10_000)
    args = parser.parse_args()
    with tempfile.TemporaryDirectory(prefix="bench-ui-") as folder:
        path = Path(folder) / "logbook.db"
        database = Database(resolve_url(str(path)))
        init_database(database)
        started = time.perf_counter()
        build(database, args.runs, seed=1)
        add_specs(database)
        database.dispose()
        print(f"built {args.runs} runs in {time.perf_counter() - started:.1f} s")
        os.environ[ENV_VAR] = str(path)
        render(None)  # pay the imports once
        rows = []
        for name, page in PAGES:
            started = time.perf_counter()
            rows.append((name, *render(page)))
            if page is None:  # let the overview's background scans finish first
                print(f"  overview findings complete after {findings_after(started):.2f} s")
        rows.append(("runs, one run opened", *render("pages_runs.py", open_run=True)))
        st.cache_resource.clear()
    print(f"{'page':<22} {'first render':>13} {'again':>8}  target {TARGET_S:g} s")
    for name, first, again in rows:
        mark = "ok" if first < TARGET_S else "SLOW"
        print(f"{name:<22} {first:>11.2f} s {again:>6.2f} s  {mark}")


if __name__ == "__main__":
    main()
