"""SQLAlchemy 2.0 models: the logbook's schema.

The schema is owned by the Alembic migrations in ``migrations/``; a test fails when
these models and the newest migration disagree. Conventions:

* every timestamp is a :class:`~logbook.store.types.UTCDateTime` (aware, UTC);
* enumerations are strings guarded by CHECK constraints, so both engines agree;
* a run's hardware revision must belong to the run's axis, and a revision's parent
  to the same axis: both are enforced by composite foreign keys;
* runs referenced by an issued acceptance report are locked by database triggers
  (created in the migrations), so no code path can edit or delete them.
"""

from __future__ import annotations

from datetime import date, datetime
from typing import Any

from sqlalchemy import (
    JSON,
    CheckConstraint,
    Date,
    Float,
    ForeignKey,
    ForeignKeyConstraint,
    Index,
    Integer,
    LargeBinary,
    MetaData,
    String,
    Text,
    UniqueConstraint,
)
from sqlalchemy.orm import DeclarativeBase, Mapped, deferred, mapped_column, relationship

from logbook.store.types import UTCDateTime, utc_now

NAMING_CONVENTION = {
    "ix": "ix_%(column_0_label)s",
    "uq": "uq_%(table_name)s_%(column_0_N_name)s",
    "ck": "ck_%(table_name)s_%(constraint_name)s",
    "fk": "fk_%(table_name)s_%(column_0_N_name)s_%(referred_table_name)s",
    "pk": "pk_%(table_name)s",
}

POSITION_UNITS = ("deg", "mm", "rad", "counts")
FEEDBACK_KINDS = ("encoder", "potentiometer", "other")
CHANGE_CATEGORIES = ("mechanical", "electrical", "firmware", "other")
TEST_KINDS = ("position_step", "speed_step", "ramp", "other")
CHANNEL_ROLES = ("time", "setpoint", "feedback", "effort", "other")
ANTI_WINDUP_MODES = ("none", "clamp", "conditional", "back_calculation")
SPEC_STATISTICS = ("every_run", "median", "p95")
GAIN_FORM = "parallel"  # u = Kp·e + Ki·∫e dt + Kd·de/dt


def _one_of(column: str, values: tuple[str, ...]) -> str:
    quoted = ", ".join(f"'{v}'" for v in values)
    return f"{column} IN ({quoted})"


class Base(DeclarativeBase):
    metadata = MetaData(naming_convention=NAMING_CONVENTION)

    def as_dict(self) -> dict[str, Any]:
        """The row's plain columns (deferred blobs excluded), for JSON output."""
        return {c.key: getattr(self, c.key) for c in self.__mapper__.column_attrs if not c.deferred}


class Axis(Base):
    """A motion axis under test."""

    __tablename__ = "axes"
    __table_args__ = (
        CheckConstraint(_one_of("position_unit", POSITION_UNITS), name="position_unit"),
        CheckConstraint(_one_of("feedback_kind", FEEDBACK_KINDS), name="feedback_kind"),
        CheckConstraint("counts_per_rev IS NULL OR counts_per_rev > 0", name="counts_per_rev"),
        CheckConstraint("units_per_rev IS NULL OR units_per_rev > 0", name="units_per_rev"),
        CheckConstraint(
            "(cal_raw_1 IS NULL AND cal_value_1 IS NULL AND cal_raw_2 IS NULL"
            " AND cal_value_2 IS NULL) OR (cal_raw_1 IS NOT NULL AND cal_value_1 IS NOT NULL"
            " AND cal_raw_2 IS NOT NULL AND cal_value_2 IS NOT NULL AND cal_raw_1 <> cal_raw_2)",
            name="calibration",
        ),
    )

    id: Mapped[int] = mapped_column(primary_key=True)
    name: Mapped[str] = mapped_column(String(100), unique=True)
    description: Mapped[str] = mapped_column(Text, default="")
    position_unit: Mapped[str] = mapped_column(String(16))
    feedback_kind: Mapped[str] = mapped_column(String(16))
    counts_per_rev: Mapped[int | None] = mapped_column(Integer)
    units_per_rev: Mapped[float | None] = mapped_column(Float)
    # Two-point calibration of analogue feedback: raw reading -> position unit.
    cal_raw_1: Mapped[float | None] = mapped_column(Float)
    cal_value_1: Mapped[float | None] = mapped_column(Float)
    cal_raw_2: Mapped[float | None] = mapped_column(Float)
    cal_value_2: Mapped[float | None] = mapped_column(Float)
    notes: Mapped[str] = mapped_column(Text, default="")
    created_at: Mapped[datetime] = mapped_column(UTCDateTime, default=utc_now)

    revisions: Mapped[list[HardwareRevision]] = relationship(
        back_populates="axis", order_by="HardwareRevision.id"
    )


class HardwareRevision(Base):
    """One build state of an axis; ``parent`` links form its lineage."""

    __tablename__ = "hardware_revisions"
    __table_args__ = (
        UniqueConstraint("axis_id", "label"),
        UniqueConstraint("id", "axis_id"),
        # The parent must be a revision of the same axis.
        ForeignKeyConstraint(
            ["parent_id", "axis_id"],
            ["hardware_revisions.id", "hardware_revisions.axis_id"],
            name="fk_hardware_revisions_parent_same_axis",
        ),
        CheckConstraint(_one_of("change_category", CHANGE_CATEGORIES), name="change_category"),
        CheckConstraint("parent_id IS NULL OR parent_id <> id", name="not_own_parent"),
    )

    id: Mapped[int] = mapped_column(primary_key=True)
    axis_id: Mapped[int] = mapped_column(ForeignKey("axes.id", ondelete="RESTRICT"))
    label: Mapped[str] = mapped_column(String(64))
    parent_id: Mapped[int | None] = mapped_column(Integer, index=True)
    revision_date: Mapped[date | None] = mapped_column(Date)
    change_category: Mapped[str] = mapped_column(String(16), default="other")
    change_summary: Mapped[str] = mapped_column(Text, default="")
    created_at: Mapped[datetime] = mapped_column(UTCDateTime, default=utc_now)

    axis: Mapped[Axis] = relationship(back_populates="revisions")
    parent: Mapped[HardwareRevision | None] = relationship(
        remote_side="HardwareRevision.id",
        foreign_keys=[parent_id],
        primaryjoin="HardwareRevision.parent_id == HardwareRevision.id",
    )


class GainSet(Base):
    """PID gains in parallel form; identical content is one row (``content_hash``)."""

    __tablename__ = "gain_sets"
    __table_args__ = (
        CheckConstraint(f"form = '{GAIN_FORM}'", name="form"),
        CheckConstraint("loop_rate_hz > 0", name="loop_rate"),
        CheckConstraint(
            "anti_windup IS NULL OR " + _one_of("anti_windup", ANTI_WINDUP_MODES),
            name="anti_windup",
        ),
        CheckConstraint("integrator_limit IS NULL OR integrator_limit >= 0", name="integ_limit"),
    )

    id: Mapped[int] = mapped_column(primary_key=True)
    name: Mapped[str | None] = mapped_column(String(100), unique=True)
    content_hash: Mapped[str] = mapped_column(String(64), unique=True)
    form: Mapped[str] = mapped_column(String(16), default=GAIN_FORM)
    kp: Mapped[float] = mapped_column(Float)
    ki: Mapped[float] = mapped_column(Float)
    kd: Mapped[float] = mapped_column(Float)
    integrator_limit: Mapped[float | None] = mapped_column(Float)
    anti_windup: Mapped[str | None] = mapped_column(String(32))
    derivative_filter_hz: Mapped[float | None] = mapped_column(Float)
    feedforward: Mapped[float | None] = mapped_column(Float)
    loop_rate_hz: Mapped[float] = mapped_column(Float)
    extra: Mapped[dict[str, Any]] = mapped_column(JSON, default=dict)
    created_at: Mapped[datetime] = mapped_column(UTCDateTime, default=utc_now)


class TestRun(Base):
    """One captured test of an axis at a hardware revision with a gain set."""

    __tablename__ = "test_runs"
    __test__ = False  # not a pytest test class
    __table_args__ = (
        UniqueConstraint("axis_id", "source_sha256"),
        ForeignKeyConstraint(
            ["revision_id", "axis_id"],
            ["hardware_revisions.id", "hardware_revisions.axis_id"],
            name="fk_test_runs_revision_same_axis",
        ),
        CheckConstraint(_one_of("test_kind", TEST_KINDS), name="test_kind"),
        Index("ix_test_runs_axis_revision_kind", "axis_id", "revision_id", "test_kind"),
        Index("ix_test_runs_axis_taken_at", "axis_id", "taken_at"),
    )

    id: Mapped[int] = mapped_column(primary_key=True)
    axis_id: Mapped[int] = mapped_column(ForeignKey("axes.id", ondelete="RESTRICT"))
    revision_id: Mapped[int] = mapped_column(Integer)
    gain_set_id: Mapped[int] = mapped_column(
        ForeignKey("gain_sets.id", ondelete="RESTRICT"), index=True
    )
    test_kind: Mapped[str] = mapped_column(String(16))
    taken_at: Mapped[datetime] = mapped_column(UTCDateTime)
    operator: Mapped[str] = mapped_column(String(100), default="")
    supply_voltage_v: Mapped[float | None] = mapped_column(Float)
    load_value: Mapped[float | None] = mapped_column(Float)
    load_unit: Mapped[str | None] = mapped_column(String(16))
    temperature_c: Mapped[float | None] = mapped_column(Float)
    notes: Mapped[str] = mapped_column(Text, default="")
    source_name: Mapped[str] = mapped_column(String(500))
    source_sha256: Mapped[str] = mapped_column(String(64))
    profile_name: Mapped[str | None] = mapped_column(String(100))
    data_quality: Mapped[dict[str, Any]] = mapped_column(JSON, default=dict)
    imported_at: Mapped[datetime] = mapped_column(UTCDateTime, default=utc_now)

    axis: Mapped[Axis] = relationship()
    revision: Mapped[HardwareRevision] = relationship(
        foreign_keys=[revision_id],
        primaryjoin="TestRun.revision_id == HardwareRevision.id",
    )
    gain_set: Mapped[GainSet] = relationship()
    trace: Mapped[Trace | None] = relationship(back_populates="run", uselist=False)


class Trace(Base):
    """A run's samples (Parquet bytes, bit-exact) and the original file (zstd)."""

    __tablename__ = "traces"

    run_id: Mapped[int] = mapped_column(
        ForeignKey("test_runs.id", ondelete="CASCADE"), primary_key=True
    )
    sample_count: Mapped[int] = mapped_column(Integer)
    samples_format: Mapped[str] = mapped_column(String(32))
    samples: Mapped[bytes] = deferred(mapped_column(LargeBinary, nullable=False))
    raw_codec: Mapped[str] = mapped_column(String(16))
    raw_size: Mapped[int] = mapped_column(Integer)
    raw_bytes: Mapped[bytes] = deferred(mapped_column(LargeBinary, nullable=False))

    run: Mapped[TestRun] = relationship(back_populates="trace")
    channels: Mapped[list[TraceChannel]] = relationship(
        order_by="TraceChannel.position", cascade="all, delete-orphan"
    )


class TraceChannel(Base):
    """The role and unit of one stored column of a trace."""

    __tablename__ = "trace_channels"
    __table_args__ = (
        UniqueConstraint("run_id", "name"),
        CheckConstraint(_one_of("role", CHANNEL_ROLES), name="role"),
    )

    run_id: Mapped[int] = mapped_column(
        ForeignKey("traces.run_id", ondelete="CASCADE"), primary_key=True
    )
    position: Mapped[int] = mapped_column(Integer, primary_key=True)
    name: Mapped[str] = mapped_column(String(200))
    role: Mapped[str] = mapped_column(String(16))
    unit: Mapped[str] = mapped_column(String(32))


class AnalysisSettingsRow(Base):
    """One distinct set of analysis settings plus the analysis version."""

    __tablename__ = "analysis_settings"

    id: Mapped[int] = mapped_column(primary_key=True)
    content_hash: Mapped[str] = mapped_column(String(64), unique=True)
    analysis_version: Mapped[str] = mapped_column(String(32))
    rise_low: Mapped[float] = mapped_column(Float)
    rise_high: Mapped[float] = mapped_column(Float)
    band: Mapped[float] = mapped_column(Float)
    level_estimator: Mapped[str] = mapped_column(String(64))
    settings: Mapped[dict[str, Any]] = mapped_column(JSON)


class AnalysisResult(Base):
    """One figure of one step of one run, under one set of analysis settings."""

    __tablename__ = "analysis_results"
    __table_args__ = (
        UniqueConstraint("run_id", "settings_id", "step_index", "metric"),
        Index("ix_analysis_results_metric_settings_run", "metric", "settings_id", "run_id"),
    )

    id: Mapped[int] = mapped_column(primary_key=True)
    run_id: Mapped[int] = mapped_column(ForeignKey("test_runs.id", ondelete="CASCADE"))
    settings_id: Mapped[int] = mapped_column(
        ForeignKey("analysis_settings.id", ondelete="RESTRICT")
    )
    step_index: Mapped[int] = mapped_column(Integer)
    metric: Mapped[str] = mapped_column(String(64))
    value: Mapped[float | None] = mapped_column(Float)
    unit: Mapped[str] = mapped_column(String(32))
    reason: Mapped[str | None] = mapped_column(Text)
    computed_at: Mapped[datetime] = mapped_column(UTCDateTime, default=utc_now)


class ImportProfile(Base):
    """A saved, named column mapping for one axis's capture files."""

    __tablename__ = "import_profiles"
    __table_args__ = (UniqueConstraint("axis_id", "name"),)

    id: Mapped[int] = mapped_column(primary_key=True)
    axis_id: Mapped[int] = mapped_column(ForeignKey("axes.id", ondelete="CASCADE"))
    name: Mapped[str] = mapped_column(String(100))
    settings: Mapped[dict[str, Any]] = mapped_column(JSON)
    created_at: Mapped[datetime] = mapped_column(UTCDateTime, default=utc_now)


class Spec(Base):
    """Named, versioned acceptance limits for a test kind on one or more axes."""

    __tablename__ = "specs"
    __table_args__ = (
        UniqueConstraint("name", "version"),
        CheckConstraint(_one_of("test_kind", TEST_KINDS), name="test_kind"),
        CheckConstraint(_one_of("statistic", SPEC_STATISTICS), name="statistic"),
        CheckConstraint("required_runs >= 1", name="required_runs"),
    )

    id: Mapped[int] = mapped_column(primary_key=True)
    name: Mapped[str] = mapped_column(String(100))
    version: Mapped[str] = mapped_column(String(32))
    test_kind: Mapped[str] = mapped_column(String(16))
    statistic: Mapped[str] = mapped_column(String(16), default="every_run")
    required_runs: Mapped[int] = mapped_column(Integer, default=1)
    description: Mapped[str] = mapped_column(Text, default="")
    source_text: Mapped[str | None] = mapped_column(Text)
    created_at: Mapped[datetime] = mapped_column(UTCDateTime, default=utc_now)

    limits: Mapped[list[SpecLimit]] = relationship(
        order_by="SpecLimit.metric", cascade="all, delete-orphan"
    )
    axes: Mapped[list[Axis]] = relationship(secondary="spec_axes", order_by="Axis.name")


class SpecAxis(Base):
    """Which axes a spec applies to."""

    __tablename__ = "spec_axes"

    spec_id: Mapped[int] = mapped_column(
        ForeignKey("specs.id", ondelete="CASCADE"), primary_key=True
    )
    axis_id: Mapped[int] = mapped_column(
        ForeignKey("axes.id", ondelete="CASCADE"), primary_key=True, index=True
    )


class SpecLimit(Base):
    """A lower and/or upper limit on one metric."""

    __tablename__ = "spec_limits"
    __table_args__ = (
        UniqueConstraint("spec_id", "metric"),
        CheckConstraint("lower IS NOT NULL OR upper IS NOT NULL", name="has_bound"),
        CheckConstraint("lower IS NULL OR upper IS NULL OR lower <= upper", name="ordered"),
    )

    id: Mapped[int] = mapped_column(primary_key=True)
    spec_id: Mapped[int] = mapped_column(ForeignKey("specs.id", ondelete="CASCADE"))
    metric: Mapped[str] = mapped_column(String(64))
    lower: Mapped[float | None] = mapped_column(Float)
    upper: Mapped[float | None] = mapped_column(Float)
    unit: Mapped[str] = mapped_column(String(32))


class AcceptanceReport(Base):
    """An issued acceptance report: what was judged, the verdict, and a content hash."""

    __tablename__ = "acceptance_reports"
    __table_args__ = (
        ForeignKeyConstraint(
            ["revision_id", "axis_id"],
            ["hardware_revisions.id", "hardware_revisions.axis_id"],
            name="fk_acceptance_reports_revision_same_axis",
        ),
    )

    id: Mapped[int] = mapped_column(primary_key=True)
    spec_id: Mapped[int] = mapped_column(ForeignKey("specs.id", ondelete="RESTRICT"))
    axis_id: Mapped[int] = mapped_column(ForeignKey("axes.id", ondelete="RESTRICT"))
    revision_id: Mapped[int] = mapped_column(Integer)
    gain_set_id: Mapped[int | None] = mapped_column(ForeignKey("gain_sets.id", ondelete="RESTRICT"))
    settings_id: Mapped[int] = mapped_column(
        ForeignKey("analysis_settings.id", ondelete="RESTRICT")
    )
    decision_rule: Mapped[str] = mapped_column(String(32))
    verdict: Mapped[str] = mapped_column(String(32))
    issued_at: Mapped[datetime] = mapped_column(UTCDateTime, default=utc_now)
    issued_by: Mapped[str] = mapped_column(String(100), default="")
    content_hash: Mapped[str] = mapped_column(String(64), unique=True)
    software_version: Mapped[str] = mapped_column(String(32))
    file_name: Mapped[str | None] = mapped_column(String(500))

    runs: Mapped[list[TestRun]] = relationship(secondary="report_runs", order_by="TestRun.id")


class ReportRun(Base):
    """A run used by an issued report; its presence locks the run."""

    __tablename__ = "report_runs"

    report_id: Mapped[int] = mapped_column(
        ForeignKey("acceptance_reports.id", ondelete="RESTRICT"), primary_key=True
    )
    run_id: Mapped[int] = mapped_column(
        ForeignKey("test_runs.id", ondelete="RESTRICT"), primary_key=True, index=True
    )
