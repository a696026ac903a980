"""The demo logbook: the invented bench scenario imported through the real importer.

``demo_data/`` (shipped in the wheel as ``logbook.demo_data``) holds simulated
captures with ``# key: value`` headers, the import profiles and specs they need,
and ``scenario.json``, a manifest of axes, revisions, gain sets and captures.
:func:`build_demo` creates a fresh logbook from it with the same services a user
would call, then judges every revision against its spec.
"""

from __future__ import annotations

import importlib.util
import json
from collections.abc import Callable
from dataclasses import dataclass
from datetime import date
from pathlib import Path
from typing import Any

from sqlalchemy import select
from sqlalchemy.exc import DBAPIError

from logbook.acceptance.rules import Verdict
from logbook.errors import ConflictError, LogbookError
from logbook.ingest.metadata import RunFields
from logbook.ingest.profiles import load_profile
from logbook.services import catalog, profiles, specs
from logbook.services.acceptance import evaluate_revision
from logbook.services.importing import FileResult, ImportRequest, Outcome, import_batch
from logbook.store.config import resolve_url
from logbook.store.engine import Database
from logbook.store.migrate import current_revision, init_database
from logbook.store.models import Axis, GainSet, HardwareRevision, TestRun

DEFAULT_DEMO_DB = "demo-logbook.db"


def demo_data_dir() -> Path:
    """The demo data folder, from an installed wheel or from the checkout."""
    spec = importlib.util.find_spec("logbook.demo_data")
    if spec is not None and spec.submodule_search_locations:
        return Path(next(iter(spec.submodule_search_locations)))
    return Path(__file__).resolve().parents[2] / "demo_data"


@dataclass(frozen=True)
class RevisionVerdict:
    """One revision with one gain set judged against one spec."""

    axis: str
    revision: str
    gains: str
    spec: str
    runs: int
    verdict: Verdict
    reasons: tuple[str, ...]


@dataclass(frozen=True)
class DemoSummary:
    database: str
    axes: tuple[tuple[str, int, int], ...]  # (axis, revisions, runs)
    imported: int
    verdicts: tuple[RevisionVerdict, ...]

    @property
    def failing(self) -> tuple[RevisionVerdict, ...]:
        return tuple(v for v in self.verdicts if v.verdict is not Verdict.PASS)


def build_demo(
    db_path: str | Path,
    *,
    data_dir: Path | None = None,
    on_file: Callable[[FileResult], None] | None = None,
    on_total: Callable[[int], None] | None = None,
) -> DemoSummary:
    """Build a fresh demo logbook at ``db_path`` (an earlier demo there is replaced)."""
    data_dir = data_dir or demo_data_dir()
    manifest = json.loads((data_dir / "scenario.json").read_text(encoding="utf-8"))
    path = Path(db_path)
    _remove_previous_demo(path, {a["name"] for a in manifest["axes"]})
    database = Database(resolve_url(str(path)))
    try:
        init_database(database)
        _catalogue(database, manifest, data_dir)
        if on_total:
            on_total(len(manifest["captures"]))
        jobs = [
            (
                data_dir / capture["path"],
                ImportRequest(
                    axis=capture["axis"],
                    gains=capture["gains"],
                    profile=capture["profile"],
                    run_fields=RunFields(
                        revision=capture["revision"], test_kind=capture["test_kind"]
                    ),
                ),
            )
            for capture in manifest["captures"]
        ]
        results = import_batch(database, jobs, on_file=on_file)
        failed = [r for r in results if r.outcome is not Outcome.IMPORTED]
        if failed:
            raise LogbookError(f"the demo data did not import: {failed[0].message}")
        return _summarise(database, path, len(results), manifest)
    finally:
        database.dispose()


def _remove_previous_demo(path: Path, demo_axes: set[str]) -> None:
    """Delete an earlier demo logbook at ``path``; refuse to touch anything else."""
    if not path.exists():
        return
    database = Database(resolve_url(str(path)))
    try:
        is_demo = current_revision(database) is not None
        if is_demo:
            with database.session() as session:
                names = set(session.scalars(select(Axis.name)))
            is_demo = names <= demo_axes
    except (LogbookError, DBAPIError):  # not a logbook, or not even a database
        is_demo = False
    finally:
        database.dispose()
    if not is_demo:
        raise ConflictError(
            f"{path} exists and is not a demo logbook; choose another file with --db"
        )
    for suffix in ("", "-wal", "-shm"):
        Path(f"{path}{suffix}").unlink(missing_ok=True)


def _catalogue(database: Database, manifest: dict[str, Any], data_dir: Path) -> None:
    with database.session(write=True) as session:
        for axis in manifest["axes"]:
            calibration = (
                axis["cal_raw_1"],
                axis["cal_value_1"],
                axis["cal_raw_2"],
                axis["cal_value_2"],
            )
            catalog.add_axis(
                session,
                axis["name"],
                position_unit=axis["position_unit"],
                feedback_kind=axis["feedback_kind"],
                description=axis["description"],
                counts_per_rev=axis["counts_per_rev"],
                units_per_rev=axis["units_per_rev"],
                calibration=None if None in calibration else calibration,
                notes=axis["notes"],
            )
        for rev in manifest["revisions"]:
            catalog.add_revision(
                session,
                rev["axis"],
                rev["label"],
                parent=rev["parent"],
                revision_date=date.fromisoformat(rev["date"]),
                change_category=rev["change_category"],
                change_summary=rev["change_summary"],
            )
        for gains in manifest["gain_sets"]:
            fields = {k: v for k, v in gains.items() if k not in ("axis", "name")}
            catalog.add_gain_set(session, catalog.GainParams(**fields), name=gains["name"])
        for entry in manifest["profiles"]:
            profiles.add_profile(session, load_profile(data_dir / entry["path"]))
        for entry in manifest["specs"]:
            specs.add_spec_file(session, data_dir / entry["path"])


def _summarise(
    database: Database, path: Path, imported: int, manifest: dict[str, Any]
) -> DemoSummary:
    with database.session() as session:
        axes = []
        for axis in catalog.list_axes(session):
            runs = catalog.list_runs(session, axis=axis.name)
            axes.append((axis.name, len(axis.revisions), len(runs)))
        verdicts = []
        for entry in manifest["specs"]:
            spec = specs.get_spec(session, entry["name"])
            for axis in spec.axes:
                verdicts.extend(_judge_axis(session, axis, spec.name, spec.test_kind))
    return DemoSummary(str(path), tuple(axes), imported, tuple(verdicts))


def _judge_axis(session: Any, axis: Axis, spec_name: str, test_kind: str) -> list[RevisionVerdict]:
    """Every (revision, gain set) of the axis with runs of the spec's test kind."""
    pairs = session.execute(
        select(HardwareRevision, GainSet)
        .join(TestRun, TestRun.revision_id == HardwareRevision.id)
        .join(GainSet, GainSet.id == TestRun.gain_set_id)
        .where(TestRun.axis_id == axis.id, TestRun.test_kind == test_kind)
        .distinct()
    ).all()
    order = {r.id: i for i, r in enumerate(catalog.lineage_order(axis.revisions))}
    results = []
    for revision, gain_set in sorted(pairs, key=lambda p: (order[p[0].id], p[1].name or "")):
        result = evaluate_revision(
            session, axis=axis.name, revision=revision.label, spec=spec_name, gains=gain_set.name
        )
        evaluation = result.evaluation
        reasons = tuple(_reason(m) for m in evaluation.metrics if m.verdict is not Verdict.PASS)
        results.append(
            RevisionVerdict(
                axis.name,
                revision.label,
                catalog.gain_label(gain_set.name, gain_set.id),
                spec_name,
                len(evaluation.runs),
                evaluation.verdict,
                reasons,
            )
        )
    return results


def _reason(metric: Any) -> str:
    if metric.value is None:
        return f"{metric.metric}: {metric.verdict} ({metric.reason or 'no value'})"
    bound = metric.limit.upper if metric.bound == "upper" else metric.limit.lower
    return (
        f"{metric.metric} {metric.statistic} {metric.value:.3g} {metric.unit} "
        f"against {metric.bound} limit {bound:g} {metric.unit}: {metric.verdict}"
    )
