"""Read models for the web front end: the tables its pages show, one query each.

Every function takes an open session (``Database.session()``) and returns plain,
picklable data (DataFrames and frozen dataclasses) that the UI can cache. They
read the run and metric tables through their indexes and never load a trace,
except :func:`open_run`, which loads the one trace the user opened.

Metric values per run follow :mod:`logbook.services.trends`: a run with several
steps shows the median of its steps' values, so the table, the trends and the
regression finder agree on what a run's figure is.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from datetime import UTC, date, datetime, time, timedelta
from pathlib import Path

import numpy as np
import pandas as pd
from sqlalchemy import case, exists, func, select
from sqlalchemy.orm import Session

from logbook.acceptance.rules import DecisionRule, Evaluation, Verdict
from logbook.acceptance.spec_file import Limit
from logbook.analysis.catalog import METRICS
from logbook.analysis.settings import AnalysisSettings
from logbook.errors import NotFoundError
from logbook.ingest.columns import find_column
from logbook.ingest.reader import read_table
from logbook.services import acceptance, catalog, specs, trends
from logbook.store.models import (
    AcceptanceReport,
    AnalysisResult,
    AnalysisSettingsRow,
    Axis,
    GainSet,
    HardwareRevision,
    ImportProfile,
    ReportRun,
    Spec,
    TestRun,
)
from logbook.store.runs import load_trace
from logbook.trace import Role

#: The figures the run table shows beside each run (names from ``METRICS``).
KEY_METRICS = (
    "rise_time_s",
    "overshoot_pct",
    "settling_time_s",
    "steady_state_error",
    "iae",
)
RUN_COLUMNS = [
    "run_id",
    "taken_at",
    "revision",
    "lineage_index",
    "gains",
    "test_kind",
    "operator",
    "source_name",
    "locked",
]


def data_version(session: Session) -> tuple[int, ...]:
    """A value that changes whenever rows are added to or removed from what pages show.

    The largest id and the row count of each table the pages read; each is one
    index lookup. Caches key on it, so a new import or a new revision shows at
    once. In-place edits are not seen here: the UI clears its caches after them.
    """
    tables = (TestRun, HardwareRevision, Axis, GainSet, Spec, AcceptanceReport, ImportProfile)
    parts = []
    for model in tables:
        parts += [
            select(func.coalesce(func.max(model.id), 0)).scalar_subquery(),
            select(func.count(model.id)).scalar_subquery(),
        ]
    row = session.execute(select(*parts)).one()
    return tuple(int(v) for v in row)


# --- the run table ----------------------------------------------------------------


@dataclass(frozen=True)
class RunFilter:
    """Which runs of one axis to list. None (or empty) means "any".

    ``since`` and ``until`` are calendar days in UTC, both inclusive.
    """

    axis: str
    revision: str | None = None
    gains: str | None = None
    test_kind: str | None = None
    operator: str | None = None
    since: date | None = None
    until: date | None = None


@dataclass(frozen=True)
class RunTable:
    """Runs with their key figures, newest first.

    ``frame`` has the columns of :data:`RUN_COLUMNS` then one column per metric;
    ``units`` maps each metric to its unit on this axis (e.g. ``"mm"``).
    """

    frame: pd.DataFrame
    metrics: tuple[str, ...]
    units: Mapping[str, str] = field(default_factory=dict)


def run_table(
    session: Session,
    filters: RunFilter,
    *,
    metrics: Sequence[str] = KEY_METRICS,
    settings: AnalysisSettings | None = None,
) -> RunTable:
    """The runs matching ``filters`` with the median of each metric over their steps.

    A run whose figure could not be computed shows NaN for it. ``locked`` is True
    for runs used by an issued acceptance report. ``lineage_index`` is the run's
    revision's position in the axis's lineage order (parents first), which the UI
    uses to give each revision the same colour on every page.
    """
    for name in metrics:
        trends.require_metric(name)
    axis = catalog.get_axis(session, filters.axis)
    revisions = trends.revision_labels(axis)
    locked = exists().where(ReportRun.run_id == TestRun.id)
    query = select(
        TestRun.id,
        TestRun.taken_at,
        TestRun.revision_id,
        TestRun.gain_set_id,
        TestRun.test_kind,
        TestRun.operator,
        TestRun.source_name,
        locked.label("locked"),
    ).where(TestRun.axis_id == axis.id)
    if filters.revision:
        revision = catalog.get_revision(session, axis.name, filters.revision)
        query = query.where(TestRun.revision_id == revision.id)
    if filters.gains:
        query = query.where(TestRun.gain_set_id == catalog.get_gain_set(session, filters.gains).id)
    if filters.test_kind:
        query = query.where(TestRun.test_kind == filters.test_kind)
    if filters.operator:
        query = query.where(TestRun.operator == filters.operator)
    if filters.since is not None:
        query = query.where(TestRun.taken_at >= _day_start(filters.since))
    if filters.until is not None:
        query = query.where(TestRun.taken_at < _day_start(filters.until + timedelta(days=1)))
    rows = session.execute(query.order_by(TestRun.taken_at.desc(), TestRun.id.desc())).all()
    gains = trends.gain_labels(session, sorted({r.gain_set_id for r in rows}))
    frame = pd.DataFrame(
        {
            "run_id": pd.Series([r.id for r in rows], dtype="int64"),
            "taken_at": pd.Series([r.taken_at for r in rows], dtype="datetime64[us, UTC]"),
            "revision": [revisions[r.revision_id][0] for r in rows],
            "lineage_index": pd.Series([revisions[r.revision_id][2] for r in rows], dtype="int64"),
            "gains": [gains[r.gain_set_id] for r in rows],
            "test_kind": [r.test_kind for r in rows],
            "operator": [r.operator for r in rows],
            "source_name": [r.source_name for r in rows],
            "locked": pd.Series([bool(r.locked) for r in rows], dtype=bool),
        },
        columns=RUN_COLUMNS,
    )
    values, units = _metric_values(
        session, filters, sorted(set(frame["test_kind"])), metrics, settings
    )
    for name in metrics:
        column = values.get(name)
        frame[name] = frame["run_id"].map(column).astype(float) if column is not None else np.nan
    return RunTable(frame, tuple(metrics), units)


def _metric_values(
    session: Session,
    filters: RunFilter,
    kinds: Sequence[str],
    metrics: Sequence[str],
    settings: AnalysisSettings | None,
) -> tuple[dict[str, pd.Series], dict[str, str]]:
    """metric -> (run id -> value), and metric -> unit, over the given test kinds."""
    parts = []
    for kind in kinds:
        try:
            selection = trends.select_runs(
                session,
                filters.axis,
                test_kind=kind,
                gains=filters.gains or None,
                settings=settings,
            )
        except NotFoundError:  # no figures under these settings yet: the runs show NaN
            continue
        parts.append(trends.run_values(session, selection, metrics))
    if not parts:
        return {}, {}
    long = pd.concat(parts, ignore_index=True)
    units = {m: str(u) for m, u in long.groupby("metric")["unit"].first().items()}
    wide = long.pivot_table(index="run_id", columns="metric", values="value", aggfunc="first")
    return {m: wide[m] for m in wide.columns}, units


def _day_start(day: date) -> datetime:
    return datetime.combine(day, time.min, tzinfo=UTC)


# --- choices for the filters --------------------------------------------------------


@dataclass(frozen=True)
class AxisChoices:
    """What the filters of one axis can offer: values that occur in its runs."""

    revisions: tuple[str, ...]  # lineage order, every revision of the axis
    gains: tuple[str, ...]
    test_kinds: tuple[str, ...]
    operators: tuple[str, ...]
    first_day: date | None
    last_day: date | None


def axis_choices(session: Session, axis_name: str) -> AxisChoices:
    """The revisions of ``axis_name`` and the gain sets, kinds and operators of its runs."""
    axis = catalog.get_axis(session, axis_name)
    runs = select(TestRun).where(TestRun.axis_id == axis.id).subquery()
    gain_ids = sorted(session.scalars(select(runs.c.gain_set_id).distinct()))
    kinds = sorted(session.scalars(select(runs.c.test_kind).distinct()))
    operators = sorted(o for o in session.scalars(select(runs.c.operator).distinct()) if o)
    first, last = session.execute(
        select(func.min(runs.c.taken_at), func.max(runs.c.taken_at))
    ).one()
    return AxisChoices(
        revisions=tuple(r.label for r in catalog.lineage_order(axis.revisions)),
        gains=tuple(sorted(trends.gain_labels(session, gain_ids).values())),
        test_kinds=tuple(kinds),
        operators=tuple(operators),
        first_day=_utc_day(first),
        last_day=_utc_day(last),
    )


def _utc_day(value: datetime | None) -> date | None:
    return None if value is None else value.astimezone(UTC).date()


# --- overview and setup tables ------------------------------------------------------


AXIS_COLUMNS = [
    "axis",
    "position_unit",
    "feedback_kind",
    "revisions",
    "runs",
    "latest_revision",
    "latest_revision_runs",
    "last_run_at",
]


def axis_summary(session: Session) -> pd.DataFrame:
    """One row per axis: its revisions, runs, latest revision with its run count,
    and when the last run was taken.

    The latest revision is the one with the newest revision date (revisions without
    a date count as oldest), ties broken by the order they were added.
    """
    counts = dict(
        session.execute(
            select(TestRun.revision_id, func.count()).group_by(TestRun.revision_id)
        ).all()
    )
    last_run = dict(
        session.execute(
            select(TestRun.axis_id, func.max(TestRun.taken_at)).group_by(TestRun.axis_id)
        ).all()
    )
    rows = []
    for axis in catalog.list_axes(session):
        latest = max(
            axis.revisions, key=lambda r: (r.revision_date or date.min, r.id), default=None
        )
        rows.append(
            {
                "axis": axis.name,
                "position_unit": axis.position_unit,
                "feedback_kind": axis.feedback_kind,
                "revisions": len(axis.revisions),
                "runs": sum(counts.get(r.id, 0) for r in axis.revisions),
                "latest_revision": latest.label if latest else None,
                "latest_revision_runs": counts.get(latest.id, 0) if latest else 0,
                "last_run_at": last_run.get(axis.id),
            }
        )
    return pd.DataFrame(rows, columns=AXIS_COLUMNS)


REVISION_COLUMNS = [
    "revision",
    "parent",
    "lineage_index",
    "revision_date",
    "change_category",
    "change_summary",
    "runs",
    "locked_runs",
]


def revision_table(session: Session, axis_name: str) -> pd.DataFrame:
    """The revisions of an axis in lineage order with their run counts.

    ``locked_runs`` counts runs used by issued acceptance reports (which can no
    longer be changed).
    """
    axis = catalog.get_axis(session, axis_name)
    locked = exists().where(ReportRun.run_id == TestRun.id)
    counts = {
        rev: (int(n), int(n_locked or 0))
        for rev, n, n_locked in session.execute(
            select(
                TestRun.revision_id,
                func.count(),
                func.sum(case((locked, 1), else_=0)),
            )
            .where(TestRun.axis_id == axis.id)
            .group_by(TestRun.revision_id)
        )
    }
    labels = trends.revision_labels(axis)
    rows = [
        {
            "revision": r.label,
            "parent": labels[r.id][1],
            "lineage_index": labels[r.id][2],
            "revision_date": r.revision_date,
            "change_category": r.change_category,
            "change_summary": r.change_summary,
            "runs": counts.get(r.id, (0, 0))[0],
            "locked_runs": counts.get(r.id, (0, 0))[1],
        }
        for r in catalog.lineage_order(axis.revisions)
    ]
    return pd.DataFrame(rows, columns=REVISION_COLUMNS)


GAIN_COLUMNS = [
    "gains",
    "kp",
    "ki",
    "kd",
    "loop_rate_hz",
    "integrator_limit",
    "anti_windup",
    "derivative_filter_hz",
    "feedforward",
    "runs",
]


def gain_table(session: Session) -> pd.DataFrame:
    """Every gain set (named ones by name, unnamed ones as ``#id``) with its run count."""
    counts = dict(
        session.execute(
            select(TestRun.gain_set_id, func.count()).group_by(TestRun.gain_set_id)
        ).all()
    )
    rows = [
        {
            "gains": catalog.gain_label(g.name, g.id),
            "kp": g.kp,
            "ki": g.ki,
            "kd": g.kd,
            "loop_rate_hz": g.loop_rate_hz,
            "integrator_limit": g.integrator_limit,
            "anti_windup": g.anti_windup,
            "derivative_filter_hz": g.derivative_filter_hz,
            "feedforward": g.feedforward,
            "runs": counts.get(g.id, 0),
        }
        for g in catalog.list_gain_sets(session)
    ]
    return pd.DataFrame(rows, columns=GAIN_COLUMNS)


# --- one opened run -----------------------------------------------------------------


@dataclass(frozen=True)
class OpenedRun:
    """One run with its samples and its stored step figures, ready to plot.

    ``steps`` holds, per step in order, metric name -> value (None where the
    analysis found none); ``units`` maps metric names to their unit on this axis.
    ``rise_low``, ``rise_high`` and ``band`` are the analysis settings the figures
    were computed with (fractions), so plots can label what they mark.
    """

    run_id: int
    label: str
    axis: str
    revision: str
    lineage_index: int
    gains: str
    test_kind: str
    taken_at: datetime
    operator: str
    source_name: str
    notes: str
    locked: bool
    time: np.ndarray
    setpoint: np.ndarray
    feedback: np.ndarray
    effort: np.ndarray | None
    feedback_unit: str
    effort_unit: str
    steps: tuple[dict[str, float | None], ...]
    units: dict[str, str]
    rise_low: float
    rise_high: float
    band: float


def run_label(run_id: int, revision: str, taken_at: datetime) -> str:
    """How a run is named on every page: ``run 12 · rev B · 2026-03-04``."""
    return f"run {run_id} · rev {revision} · {taken_at.astimezone(UTC):%Y-%m-%d}"


def open_run(
    session: Session, run_id: int, *, settings: AnalysisSettings | None = None
) -> OpenedRun:
    """Load run ``run_id``'s trace and its figures under ``settings`` (default settings)."""
    run = session.get(TestRun, run_id)
    if run is None:
        raise NotFoundError(f"no run {run_id} in the logbook")
    settings = settings or AnalysisSettings()
    settings_id = session.scalar(
        select(AnalysisSettingsRow.id).where(
            AnalysisSettingsRow.content_hash == settings.content_hash()
        )
    )
    results = session.execute(
        select(
            AnalysisResult.step_index,
            AnalysisResult.metric,
            AnalysisResult.value,
            AnalysisResult.unit,
        )
        .where(AnalysisResult.run_id == run.id, AnalysisResult.settings_id == settings_id)
        .order_by(AnalysisResult.step_index)
    ).all()
    steps: dict[int, dict[str, float | None]] = {}
    units: dict[str, str] = {}
    for step_index, metric, value, unit in results:
        steps.setdefault(step_index, {})[metric] = value
        units[metric] = unit
    trace = load_trace(session, run)
    setpoint = trace.by_role(Role.SETPOINT)
    feedback = trace.by_role(Role.FEEDBACK)
    effort = trace.by_role(Role.EFFORT)
    if setpoint is None or feedback is None:
        raise NotFoundError(f"run {run.id} has no setpoint or feedback channel")
    revision = trends.revision_labels(run.axis)[run.revision_id]
    return OpenedRun(
        run_id=run.id,
        label=run_label(run.id, revision[0], run.taken_at),
        axis=run.axis.name,
        revision=revision[0],
        lineage_index=revision[2],
        gains=catalog.gain_label(run.gain_set.name, run.gain_set_id),
        test_kind=run.test_kind,
        taken_at=run.taken_at,
        operator=run.operator,
        source_name=run.source_name,
        notes=run.notes,
        locked=session.scalar(select(exists().where(ReportRun.run_id == run.id))) or False,
        time=trace.time,
        setpoint=setpoint.values,
        feedback=feedback.values,
        effort=effort.values if effort is not None else None,
        feedback_unit=feedback.unit,
        effort_unit=effort.unit if effort is not None else "",
        steps=tuple(steps[i] for i in sorted(steps)),
        units=units,
        rise_low=settings.rise_low,
        rise_high=settings.rise_high,
        band=settings.band,
    )


# --- previewing a capture file before import ----------------------------------------


@dataclass(frozen=True)
class FilePreview:
    """The first rows of a capture file and the columns found for each role by name."""

    name: str
    rows: int
    head: pd.DataFrame
    metadata: dict[str, str]
    detected: dict[str, str | None]  # role -> column (None where none was found)


def preview_capture(
    path: str | Path,
    *,
    delimiter: str | None = None,
    decimal: str | None = None,
    rows: int = 8,
) -> FilePreview:
    """Read ``path`` as the importer would; raises the reader's InputError when it cannot.

    ``detected`` applies the documented by-name rule
    (:func:`logbook.ingest.columns.find_column`) to time, setpoint, feedback and
    effort, so the user sees which columns an import without a profile would use.
    """
    table = read_table(path, delimiter=delimiter, decimal=decimal)
    names = list(table.columns)
    head = pd.DataFrame({name: values[:rows] for name, values in table.columns.items()})
    detected = {
        str(role): find_column(names, role)
        for role in (Role.TIME, Role.SETPOINT, Role.FEEDBACK, Role.EFFORT)
    }
    return FilePreview(Path(path).name, len(table), head, dict(table.metadata), detected)


def side_by_side(runs: Sequence[OpenedRun], *, step: int = 0) -> pd.DataFrame:
    """The figures of step ``step`` of several runs, one column per run, one row per
    metric in catalogue order (with its unit); a run without that step shows None."""
    rows = []
    for name in METRICS:
        unit = next((r.units[name] for r in runs if name in r.units), "")
        row: dict[str, object] = {"metric": name, "unit": unit}
        for run in runs:
            row[run.label] = run.steps[step].get(name) if step < len(run.steps) else None
        rows.append(row)
    return pd.DataFrame(rows)


# --- specs and verdicts ---------------------------------------------------------------


SPEC_COLUMNS = [
    "spec",
    "version",
    "test_kind",
    "axes",
    "statistic",
    "required_runs",
    "limits",
    "description",
]


def spec_table(session: Session, axis_name: str | None = None) -> pd.DataFrame:
    """Every stored spec (or those covering ``axis_name``), its limits in one line each."""
    rows = []
    for row in specs.list_specs(session):
        spec = specs.spec_definition(row)
        if axis_name is not None and axis_name not in spec.axes:
            continue
        rows.append(
            {
                "spec": spec.name,
                "version": spec.version,
                "test_kind": spec.test_kind,
                "axes": ", ".join(spec.axes),
                "statistic": spec.statistic,
                "required_runs": spec.required_runs,
                "limits": "; ".join(
                    _limit_text(metric, limit) for metric, limit in spec.limits.items()
                ),
                "description": spec.description,
            }
        )
    return pd.DataFrame(rows, columns=SPEC_COLUMNS)


def _limit_text(metric: str, limit: Limit) -> str:
    unit = f" {limit.unit}" if limit.unit else ""
    if limit.lower is not None and limit.upper is not None:
        return f"{limit.lower:g} ≤ {metric} ≤ {limit.upper:g}{unit}"
    if limit.upper is not None:
        return f"{metric} ≤ {limit.upper:g}{unit}"
    return f"{metric} ≥ {limit.lower:g}{unit}"


def evaluation(
    session: Session,
    *,
    axis: str,
    revision: str,
    spec: str,
    version: str | None = None,
    gains: str | None = None,
    rule: DecisionRule = DecisionRule.SIMPLE,
) -> Evaluation:
    """The verdict of ``revision`` against ``spec`` (plain data, without ORM rows)."""
    return acceptance.evaluate_revision(
        session, axis=axis, revision=revision, spec=spec, version=version, gains=gains, rule=rule
    ).evaluation


VERDICT_COLUMNS = ["axis", "revision", "spec", "gains", "runs", "verdict", "not_passed"]


def latest_verdicts(session: Session) -> pd.DataFrame:
    """Per axis and applicable spec, the verdict of the axis's latest revision.

    The latest revision is as in :func:`axis_summary`; the spec is the newest
    version of each spec name covering the axis; the gain set is the one used by
    most of the revision's runs of the spec's test kind (ties: the oldest gain set).
    ``not_passed`` lists the metrics whose verdict is not a pass, with the verdict.
    """
    newest: dict[str, Spec] = {}
    for row in specs.list_specs(session):  # oldest first per name, so the last one wins
        newest[row.name] = row
    rows = []
    for axis in catalog.list_axes(session):
        latest = _latest_revision(axis)
        if latest is None:
            continue
        for spec in newest.values():
            if axis.id not in {a.id for a in spec.axes}:
                continue
            usage = revision_gains(session, axis.name, latest.label, test_kind=spec.test_kind)
            gains = next(iter(usage), None)
            result = evaluation(
                session,
                axis=axis.name,
                revision=latest.label,
                spec=spec.name,
                version=spec.version,
                gains=gains,
            )
            rows.append(
                {
                    "axis": axis.name,
                    "revision": latest.label,
                    "spec": f"{spec.name} {spec.version}",
                    "gains": gains,
                    "runs": len(result.runs),
                    "verdict": str(result.verdict),
                    "not_passed": ", ".join(
                        f"{m.metric} ({m.verdict})"
                        for m in result.metrics
                        if m.verdict is not Verdict.PASS
                    ),
                }
            )
    return pd.DataFrame(rows, columns=VERDICT_COLUMNS)


def revision_gains(
    session: Session, axis_name: str, revision: str, *, test_kind: str | None = None
) -> dict[str, int]:
    """The gain sets run on a revision (of ``test_kind``, if given) -> their run count,
    the most used first (ties: the oldest gain set first)."""
    row = catalog.get_revision(session, axis_name, revision)
    query = select(TestRun.gain_set_id, func.count()).where(TestRun.revision_id == row.id)
    if test_kind is not None:
        query = query.where(TestRun.test_kind == test_kind)
    usage = session.execute(
        query.group_by(TestRun.gain_set_id).order_by(func.count().desc(), TestRun.gain_set_id)
    ).all()
    labels = trends.gain_labels(session, [gid for gid, _ in usage])
    return {labels[gid]: int(n) for gid, n in usage}


def _latest_revision(axis: Axis) -> HardwareRevision | None:
    return max(axis.revisions, key=lambda r: (r.revision_date or date.min, r.id), default=None)


def judged_metrics(session: Session, axis_name: str) -> tuple[str, ...]:
    """The metrics limited by any spec covering ``axis_name``, in catalogue order."""
    axis = catalog.get_axis(session, axis_name)
    limited = {
        limit.metric
        for row in specs.list_specs(session)
        if axis.id in {a.id for a in row.axes}
        for limit in row.limits
    }
    return tuple(name for name in METRICS if name in limited)
