"""Which commands the ``logbook`` group offers; one line per command module."""

from __future__ import annotations

import click


def register_commands(group: click.Group) -> None:
    """Attach every command to ``group``."""
    from logbook.cli import analyze, catalog, database, importing

    group.add_command(database.init_command)
    group.add_command(database.db_group)
    group.add_command(catalog.axis_group)
    group.add_command(catalog.rev_group)
    group.add_command(catalog.gains_group)
    group.add_command(catalog.runs_group)
    group.add_command(importing.import_command)
    group.add_command(importing.profile_group)
    group.add_command(analyze.analyze_command)

    from logbook.cli import trends

    group.add_command(trends.trend_command)
    group.add_command(trends.regressions_command)

    from logbook.cli import report, specs

    group.add_command(specs.spec_group)
    group.add_command(report.report_command)

    from logbook.cli import ui

    group.add_command(ui.ui_command)

    from logbook.cli import demo

    group.add_command(demo.demo_command)
