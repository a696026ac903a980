"""A metric's trend across an axis's hardware revisions, read from the stored figures.

Comparisons hold other things equal: a trend covers one test kind, and the gain
set and step amplitude are explicit filters. Only the ``analysis_results`` and
``test_runs`` tables are read (through their indexes); traces are never loaded.

One row per run: a run whose capture holds several steps contributes the median of
its steps' values (after the amplitude filter), so a run with many steps does not
outweigh the others. Steps whose figure could not be computed (value None, see
``logbook analyze``) are left out; a run with none left is left out.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd
from sqlalchemy import func, select
from sqlalchemy.orm import Session, aliased

from logbook.analysis.catalog import METRICS
from logbook.analysis.settings import AnalysisSettings
from logbook.errors import InputError, NotFoundError
from logbook.services import catalog
from logbook.store.models import (
    TEST_KINDS,
    AnalysisResult,
    AnalysisSettingsRow,
    Axis,
    GainSet,
    Spec,
    SpecAxis,
    SpecLimit,
    TestRun,
)

TREND_COLUMNS = [
    "run_id",
    "taken_at",
    "revision",
    "parent",
    "lineage_index",
    "gains",
    "test_kind",
    "operator",
    "steps",
    "value",
    "unit",
]
SUMMARY_COLUMNS = [
    "revision",
    "parent",
    "count",
    "median",
    "q1",
    "q3",
    "iqr",
    "min",
    "max",
    "unit",
    "spec",
    "lower_limit",
    "upper_limit",
]


_STEP_COLUMNS = [
    "run_id",
    "taken_at",
    "revision_id",
    "gain_set_id",
    "operator",
    "metric",
    "value",
    "unit",
]


@dataclass(frozen=True)
class RunSelection:
    """Which runs of one axis a trend or a regression scan looks at.

    amplitude_range: (low, high) bounds on |amplitude| of a step, in the feedback
        unit, both inclusive; None keeps every step.
    """

    axis: Axis
    test_kind: str
    gain_set: GainSet | None
    amplitude_range: tuple[float, float] | None
    settings_id: int


def select_runs(
    session: Session,
    axis: str,
    *,
    test_kind: str | None = None,
    gains: str | None = None,
    amplitude_range: tuple[float, float] | None = None,
    settings: AnalysisSettings | None = None,
) -> RunSelection:
    """Resolve the names of a query; errors name what is unknown or ambiguous.

    test_kind None means the axis's only test kind; an axis with runs of several
    kinds needs one chosen (comparing a ramp with a step says nothing).
    settings None means the default :class:`AnalysisSettings`.
    """
    axis_row = catalog.get_axis(session, axis)
    if test_kind is None:
        kinds = sorted(
            session.scalars(
                select(TestRun.test_kind).where(TestRun.axis_id == axis_row.id).distinct()
            )
        )
        if len(kinds) > 1:
            raise InputError(
                f"axis '{axis_row.name}' has runs of several test kinds ({', '.join(kinds)});"
                " choose one with --test-kind"
            )
        test_kind = kinds[0] if kinds else "position_step"
    catalog.require_choice("test kind", test_kind, TEST_KINDS)
    if amplitude_range is not None and not 0.0 <= amplitude_range[0] <= amplitude_range[1]:
        raise InputError(
            f"amplitude range must be LOW <= HIGH, both 0 or more; got {amplitude_range}"
        )
    gain_set = catalog.get_gain_set(session, gains) if gains is not None else None
    settings = settings or AnalysisSettings()
    settings_id = session.scalar(
        select(AnalysisSettingsRow.id).where(
            AnalysisSettingsRow.content_hash == settings.content_hash()
        )
    )
    if settings_id is None:
        raise NotFoundError(
            "no figures were computed with these analysis settings "
            f"({_describe(settings)}); import or re-analyse runs with them first"
        )
    return RunSelection(axis_row, test_kind, gain_set, amplitude_range, settings_id)


def run_values(session: Session, selection: RunSelection, metrics: Sequence[str]) -> pd.DataFrame:
    """Per run and metric, the median of its steps' values (long format).

    Columns: run_id, taken_at, revision_id, gain_set_id, operator, metric, steps,
    value, unit; rows in date order.
    """
    for name in metrics:
        require_metric(name)
    result = AnalysisResult
    query = (
        select(
            TestRun.id.label("run_id"),
            TestRun.taken_at,
            TestRun.revision_id,
            TestRun.gain_set_id,
            TestRun.operator,
            result.metric,
            result.value,
            result.unit,
        )
        .join(result, result.run_id == TestRun.id)
        .where(
            TestRun.axis_id == selection.axis.id,
            TestRun.test_kind == selection.test_kind,
            result.settings_id == selection.settings_id,
            result.metric.in_(list(metrics)),
        )
    )
    if selection.gain_set is not None:
        query = query.where(TestRun.gain_set_id == selection.gain_set.id)
    if selection.amplitude_range is not None:
        amplitude = aliased(AnalysisResult)
        low, high = selection.amplitude_range
        query = query.join(
            amplitude,
            (amplitude.run_id == result.run_id)
            & (amplitude.settings_id == result.settings_id)
            & (amplitude.step_index == result.step_index)
            & (amplitude.metric == "amplitude"),
        ).where(func.abs(amplitude.value).between(low, high))
    rows = session.connection().execute(query).all()  # Core rows: no ORM overhead
    by_column = list(zip(*rows, strict=True)) or [()] * len(_STEP_COLUMNS)
    steps = pd.DataFrame(dict(zip(_STEP_COLUMNS, map(list, by_column), strict=True)))
    # Undetermined figures (NULL) are dropped here rather than in SQL, which lets SQLite
    # skip reading the result rows of other axes' runs (measured: a third faster).
    steps = steps[steps["value"].notna()]
    keys = ["run_id", "metric"]
    if not steps.duplicated(keys).any():  # one step per run: nothing to aggregate
        runs = steps.assign(steps=1)
    else:
        grouped = steps.groupby(keys, sort=False)
        per_run = ["taken_at", "revision_id", "gain_set_id", "operator", "unit"]
        medians = grouped["value"].agg(["size", "median"])
        runs = (
            grouped[per_run]
            .first()
            .join(medians.rename(columns={"size": "steps", "median": "value"}))
            .reset_index()
        )
    return runs.sort_values(["taken_at", "run_id"], kind="stable").reset_index(drop=True)


def metric_trend(
    session: Session,
    axis: str,
    metric: str,
    *,
    test_kind: str | None = None,
    gains: str | None = None,
    amplitude_range: tuple[float, float] | None = None,
    settings: AnalysisSettings | None = None,
) -> pd.DataFrame:
    """The runs of ``axis`` with their value of ``metric``, along the lineage and by date.

    Columns: run_id, taken_at, revision, parent, lineage_index (0 = first revision in
    lineage order, parents before children), gains, test_kind, operator, steps
    (steps the value is the median of), value, unit. Filters as in
    :func:`select_runs`.
    """
    selection = select_runs(
        session,
        axis,
        test_kind=test_kind,
        gains=gains,
        amplitude_range=amplitude_range,
        settings=settings,
    )
    return _trend_frame(session, selection, run_values(session, selection, [metric]))


def trend_summary(
    session: Session,
    axis: str,
    metric: str,
    *,
    test_kind: str | None = None,
    gains: str | None = None,
    amplitude_range: tuple[float, float] | None = None,
    settings: AnalysisSettings | None = None,
    spec: str | None = None,
) -> pd.DataFrame:
    """Per revision in lineage order: count, median, quartiles, IQR, min, max, limits.

    Quartiles use numpy's default linear interpolation; a revision without runs
    has count 0 and no statistics. The limits come from ``spec`` (a spec name;
    its newest version) or, when None, from the newest spec for this axis and
    test kind that limits ``metric``; without one the limit columns are None.
    """
    selection = select_runs(
        session,
        axis,
        test_kind=test_kind,
        gains=gains,
        amplitude_range=amplitude_range,
        settings=settings,
    )
    trend = _trend_frame(session, selection, run_values(session, selection, [metric]))
    limit = spec_limit(session, selection, metric, spec=spec)
    unit = trend["unit"].iloc[0] if len(trend) else None
    rows = []
    for revision in catalog.lineage_order(selection.axis.revisions):
        values = trend.loc[trend["revision"] == revision.label, "value"].to_numpy(float)
        stats = _describe_values(values)
        rows.append(
            {
                "revision": revision.label,
                "parent": revision.parent.label if revision.parent else None,
                "count": int(values.size),
                **stats,
                "unit": unit,
                "spec": limit.spec if limit else None,
                "lower_limit": limit.lower if limit else None,
                "upper_limit": limit.upper if limit else None,
            }
        )
    return pd.DataFrame(rows, columns=SUMMARY_COLUMNS)


@dataclass(frozen=True)
class MetricLimit:
    """A spec's limits on one metric, and which spec (name and version) they are from."""

    spec: str
    lower: float | None
    upper: float | None
    unit: str


def spec_limit(
    session: Session, selection: RunSelection, metric: str, *, spec: str | None = None
) -> MetricLimit | None:
    """The limits on ``metric`` from the applicable spec (see :func:`trend_summary`)."""
    query = (
        select(Spec.name, Spec.version, SpecLimit.lower, SpecLimit.upper, SpecLimit.unit)
        .join(SpecLimit, SpecLimit.spec_id == Spec.id)
        .join(SpecAxis, SpecAxis.spec_id == Spec.id)
        .where(
            SpecAxis.axis_id == selection.axis.id,
            Spec.test_kind == selection.test_kind,
            SpecLimit.metric == metric,
        )
        .order_by(Spec.created_at.desc(), Spec.id.desc())
        .limit(1)
    )
    if spec is not None:
        query = query.where(Spec.name == spec)
    row = session.execute(query).first()
    if row is None:
        if spec is not None:
            raise NotFoundError(
                f"spec '{spec}' has no limit on {metric} for axis '{selection.axis.name}'"
                f" and test kind {selection.test_kind}"
            )
        return None
    return MetricLimit(f"{row.name} {row.version}", row.lower, row.upper, row.unit)


def require_metric(name: str) -> str:
    """``name`` if it is a catalogue metric, else an InputError listing them."""
    if name not in METRICS:
        raise InputError(f"unknown metric '{name}'; known metrics: {', '.join(METRICS)}")
    return name


def revision_labels(axis: Axis) -> dict[int, tuple[str, str | None, int]]:
    """revision id -> (label, parent label, position in lineage order)."""
    ordered = catalog.lineage_order(axis.revisions)
    label = {r.id: r.label for r in ordered}
    return {
        r.id: (r.label, label.get(r.parent_id) if r.parent_id else None, i)
        for i, r in enumerate(ordered)
    }


def gain_labels(session: Session, ids: Sequence[int]) -> dict[int, str]:
    """gain set id -> :func:`~logbook.services.catalog.gain_label`."""
    rows = session.execute(select(GainSet.id, GainSet.name).where(GainSet.id.in_(list(ids))))
    return {gid: catalog.gain_label(name, gid) for gid, name in rows}


def _trend_frame(session: Session, selection: RunSelection, runs: pd.DataFrame) -> pd.DataFrame:
    revisions = revision_labels(selection.axis)
    gains = gain_labels(session, sorted(set(runs["gain_set_id"].tolist())))
    revision_ids = runs["revision_id"]
    frame = pd.DataFrame(
        {
            "run_id": runs["run_id"].astype("int64"),
            "taken_at": runs["taken_at"],
            "revision": revision_ids.map({k: v[0] for k, v in revisions.items()}),
            "parent": revision_ids.map({k: v[1] for k, v in revisions.items()}),
            "lineage_index": revision_ids.map({k: v[2] for k, v in revisions.items()}),
            "gains": runs["gain_set_id"].map(gains),
            "test_kind": selection.test_kind,
            "operator": runs["operator"],
            "steps": runs["steps"].astype("int64"),
            "value": runs["value"].astype(float),
            "unit": runs["unit"],
        },
        columns=TREND_COLUMNS,
    )
    frame = frame.sort_values(["lineage_index", "taken_at", "run_id"], kind="stable")
    return frame.reset_index(drop=True)


def _describe_values(values: np.ndarray) -> dict[str, float | None]:
    if values.size == 0:
        return dict.fromkeys(("median", "q1", "q3", "iqr", "min", "max"))
    q1, median, q3 = np.percentile(values, [25.0, 50.0, 75.0])
    return {
        "median": float(median),
        "q1": float(q1),
        "q3": float(q3),
        "iqr": float(q3 - q1),
        "min": float(values.min()),
        "max": float(values.max()),
    }


def _describe(settings: AnalysisSettings) -> str:
    return ", ".join(f"{k}={v}" for k, v in settings.to_dict().items())
