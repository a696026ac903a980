"""Writing and reading a test run with its trace, original file and figures.

A run is written in the caller's transaction, so a failure anywhere leaves
nothing behind (the importer opens one write session per file).
"""

from __future__ import annotations

import hashlib
from dataclasses import dataclass, field
from datetime import datetime
from typing import TYPE_CHECKING

from sqlalchemy import insert, select
from sqlalchemy.orm import Session

from logbook.analysis.catalog import METRICS, resolve_unit
from logbook.analysis.settings import AnalysisSettings
from logbook.store.blobs import (
    RAW_CODEC,
    SAMPLES_FORMAT,
    compress_raw,
    decode_samples,
    decompress_raw,
    encode_samples,
)
from logbook.store.models import (
    AnalysisResult,
    AnalysisSettingsRow,
    Axis,
    GainSet,
    HardwareRevision,
    TestRun,
    TraceChannel,
)
from logbook.store.models import Trace as TraceRow
from logbook.trace import Role, Trace

if TYPE_CHECKING:
    from logbook.analysis.results import TraceAnalysis


@dataclass(frozen=True)
class RunConditions:
    """Who took a run, when, and under which bench conditions (all optional but time)."""

    taken_at: datetime
    operator: str = ""
    supply_voltage_v: float | None = None
    load_value: float | None = None
    load_unit: str | None = None
    temperature_c: float | None = None
    notes: str = ""


@dataclass(frozen=True)
class RunEvidence:
    """A source file and the trace decoded from it, encoded as they are stored.

    Build it with :meth:`from_trace`; encoding (Parquet, compression, SHA-256) is
    the expensive part of a write and needs no database, so an importer does it on
    helper threads and hands the result to the one that writes.
    """

    source_name: str
    sha256: str
    raw_size: int
    raw_compressed: bytes
    samples: bytes
    sample_count: int
    channels: tuple[tuple[str, str, str], ...]  # (name, role, unit) in column order
    profile_name: str | None = None
    data_quality: dict[str, float] = field(default_factory=dict)

    @classmethod
    def from_trace(
        cls,
        source_name: str,
        raw_bytes: bytes,
        trace: Trace,
        *,
        sha256: str | None = None,
        profile_name: str | None = None,
    ) -> RunEvidence:
        """Encode ``raw_bytes`` and ``trace``; pass ``sha256`` when already known."""
        return cls.from_compressed(
            source_name,
            sha256 or file_digest(raw_bytes),
            len(raw_bytes),
            compress_raw(raw_bytes),
            trace,
            profile_name=profile_name,
        )

    @classmethod
    def from_compressed(
        cls,
        source_name: str,
        sha256: str,
        raw_size: int,
        raw_compressed: bytes,
        trace: Trace,
        *,
        profile_name: str | None = None,
    ) -> RunEvidence:
        """Encode ``trace`` beside an original file compressed earlier (by
        :func:`~logbook.store.blobs.compress_raw`), so that a caller can let go of the
        file's bytes before the trace is encoded."""
        return cls(
            source_name=source_name,
            sha256=sha256,
            raw_size=raw_size,
            raw_compressed=raw_compressed,
            samples=encode_samples(trace),
            sample_count=len(trace),
            channels=tuple((c.name, c.role.value, c.unit) for c in trace.channels),
            profile_name=profile_name,
            data_quality=dict(trace.quality),
        )


def file_digest(data: bytes) -> str:
    """The SHA-256 of a source file's bytes, as stored with its run."""
    return hashlib.sha256(data).hexdigest()


def find_run_by_hash(session: Session, axis: Axis, sha256: str) -> TestRun | None:
    """The run of ``axis`` imported from a file with this SHA-256, if any."""
    return session.scalar(
        select(TestRun).where(TestRun.axis_id == axis.id, TestRun.source_sha256 == sha256)
    )


def add_run(
    session: Session,
    *,
    axis: Axis,
    revision: HardwareRevision,
    gain_set: GainSet,
    test_kind: str,
    conditions: RunConditions,
    evidence: RunEvidence,
) -> TestRun:
    """Insert a run, its trace blob, channel roles and compressed original file."""
    run = TestRun(
        axis_id=axis.id,
        revision_id=revision.id,
        gain_set_id=gain_set.id,
        test_kind=test_kind,
        taken_at=conditions.taken_at,
        operator=conditions.operator,
        supply_voltage_v=conditions.supply_voltage_v,
        load_value=conditions.load_value,
        load_unit=conditions.load_unit,
        temperature_c=conditions.temperature_c,
        notes=conditions.notes,
        source_name=evidence.source_name,
        source_sha256=evidence.sha256,
        profile_name=evidence.profile_name,
        data_quality=dict(evidence.data_quality),
    )
    session.add(run)
    session.flush()
    session.add(
        TraceRow(
            run_id=run.id,
            sample_count=evidence.sample_count,
            samples_format=SAMPLES_FORMAT,
            samples=evidence.samples,
            raw_codec=RAW_CODEC,
            raw_size=evidence.raw_size,
            raw_bytes=evidence.raw_compressed,
            channels=[
                TraceChannel(position=i, name=name, role=role, unit=unit)
                for i, (name, role, unit) in enumerate(evidence.channels)
            ],
        )
    )
    session.flush()
    return run


def load_trace(session: Session, run: TestRun) -> Trace:
    """The run's decoded samples (reads the blob only now)."""
    row = session.get(TraceRow, run.id)
    if row is None:
        raise LookupError(f"run {run.id} has no trace")
    meta = [(c.name, c.role, c.unit) for c in row.channels]
    return decode_samples(row.samples, meta, run.data_quality)


def load_raw_file(session: Session, run: TestRun) -> bytes:
    """The original file's bytes, exactly as imported."""
    row = session.get(TraceRow, run.id)
    if row is None:
        raise LookupError(f"run {run.id} has no trace")
    return decompress_raw(row.raw_bytes, row.raw_size)


def settings_row(session: Session, settings: AnalysisSettings) -> AnalysisSettingsRow:
    """The stored row for ``settings`` (with the analysis version), created once."""
    digest = settings.content_hash()
    row = session.scalar(
        select(AnalysisSettingsRow).where(AnalysisSettingsRow.content_hash == digest)
    )
    if row is None:
        row = AnalysisSettingsRow(
            content_hash=digest,
            analysis_version=str(settings.to_dict()["analysis_version"]),
            rise_low=settings.rise_low,
            rise_high=settings.rise_high,
            band=settings.band,
            level_estimator=settings.level_estimator,
            settings=settings.to_dict(),
        )
        session.add(row)
        session.flush()
    return row


def save_analysis(session: Session, run: TestRun, analysis: TraceAnalysis) -> int:
    """Add the figures of ``analysis`` to ``run``; returns the number of rows added.

    Results under other settings are kept; results under the same settings and
    analysis version already stored for this run are an error (they never change).
    """
    settings = settings_row(session, analysis.settings)
    feedback = session.scalar(
        select(TraceChannel.unit).where(
            TraceChannel.run_id == run.id, TraceChannel.role == Role.FEEDBACK.value
        )
    )
    feedback_unit = feedback or ""
    rows = [
        {
            "run_id": run.id,
            "settings_id": settings.id,
            "step_index": step.index,
            "metric": name,
            "value": figure.value,
            "unit": resolve_unit(METRICS[name].unit, feedback_unit) if name in METRICS else "",
            "reason": figure.reason,
        }
        for step in analysis.steps
        for name, figure in step.figures.items()
    ]
    if rows:  # one executemany, not an ORM object per figure
        session.execute(insert(AnalysisResult.__table__), rows)
    return len(rows)
