"""Fixtures of the report tests: the sample report and its hostile twin."""

from __future__ import annotations

import pytest

from logbook.reports.data import ReportData

from .sample_report import build_report, hostile_copy


@pytest.fixture(scope="session")
def report_data() -> ReportData:
    return build_report()


@pytest.fixture(scope="session")
def hostile_report_data(report_data: ReportData) -> ReportData:
    """The same report with hostile text in every field a user can write."""
    return hostile_copy(report_data)
