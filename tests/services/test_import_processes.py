"""Import under hostile conditions: a killed process, and several writers at once.

These start real ``logbook import`` processes, so they are marked slow.
"""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest
from sqlalchemy import func, select, text

from logbook.services import catalog
from logbook.store.engine import Database
from logbook.store.models import AnalysisResult, TestRun, Trace
from tests.services.capture_files import write_batch

pytestmark = pytest.mark.slow


def _prepare(database: Database) -> None:
    with database.session(write=True) as session:
        catalog.add_axis(session, "x-stage", position_unit="mm", feedback_kind="encoder")
        catalog.add_revision(session, "x-stage", "A")
        catalog.add_gain_set(
            session, catalog.GainParams(kp=3, ki=20, kd=0.01, loop_rate_hz=1000), name="base"
        )


def _command(url: str, folder: Path) -> list[str]:
    return [
        sys.executable,
        "-m",
        "logbook",
        "import",
        str(folder),
        "--axis",
        "x-stage",
        "--rev",
        "A",
        "--gains",
        "base",
        "--json",
        "--db",
        url,
    ]


def _url(database: Database) -> str:
    return database.url.render_as_string(hide_password=False)


def _run_count(database: Database) -> int:
    with database.session() as session:
        return session.scalar(select(func.count()).select_from(TestRun))


def _assert_consistent(database: Database) -> None:
    with database.session() as session:
        orphans = session.scalar(
            select(func.count())
            .select_from(TestRun)
            .where(
                ~TestRun.id.in_(select(Trace.run_id))
                | ~TestRun.id.in_(select(AnalysisResult.run_id))
            )
        )
        assert orphans == 0, "a run without its trace or its figures"
        hashes = session.execute(
            select(TestRun.source_sha256, func.count()).group_by(TestRun.source_sha256)
        )
        assert all(n == 1 for _, n in hashes)
    if database.dialect == "sqlite":
        with database.engine.connect() as connection:
            assert connection.execute(text("PRAGMA integrity_check")).scalar() == "ok"
            assert connection.execute(text("PRAGMA foreign_key_check")).fetchall() == []


def test_sigkill_mid_batch_leaves_a_consistent_logbook_and_a_rerun_completes(
    database: Database, tmp_path: Path
) -> None:
    _prepare(database)
    folder = tmp_path / "caps"
    write_batch(folder, 40)
    process = subprocess.Popen(
        _command(_url(database), folder), stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL
    )
    deadline = time.monotonic() + 120
    while _run_count(database) < 5 and time.monotonic() < deadline and process.poll() is None:
        time.sleep(0.05)
    os.kill(process.pid, signal.SIGKILL)
    process.wait()
    assert process.returncode == -signal.SIGKILL, "the batch finished before it could be killed"
    killed_at = _run_count(database)
    assert 5 <= killed_at < 40
    _assert_consistent(database)

    rerun = subprocess.run(
        _command(_url(database), folder), capture_output=True, text=True, check=False
    )
    assert rerun.returncode == 0, rerun.stdout + rerun.stderr
    assert _run_count(database) == 40
    assert rerun.stdout.count('"outcome": "duplicate"') == killed_at
    _assert_consistent(database)


def test_four_processes_import_at_once_without_loss_or_duplicates(
    database: Database, tmp_path: Path
) -> None:
    _prepare(database)
    folders = []
    for worker in range(4):
        folder = tmp_path / f"worker{worker}"
        write_batch(folder, 50, start_seed=worker * 1000)
        folders.append(folder)
    shared = tmp_path / "shared"  # every process also imports the same 5 files
    write_batch(shared, 5, start_seed=99_000)
    processes = [
        subprocess.Popen(
            [*_command(_url(database), folder), str(shared)],
            stdout=subprocess.PIPE,
            stderr=subprocess.PIPE,
            text=True,
        )
        for folder in folders
    ]
    outputs = [p.communicate(timeout=600) for p in processes]
    for process, (out, err) in zip(processes, outputs, strict=True):
        assert process.returncode == 0, out[-2000:] + err[-2000:]
    assert _run_count(database) == 4 * 50 + 5
    shared_outcomes: dict[str, list[str]] = {}
    for out, _ in outputs:
        for line in out.splitlines():
            result = json.loads(line)
            if "/shared/" in result["file"]:
                shared_outcomes.setdefault(result["file"], []).append(result["outcome"])
    assert len(shared_outcomes) == 5
    for outcomes in shared_outcomes.values():
        assert sorted(outcomes) == ["duplicate"] * 3 + ["imported"]
    _assert_consistent(database)
