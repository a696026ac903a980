"""The root command group, shared options and the error-to-exit-code policy.

Start-up time matters (scripts call ``logbook`` once per file): commands are
registered by name and their modules imported only when one is run, and this
module imports the database and analysis layers only inside the functions that
need them.
"""

from __future__ import annotations

import importlib
import json
import sys
from collections.abc import Callable, Iterable
from datetime import UTC, date, datetime
from typing import TYPE_CHECKING, Any

import click

from logbook import __version__
from logbook.errors import LogbookError

if TYPE_CHECKING:
    from logbook.analysis.settings import AnalysisSettings
    from logbook.store.engine import Database


class LogbookGroup(click.Group):
    """A group of lazily imported commands that turns every user error into one
    clear line and exit code 1."""

    def __init__(self, *args: Any, **kwargs: Any) -> None:
        super().__init__(*args, **kwargs)
        self._lazy: dict[str, str] = {}

    def add_lazy_command(self, name: str, target: str) -> None:
        """Register ``name`` as the click command at ``"module:attribute"``."""
        self._lazy[name] = target

    def list_commands(self, ctx: click.Context) -> list[str]:
        return sorted({*super().list_commands(ctx), *self._lazy})

    def get_command(self, ctx: click.Context, cmd_name: str) -> click.Command | None:
        if cmd_name in self._lazy and cmd_name not in self.commands:
            module, attribute = self._lazy[cmd_name].split(":")
            self.add_command(getattr(importlib.import_module(module), attribute), cmd_name)
        return super().get_command(ctx, cmd_name)

    def invoke(self, ctx: click.Context) -> Any:
        try:
            return super().invoke(ctx)
        except LogbookError as exc:
            raise click.ClickException(str(exc)) from None
        except Exception as exc:
            if "sqlalchemy" not in sys.modules:  # then it cannot be a database error
                raise
            from sqlalchemy.exc import OperationalError

            if not isinstance(exc, OperationalError):
                raise
            from logbook.store.config import mask_text

            first = str(exc.orig or exc).strip().splitlines()[0]
            raise click.ClickException(f"database error: {mask_text(first)}") from None


@click.group(cls=LogbookGroup, context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(__version__, prog_name="logbook")
def main() -> None:
    """Bench-test logbook for motion-control axes.

    Example: logbook init && logbook axis add x-stage --unit mm --feedback encoder
    """


def db_option(func: Callable[..., Any]) -> Callable[..., Any]:
    """``--db URL-or-path``; falls back to $LOGBOOK_DB, then ./logbook.db."""
    return click.option(
        "--db",
        "db",
        default=None,
        metavar="URL-OR-PATH",
        help="Database URL or SQLite file path (default: $LOGBOOK_DB, else ./logbook.db).",
    )(func)


def json_option(func: Callable[..., Any]) -> Callable[..., Any]:
    """``--json``: print machine-readable output instead of a table."""
    return click.option("--json", "as_json", is_flag=True, help="Print JSON for scripts.")(func)


def json_text(payload: object) -> str:
    """``payload`` as one line of JSON; dates as ISO 8601, other objects through ``str``."""
    return json.dumps(payload, default=_json_default, ensure_ascii=False)


def print_json(payload: object) -> None:
    """Print ``payload`` as JSON (see :func:`json_text`)."""
    click.echo(json_text(payload))


def _json_default(value: object) -> object:
    if isinstance(value, datetime | date):
        return value.isoformat()
    return str(value)


def print_table(rows: Iterable[dict[str, object]], columns: list[str]) -> None:
    """Print rows as a plain aligned text table; an empty list prints '(none)'."""
    rows = list(rows)
    if not rows:
        click.echo("(none)")
        return
    cells = [[_cell(row.get(c)) for c in columns] for row in rows]
    widths = [max(len(c), *(len(r[i]) for r in cells)) for i, c in enumerate(columns)]
    click.echo("  ".join(c.ljust(w) for c, w in zip(columns, widths, strict=True)).rstrip())
    for r in cells:
        click.echo("  ".join(v.ljust(w) for v, w in zip(r, widths, strict=True)).rstrip())


def _cell(value: object) -> str:
    if value is None:
        return "-"
    if isinstance(value, float):
        return f"{value:.6g}"
    return str(value)


def open_logbook(db: str | None, *, check_schema: bool = True) -> Database:
    """Open the chosen database; unless told otherwise insist it is current."""
    from logbook.store.engine import Database
    from logbook.store.migrate import require_current

    database = Database.open(db)
    context = click.get_current_context(silent=True)
    if context is not None:  # release pooled connections when the command ends
        context.call_on_close(database.dispose)
    if check_schema:
        require_current(database)
    return database


def parse_when(text: str, field_name: str) -> datetime:
    """An ISO 8601 date or date-time; without a zone it is taken as UTC."""
    try:
        value = datetime.fromisoformat(text)
    except ValueError:
        raise click.BadParameter(
            f"{text!r} is not an ISO 8601 date", param_hint=field_name
        ) from None
    return value if value.tzinfo else value.replace(tzinfo=UTC)


def parse_rise(text: str) -> tuple[float, float]:
    """``10-90`` (percent) -> (0.10, 0.90)."""
    try:
        low, high = (float(part) / 100.0 for part in text.split("-", 1))
    except ValueError:
        raise click.BadParameter(f"{text!r} is not LOW-HIGH in percent, e.g. 10-90") from None
    return low, high


def analysis_settings(band: float | None, rise: str | None) -> AnalysisSettings:
    """Settings from ``--band PCT`` and ``--rise LOW-HIGH``, defaults otherwise."""
    from logbook.analysis.settings import AnalysisSettings

    defaults = AnalysisSettings()
    low, high = parse_rise(rise) if rise else (defaults.rise_low, defaults.rise_high)
    try:
        return AnalysisSettings(
            rise_low=low, rise_high=high, band=band / 100.0 if band is not None else defaults.band
        )
    except ValueError as exc:
        raise click.BadParameter(str(exc)) from None
