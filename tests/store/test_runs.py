"""Runs: duplicate source hashes, bit-exact trace round trip, UTC timestamps, locks."""

from __future__ import annotations

import io
import struct
from datetime import UTC, datetime, timedelta, timezone

import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq
import pytest
from sqlalchemy import delete, select, text, update
from sqlalchemy.exc import IntegrityError

from logbook.errors import LockedError
from logbook.services import catalog
from logbook.store.blobs import decode_samples, encode_samples
from logbook.store.engine import Database
from logbook.store.models import (
    AcceptanceReport,
    AnalysisSettingsRow,
    ReportRun,
    Spec,
    TestRun,
    TraceChannel,
)
from logbook.store.runs import load_raw_file, load_trace
from logbook.trace import Channel, Role, Trace
from tests.store.helpers import seed_axis, seed_run


def _bits(values: np.ndarray) -> list[bytes]:
    return [struct.pack("<d", v) for v in values]


def test_trace_blob_round_trip_is_bit_exact() -> None:
    payload_nan = struct.unpack("<d", struct.pack("<Q", 0x7FF8_0000_DEAD_BEEF))[0]
    awkward = np.array(
        [
            0.0,
            -0.0,
            np.nan,
            payload_nan,
            np.inf,
            -np.inf,
            1e308,
            -1e-308,
            5e-324,
            1 / 3,
            2.0**53 + 1,
        ]
    )
    trace = Trace(
        channels=(
            Channel("t [s]", Role.TIME, "s", np.arange(len(awkward), dtype=float)),
            Channel("value", Role.FEEDBACK, "mm", awkward),
        )
    )
    back = decode_samples(
        encode_samples(trace), [("t [s]", "time", "s"), ("value", "feedback", "mm")]
    )
    assert _bits(back.channels[1].values) == _bits(awkward)
    assert back.channels[1].values.dtype == np.float64


def test_traces_written_with_the_earlier_zstd_codec_still_decode() -> None:
    values = np.linspace(-1.0, 1.0, 1_000) ** 3
    table = pa.table({"t [s]": np.arange(1_000) / 1e3, "value": values})
    sink = io.BytesIO()
    pq.write_table(table, sink, compression="zstd", compression_level=1)  # "parquet-zstd-v1"
    back = decode_samples(sink.getvalue(), [("t [s]", "time", "s"), ("value", "feedback", "mm")])
    assert _bits(back.channels[1].values) == _bits(values)


def test_run_round_trip_through_the_database(database: Database) -> None:
    raw = b"t,sp,fb\n0,0,0\n" * 100
    with database.session(write=True) as session:
        seed_axis(session)
        run_id = seed_run(session, raw=raw).id
    with database.session() as session:
        run = session.get(TestRun, run_id)
        assert run is not None
        assert load_raw_file(session, run) == raw
        trace = load_trace(session, run)
        assert [c.role for c in trace.channels] == [Role.TIME, Role.SETPOINT, Role.FEEDBACK]
        assert trace.by_role(Role.FEEDBACK).unit == "mm"
        assert run.taken_at == datetime(2026, 11, 3, 9, 30, tzinfo=UTC)
        assert run.taken_at.tzinfo is not None and run.imported_at.utcoffset() == timedelta(0)


def test_second_import_of_the_same_file_is_refused(database: Database) -> None:
    with database.session(write=True) as session:
        seed_axis(session)
        seed_run(session, raw=b"same bytes")
    with pytest.raises(IntegrityError), database.session(write=True) as session:
        seed_run(session, raw=b"same bytes", rev="C")
    with database.session() as session:
        assert len(catalog.list_runs(session, axis="x-stage")) == 1


def test_timestamps_are_converted_to_utc_and_naive_ones_refused(database: Database) -> None:
    with database.session(write=True) as session:
        seed_axis(session)
        run = seed_run(session)
        run.taken_at = datetime(2026, 11, 3, 10, 30, tzinfo=timezone(timedelta(hours=1)))
    with database.session() as session:
        assert session.get(TestRun, run.id).taken_at == datetime(2026, 11, 3, 9, 30, tzinfo=UTC)
    with (
        pytest.raises(Exception, match="has no time zone"),
        database.session(write=True) as session,
    ):
        session.get(TestRun, run.id).taken_at = datetime(2026, 11, 3, 9, 30)
        session.flush()


def _issue_report(database: Database, run_id: int) -> None:
    with database.session(write=True) as session:
        spec = Spec(
            name="s", version="1", test_kind="position_step", statistic="median", required_runs=1
        )
        settings = AnalysisSettingsRow(
            content_hash="0" * 64,
            analysis_version="t",
            rise_low=0.1,
            rise_high=0.9,
            band=0.02,
            level_estimator="t",
            settings={},
        )
        session.add_all([spec, settings])
        session.flush()
        run = session.get(TestRun, run_id)
        report = AcceptanceReport(
            spec_id=spec.id,
            axis_id=run.axis_id,
            revision_id=run.revision_id,
            settings_id=settings.id,
            decision_rule="simple",
            verdict="pass",
            content_hash="f" * 64,
            software_version="t",
        )
        session.add(report)
        session.flush()
        session.add(ReportRun(report_id=report.id, run_id=run_id))


def test_reported_runs_are_locked(database: Database) -> None:
    with database.session(write=True) as session:
        seed_axis(session)
        locked_id = seed_run(session, raw=b"locked").id
        free_id = seed_run(session, raw=b"free").id
    _issue_report(database, locked_id)

    attempts = [
        update(TestRun).where(TestRun.id == locked_id).values(notes="edited"),
        delete(TestRun).where(TestRun.id == locked_id),
        update(TraceChannel).where(TraceChannel.run_id == locked_id).values(unit="in"),
        delete(ReportRun),
        update(AcceptanceReport).values(verdict="fail"),
    ]
    for statement in attempts:
        with pytest.raises(LockedError), database.session(write=True) as session:
            session.execute(statement)
    with (
        pytest.raises(LockedError, match="issued acceptance report"),
        database.session(write=True) as session,
    ):
        session.get(TestRun, locked_id).operator = "someone else"
    with database.session(write=True) as session:  # unreported runs stay editable
        session.execute(update(TestRun).where(TestRun.id == free_id).values(notes="fine"))
        session.execute(delete(TestRun).where(TestRun.id == free_id))
    with database.session() as session:
        assert session.get(TestRun, locked_id).notes == ""
        assert session.scalar(select(TestRun).where(TestRun.id == free_id)) is None


def test_sqlite_runs_in_wal_mode_with_foreign_keys(database: Database) -> None:
    if database.dialect != "sqlite":
        pytest.skip("SQLite pragmas")
    with database.engine.connect() as connection:
        assert connection.exec_driver_sql("PRAGMA journal_mode").scalar() == "wal"
        assert connection.exec_driver_sql("PRAGMA foreign_keys").scalar() == 1
        assert connection.exec_driver_sql("PRAGMA busy_timeout").scalar() == 60000
        assert connection.execute(text("PRAGMA integrity_check")).scalar() == "ok"
