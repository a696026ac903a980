"""Judging a hardware revision (with a gain set) against a stored spec.

The runs judged are those of the revision with the gain set, of every test kind:
:func:`~logbook.acceptance.rules.evaluate` leaves out, and lists, those of another
kind than the spec's. Figures come from the stored analysis results under one set
of analysis settings (the defaults unless given).

A run whose capture holds several steps is judged by its **worst step** against
each limit (the step with the smallest margin), since every step the axis makes
must meet the spec; a step without a value for a metric leaves the run without
one, which the rules report as "no data".
"""

from __future__ import annotations

from collections import defaultdict
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

from sqlalchemy import select
from sqlalchemy.orm import Session

from logbook.acceptance.rules import (
    DecisionRule,
    Evaluation,
    RunValues,
    evaluate,
    judged_value,
)
from logbook.acceptance.spec_file import SpecDefinition
from logbook.analysis.settings import AnalysisSettings
from logbook.errors import ConflictError, InputError, NotFoundError
from logbook.services import catalog
from logbook.services.specs import get_spec, spec_definition
from logbook.store.models import (
    AnalysisResult,
    AnalysisSettingsRow,
    Axis,
    GainSet,
    HardwareRevision,
    Spec,
    TestRun,
)

StepValues = tuple[Mapping[str, float | None], ...]  # per step: metric -> value


@dataclass(frozen=True)
class AcceptanceCase:
    """What is judged, resolved to stored rows; ``runs`` oldest first."""

    axis: Axis
    revision: HardwareRevision
    gain_set: GainSet | None
    spec: Spec
    settings: AnalysisSettingsRow
    runs: tuple[TestRun, ...]


@dataclass(frozen=True)
class AcceptanceResult:
    """The evaluation of a case, with each run's per-step figures (run id -> steps)."""

    case: AcceptanceCase
    evaluation: Evaluation
    steps: Mapping[int, StepValues]


def run_label(run: TestRun) -> str:
    """How reports and tables name a run."""
    return f"run {run.id}"


def resolve_case(
    session: Session,
    *,
    axis: str,
    revision: str,
    spec: str,
    version: str | None = None,
    gains: str | None = None,
    settings: AnalysisSettings | None = None,
) -> AcceptanceCase:
    """Find the rows to judge. Without ``gains`` the revision's runs of the spec's test
    kind must share one gain set (else the error lists them)."""
    spec_row = get_spec(session, spec, version)
    axis_row = catalog.get_axis(session, axis)
    if axis_row.id not in {a.id for a in spec_row.axes}:
        covered = ", ".join(a.name for a in spec_row.axes)
        raise ConflictError(
            f"spec '{spec_row.name}' {spec_row.version} does not apply to axis"
            f" '{axis_row.name}' (it covers: {covered})"
        )
    revision_row = catalog.get_revision(session, axis_row.name, revision)
    settings_row = _settings_row(session, settings or AnalysisSettings())
    query = (
        select(TestRun)
        .where(TestRun.revision_id == revision_row.id)
        .order_by(TestRun.taken_at, TestRun.id)
    )
    runs = list(session.scalars(query))
    gain_set = None
    if gains is not None:
        gain_set = catalog.get_gain_set(session, gains)
    else:
        ids = sorted({r.gain_set_id for r in runs if r.test_kind == spec_row.test_kind})
        if len(ids) > 1:
            rows = [session.get_one(GainSet, i) for i in ids]
            names = ", ".join(catalog.gain_label(g.name, g.id) for g in rows)
            raise InputError(
                f"the {spec_row.test_kind} runs of revision {revision_row.label} use several"
                f" gain sets ({names}); choose one with --gains"
            )
        if ids:
            gain_set = session.get(GainSet, ids[0])
    if gain_set is not None:
        runs = [r for r in runs if r.gain_set_id == gain_set.id]
    return AcceptanceCase(axis_row, revision_row, gain_set, spec_row, settings_row, tuple(runs))


def _settings_row(session: Session, settings: AnalysisSettings) -> AnalysisSettingsRow:
    row = session.scalar(
        select(AnalysisSettingsRow).where(
            AnalysisSettingsRow.content_hash == settings.content_hash()
        )
    )
    if row is None:
        raise NotFoundError(
            "no figures were computed with these analysis settings; import or re-analyse"
            " the runs with them first"
        )
    return row


def step_values(
    session: Session, run_ids: Sequence[int], settings_id: int
) -> dict[int, StepValues]:
    """run id -> its steps' figures (metric -> value) under ``settings_id``, in step order."""
    rows = session.execute(
        select(AnalysisResult.run_id, AnalysisResult.step_index, AnalysisResult.metric,
               AnalysisResult.value)
        .where(AnalysisResult.run_id.in_(list(run_ids)),
               AnalysisResult.settings_id == settings_id)
    )  # fmt: skip
    steps: dict[int, dict[int, dict[str, float | None]]] = defaultdict(lambda: defaultdict(dict))
    for run_id, index, metric, value in rows:
        steps[run_id][index][metric] = value
    return {
        run_id: tuple(steps[run_id][i] for i in sorted(steps[run_id])) if run_id in steps else ()
        for run_id in run_ids
    }


def worst_step_values(steps: StepValues, spec: SpecDefinition) -> dict[str, float | None]:
    """Per limited metric, the run's worst step against the limit; None when any step
    (or the run, having no analysed step) lacks the value."""
    values: dict[str, float | None] = {}
    for metric, limit in spec.limits.items():
        per_step = [step.get(metric) for step in steps]
        if not per_step or any(v is None for v in per_step):
            values[metric] = None
        else:
            values[metric] = judged_value(per_step, limit, "every_run")[0]
    return values


def evaluate_case(
    session: Session,
    case: AcceptanceCase,
    *,
    rule: DecisionRule = DecisionRule.SIMPLE,
    coverage_factor: float = 2.0,
) -> AcceptanceResult:
    """Judge the case's runs against its spec under ``rule``."""
    spec = spec_definition(case.spec)
    steps = step_values(session, [r.id for r in case.runs], case.settings.id)
    runs = [
        RunValues(run_label(r), r.test_kind, worst_step_values(steps[r.id], spec))
        for r in case.runs
    ]
    evaluation = evaluate(spec, runs, rule=rule, coverage_factor=coverage_factor)
    return AcceptanceResult(case, evaluation, steps)


def evaluate_revision(
    session: Session,
    *,
    axis: str,
    revision: str,
    spec: str,
    version: str | None = None,
    gains: str | None = None,
    rule: DecisionRule = DecisionRule.SIMPLE,
    settings: AnalysisSettings | None = None,
) -> AcceptanceResult:
    """:func:`resolve_case` then :func:`evaluate_case`."""
    case = resolve_case(
        session,
        axis=axis,
        revision=revision,
        spec=spec,
        version=version,
        gains=gains,
        settings=settings,
    )
    return evaluate_case(session, case, rule=rule)
