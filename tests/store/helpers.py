"""Small builders for data-layer tests (plain functions, no fixtures)."""

from __future__ import annotations

from datetime import UTC, datetime

import numpy as np
from sqlalchemy.orm import Session

from logbook.services import catalog
from logbook.store.models import TestRun
from logbook.store.runs import RunConditions, RunEvidence, add_run
from logbook.trace import Channel, Role, Trace


def step_trace(n: int = 50) -> Trace:
    t = np.linspace(0.0, 0.49, n)
    setpoint = np.where(t >= 0.1, 1.0, 0.0)
    feedback = np.where(t >= 0.1, 1.0 - np.exp(-(t - 0.1) / 0.02), 0.0)
    return Trace(
        channels=(
            Channel("t [s]", Role.TIME, "s", t),
            Channel("setpoint [mm]", Role.SETPOINT, "mm", setpoint),
            Channel("position [mm]", Role.FEEDBACK, "mm", feedback),
        )
    )


def seed_axis(session: Session, name: str = "x-stage") -> None:
    """An axis with revisions A -> B -> C and A -> D, and one gain set 'base'."""
    catalog.add_axis(
        session, name, position_unit="mm", feedback_kind="encoder", counts_per_rev=2000
    )
    catalog.add_revision(session, name, "A")
    catalog.add_revision(session, name, "B", parent="A", change_category="mechanical")
    catalog.add_revision(session, name, "C", parent="B", change_category="firmware")
    catalog.add_revision(session, name, "D", parent="A", change_category="electrical")
    if session.query(catalog.GainSet).filter_by(name="base").first() is None:
        catalog.add_gain_set(
            session, catalog.GainParams(kp=2.0, ki=10.0, kd=0.01, loop_rate_hz=1000.0), name="base"
        )


def seed_run(
    session: Session, raw: bytes = b"t,sp,fb\n0,0,0\n", axis: str = "x-stage", rev: str = "B"
) -> TestRun:
    return add_run(
        session,
        axis=catalog.get_axis(session, axis),
        revision=catalog.get_revision(session, axis, rev),
        gain_set=catalog.get_gain_set(session, "base"),
        test_kind="position_step",
        conditions=RunConditions(
            taken_at=datetime(2026, 11, 3, 9, 30, tzinfo=UTC), operator="tester"
        ),
        evidence=RunEvidence.from_trace("run.csv", raw, step_trace()),
    )
