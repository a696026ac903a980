"""A small logbook built through the public services, for the UI and view tests.

Two axes; x-stage has the lineage A -> B -> C with first-order responses whose
time constant is 20 ms on A and C and 30 ms on B, so B is slower (rise time
tau·ln 9, 2 % settling tau·ln 50: 44 ms / 78 ms against 66 ms / 117 ms) and fails
the spec's 100 ms settling limit, while A and C pass it.
"""

from __future__ import annotations

import shutil
from datetime import date
from pathlib import Path

import pytest

from logbook.acceptance.spec_file import spec_from_mapping
from logbook.services import catalog, specs
from logbook.services.importing import ImportRequest, Outcome, import_files
from logbook.store.config import resolve_url
from logbook.store.engine import Database
from logbook.store.migrate import init_database
from tests.services.capture_files import write_capture

SPEC_NAME = "x-stage-step"
#: (axis, revision, gains, operator, tau in s, runs) for each group of captures.
GROUPS = (
    ("x-stage", "A", "base", "dana", 0.020, 8),
    ("x-stage", "B", "base", "lee", 0.030, 8),
    ("x-stage", "C", "stiff", "dana", 0.020, 3),
    ("y-stage", "R1", "base", "lee", 0.025, 2),
)


def build_small_logbook(db_path: Path, captures: Path) -> list[Path]:
    """Create the logbook at ``db_path``; returns the capture files imported."""
    database = Database(resolve_url(str(db_path)))
    try:
        init_database(database)
        with database.session(write=True) as session:
            for axis in ("x-stage", "y-stage"):
                catalog.add_axis(session, axis, position_unit="mm", feedback_kind="encoder")
            catalog.add_revision(session, "x-stage", "A", revision_date=date(2026, 3, 1))
            catalog.add_revision(
                session,
                "x-stage",
                "B",
                parent="A",
                revision_date=date(2026, 4, 1),
                change_category="mechanical",
                change_summary="softer coupling",
            )
            catalog.add_revision(
                session, "x-stage", "C", parent="B", revision_date=date(2026, 5, 1)
            )
            catalog.add_revision(session, "y-stage", "R1", revision_date=date(2026, 3, 1))
            gains = catalog.GainParams(kp=3.0, ki=20.0, kd=0.01, loop_rate_hz=1000.0)
            catalog.add_gain_set(session, gains, name="base")
            catalog.add_gain_set(
                session,
                catalog.GainParams(kp=4.0, ki=20.0, kd=0.01, loop_rate_hz=1000.0),
                name="stiff",
            )
            specs.add_spec(session, spec_from_mapping(SPEC))
        captures.mkdir(parents=True, exist_ok=True)
        files = []
        seed = 0
        for group, (axis, revision, gain_set, operator, tau, count) in enumerate(GROUPS):
            for i in range(count):
                seed += 1
                metadata = {
                    "axis": axis,
                    "revision": revision,
                    "gains": gain_set,
                    "operator": operator,
                    "test_kind": "position_step",
                    "date": f"2026-0{3 + group % 3}-{10 + i:02d}T09:00:00+00:00",
                }
                files.append(
                    write_capture(
                        captures / f"{axis}_{revision}_{i}.csv",
                        seed=seed,
                        tau=tau,
                        metadata=metadata,
                    )
                )
        results = import_files(database, [str(f) for f in files], ImportRequest())
        assert all(r.outcome is Outcome.IMPORTED for r in results), [r.message for r in results]
        return files
    finally:
        database.dispose()


SPEC = {
    "name": SPEC_NAME,
    "version": "1.0",
    "test_kind": "position_step",
    "axes": ["x-stage"],
    "statistic": "median",
    "required_runs": 3,
    "limits": {
        "overshoot_pct": {"upper": 10.0, "unit": "%"},
        "settling_time_s": {"upper": 0.100, "unit": "s"},
        "rise_time_s": {"upper": 0.080, "unit": "s"},
    },
}


@pytest.fixture(scope="session")
def small_logbook_template(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """The small logbook, built once per test session (copy it before changing it)."""
    folder = tmp_path_factory.mktemp("small-logbook")
    build_small_logbook(folder / "logbook.db", folder / "captures")
    return folder / "logbook.db"


@pytest.fixture
def small_logbook(small_logbook_template: Path, tmp_path: Path) -> Path:
    """A private copy of the small logbook for one test."""
    path = tmp_path / "logbook.db"
    shutil.copyfile(small_logbook_template, path)
    return path
