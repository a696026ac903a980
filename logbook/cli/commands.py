"""Which commands the ``logbook`` group offers, and where each one lives.

Modules are imported only when their command runs (or for ``--help``), so a
quick command does not pay for the whole application's imports.
"""

from __future__ import annotations

from logbook.cli.base import LogbookGroup

COMMANDS = {
    "init": "logbook.cli.database:init_command",
    "db": "logbook.cli.database:db_group",
    "axis": "logbook.cli.catalog:axis_group",
    "rev": "logbook.cli.catalog:rev_group",
    "gains": "logbook.cli.catalog:gains_group",
    "runs": "logbook.cli.catalog:runs_group",
    "import": "logbook.cli.importing:import_command",
    "profile": "logbook.cli.importing:profile_group",
    "analyze": "logbook.cli.analyze:analyze_command",
    "trend": "logbook.cli.trends:trend_command",
    "regressions": "logbook.cli.trends:regressions_command",
    "spec": "logbook.cli.specs:spec_group",
    "report": "logbook.cli.report:report_command",
    "ui": "logbook.cli.ui:ui_command",
    "demo": "logbook.cli.demo:demo_command",
}


def register_commands(group: LogbookGroup) -> None:
    """Attach every command to ``group`` by name."""
    for name, target in COMMANDS.items():
        group.add_lazy_command(name, target)
