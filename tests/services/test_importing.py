"""Import: one transaction per file, duplicates skipped, dry runs, metadata conflicts."""

from __future__ import annotations

import math
from dataclasses import replace
from pathlib import Path

import pytest
from sqlalchemy import func, select

from logbook.errors import InputError
from logbook.ingest.metadata import RunFields
from logbook.ingest.profiles import profile_from_dict
from logbook.services import catalog, profiles
from logbook.services.importing import (
    ColumnChoice,
    ImportRequest,
    Outcome,
    import_batch,
    import_files,
)
from logbook.store import runs as store_runs
from logbook.store.engine import Database
from logbook.store.models import AnalysisResult, TestRun, Trace
from tests.services.capture_files import write_batch, write_capture


@pytest.fixture
def bench(database: Database) -> Database:
    with database.session(write=True) as session:
        catalog.add_axis(session, "x-stage", position_unit="mm", feedback_kind="encoder")
        catalog.add_revision(session, "x-stage", "A")
        catalog.add_revision(session, "x-stage", "B", parent="A")
        catalog.add_gain_set(
            session, catalog.GainParams(kp=3, ki=20, kd=0.01, loop_rate_hz=1000), name="base"
        )
    return database


def count(database: Database, model: type) -> int:
    with database.session() as session:
        return session.scalar(select(func.count()).select_from(model))


REQUEST = ImportRequest(axis="x-stage", gains="base", run_fields=RunFields(revision="A"))


def test_a_batch_imports_each_file_with_trace_raw_bytes_and_figures(
    bench: Database, tmp_path: Path
) -> None:
    files = write_batch(tmp_path / "caps", 3)
    results = import_files(bench, [str(tmp_path / "caps")], REQUEST)
    assert [r.outcome for r in results] == [Outcome.IMPORTED] * 3
    with bench.session() as session:
        run = session.get(TestRun, results[0].run_id)
        assert store_runs.load_raw_file(session, run) == files[0].read_bytes()
        assert run.revision.label == "A" and run.gain_set.name == "base"
        settling = session.scalar(
            select(AnalysisResult.value).where(
                AnalysisResult.run_id == run.id, AnalysisResult.metric == "settling_time_s"
            )
        )
    # First-order response: 2 % settling = tau·ln 50 (follows from the exponential), within
    # a sample period plus the noise's effect on the band crossing.
    assert settling == pytest.approx(0.02 * math.log(50), abs=0.004)


def test_reimport_is_detected_by_hash_and_skipped(bench: Database, tmp_path: Path) -> None:
    write_batch(tmp_path / "caps", 2)
    import_files(bench, [str(tmp_path / "caps")], REQUEST)
    again = import_files(bench, [str(tmp_path / "caps" / "*.csv")], REQUEST)
    assert [r.outcome for r in again] == [Outcome.DUPLICATE] * 2
    assert "same SHA-256" in again[0].message
    assert count(bench, TestRun) == 2


def test_one_bad_file_never_stops_the_batch(bench: Database, tmp_path: Path) -> None:
    caps = tmp_path / "caps"
    write_batch(caps, 2)
    (caps / "capture_0000x.csv").write_text(
        "t [s],setpoint [mm],position [mm]\n0,0,0\n0.001,1,oops\n0.002,1,1\n"
    )
    results = import_files(bench, [str(caps), str(tmp_path / "missing.csv")], REQUEST)
    outcomes = {Path(r.path).name: r for r in results}
    assert outcomes["missing.csv"].outcome is Outcome.REJECTED
    bad = outcomes["capture_0000x.csv"]
    assert bad.outcome is Outcome.REJECTED
    assert "capture_0000x.csv, line 3, column 'position [mm]'" in bad.message
    assert sum(r.outcome is Outcome.IMPORTED for r in results) == 2


@pytest.mark.parametrize("ahead_bytes", [64 << 20, 1], ids=["in-budget", "one-at-a-time"])
def test_files_prepared_ahead_come_back_in_order(
    bench: Database, tmp_path: Path, monkeypatch: pytest.MonkeyPatch, ahead_bytes: int
) -> None:
    """Files are prepared on helper threads while another is written; the outcomes
    still follow the input, a bad file in the middle changes nothing else, and the
    same bytes twice in one batch are caught when the second is written."""
    monkeypatch.setattr("logbook.services.importing.PREPARE_AHEAD_BYTES", ahead_bytes)
    good = write_batch(tmp_path / "caps", 4)
    bad = tmp_path / "caps" / "bad.csv"
    bad.write_text("t [s],setpoint [mm],position [mm]\n0,0,0\n0.001,1\n")
    twin = tmp_path / "twin.csv"
    twin.write_bytes(good[0].read_bytes())
    order = [good[0], good[1], bad, twin, good[2], good[3]]
    results = import_batch(bench, [(path, REQUEST) for path in order])
    assert [r.path for r in results] == [str(path) for path in order]
    assert [r.outcome for r in results] == [
        Outcome.IMPORTED,
        Outcome.IMPORTED,
        Outcome.REJECTED,
        Outcome.DUPLICATE,
        Outcome.IMPORTED,
        Outcome.IMPORTED,
    ]
    assert "imported meanwhile as run" in results[3].message
    assert count(bench, TestRun) == 4
    with bench.session() as session:
        for path, result in zip(order, results, strict=True):
            if result.outcome is Outcome.IMPORTED:
                run = session.get(TestRun, result.run_id)
                assert store_runs.load_raw_file(session, run) == path.read_bytes()


def test_dry_run_writes_nothing(bench: Database, tmp_path: Path) -> None:
    write_batch(tmp_path / "caps", 2)
    results = import_files(bench, [str(tmp_path / "caps")], replace(REQUEST, dry_run=True))
    assert [r.outcome for r in results] == [Outcome.CHECKED] * 2
    assert results[0].steps[0]["overshoot_pct"] is not None
    assert count(bench, TestRun) == 0


def test_a_failure_while_writing_leaves_nothing(
    bench: Database, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    write_capture(tmp_path / "one.csv")

    def broken(*_args: object) -> int:
        raise InputError("simulated failure after the run row was written")

    monkeypatch.setattr("logbook.services.importing.save_analysis", broken)
    results = import_files(bench, [str(tmp_path / "one.csv")], REQUEST)
    assert results[0].outcome is Outcome.REJECTED
    assert (count(bench, TestRun), count(bench, Trace), count(bench, AnalysisResult)) == (0, 0, 0)


def test_metadata_fills_fields_and_the_command_line_wins(bench: Database, tmp_path: Path) -> None:
    meta = {
        "operator": "Ines Varga",
        "date": "2026-11-20T10:15:00+01:00",
        "revision": "B",
        "supply_voltage_v": "23.9",
        "temperature_c": "21.5",
        "load": "0.50 kg",
    }
    write_capture(tmp_path / "m.csv", metadata=meta)
    request = ImportRequest(
        axis="x-stage", gains="base", run_fields=RunFields(operator="Tom Reyes")
    )
    [result] = import_files(bench, [str(tmp_path / "m.csv")], request)
    assert result.outcome is Outcome.IMPORTED
    assert any(c.startswith("operator:") for c in result.conflicts)
    with bench.session() as session:
        run = session.get(TestRun, result.run_id)
        assert run.operator == "Tom Reyes"
        assert run.revision.label == "B"
        assert (run.supply_voltage_v, run.temperature_c, run.load_value, run.load_unit) == (
            23.9,
            21.5,
            0.5,
            "kg",
        )
        assert run.taken_at.isoformat() == "2026-11-20T09:15:00+00:00"


def test_unknown_revision_and_missing_gains_are_clear(bench: Database, tmp_path: Path) -> None:
    write_capture(tmp_path / "r.csv")
    [result] = import_files(
        bench,
        [str(tmp_path / "r.csv")],
        ImportRequest(axis="x-stage", gains="base", run_fields=RunFields(revision="Z")),
    )
    assert result.outcome is Outcome.REJECTED and "unknown revision 'Z'" in result.message
    [result] = import_files(
        bench,
        [str(tmp_path / "r.csv")],
        ImportRequest(axis="x-stage", run_fields=RunFields(revision="A")),
    )
    assert result.outcome is Outcome.REJECTED and "no gain set" in result.message


def test_inline_gains_are_stored_once(bench: Database, tmp_path: Path) -> None:
    write_batch(tmp_path / "caps", 2)
    inline = catalog.GainParams(kp=5, ki=0, kd=0.02, loop_rate_hz=2000)
    request = ImportRequest(axis="x-stage", inline_gains=inline, run_fields=RunFields(revision="A"))
    results = import_files(bench, [str(tmp_path / "caps")], request)
    assert [r.outcome for r in results] == [Outcome.IMPORTED] * 2
    with bench.session() as session:
        assert len(catalog.list_gain_sets(session)) == 2
        assert {r.gain_set_id for r in catalog.list_runs(session)} == {2}


def test_stored_profile_and_column_options(bench: Database, tmp_path: Path) -> None:
    path = tmp_path / "renamed.csv"
    write_capture(path)
    path.write_text(path.read_text().replace("position [mm]", "enc_pos [mm]"))
    [rejected] = import_files(bench, [str(path)], REQUEST)
    assert rejected.outcome is Outcome.REJECTED and "no feedback column found" in rejected.message
    [by_option] = import_files(
        bench,
        [str(path)],
        replace(REQUEST, columns=ColumnChoice(feedback="enc_pos [mm]"), dry_run=True),
    )
    assert by_option.outcome is Outcome.CHECKED
    with bench.session(write=True) as session:
        profiles.add_profile(
            session,
            profile_from_dict(
                {
                    "name": "renamed",
                    "axis": "x-stage",
                    "time_column": "t [s]",
                    "setpoint_column": "setpoint [mm]",
                    "setpoint_unit": "mm",
                    "feedback_column": "enc_pos [mm]",
                    "feedback_unit": "mm",
                }
            ),
        )
    [by_profile] = import_files(bench, [str(path)], replace(REQUEST, profile="renamed"))
    assert by_profile.outcome is Outcome.IMPORTED
    with bench.session() as session:
        run = session.get(TestRun, by_profile.run_id)
        assert run.profile_name == "renamed"
        trace = store_runs.load_trace(session, run)
        assert trace.by_role(store_runs.Role.FEEDBACK).unit == "mm"


MALFORMED = Path(__file__).resolve().parents[1] / "ingest" / "malformed"


def test_every_malformed_file_is_rejected_in_one_line_and_nothing_is_written(
    bench: Database,
) -> None:
    files = sorted(MALFORMED.glob("*.csv"))
    assert len(files) >= 25
    results = import_files(bench, [str(MALFORMED)], REQUEST)
    assert len(results) == len(files)
    for result in results:
        assert result.outcome is Outcome.REJECTED, result.path
        assert result.message.startswith(result.path), result.message
        assert "\n" not in result.message
    assert (count(bench, TestRun), count(bench, Trace), count(bench, AnalysisResult)) == (0, 0, 0)
