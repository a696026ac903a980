"""Typed run fields from a capture file's ``# key: value`` lines, merged with the CLI.

Known keys: operator, date (ISO 8601 with a UTC offset), supply_voltage_v,
temperature_c, load (a number and its unit, e.g. ``0.50 kg``), revision, gains (a
gain-set name), axis, test_kind, notes. Other keys are kept, untyped, in
:attr:`RunFields.extra`. Values given on the command line win; each disagreement
is reported as one line of text.
"""

from __future__ import annotations

import math
import re
from collections.abc import Mapping
from dataclasses import dataclass, field, fields, replace
from datetime import UTC, datetime

from logbook.errors import InputError

_LOAD = re.compile(r"^([+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)\s*(\S.*)?$")
_TEXT_KEYS = ("operator", "revision", "gains", "axis", "test_kind", "notes")
_NUMBER_KEYS = ("supply_voltage_v", "temperature_c")


@dataclass(frozen=True)
class RunFields:
    """Run fields a file or the command line may give; None means "not given"."""

    operator: str | None = None
    date: datetime | None = None  # aware, UTC
    supply_voltage_v: float | None = None
    temperature_c: float | None = None
    load_value: float | None = None
    load_unit: str | None = None
    revision: str | None = None
    gains: str | None = None
    axis: str | None = None
    test_kind: str | None = None
    notes: str | None = None
    extra: Mapping[str, str] = field(default_factory=dict)


def parse_run_fields(metadata: Mapping[str, str], *, file: str | None = None) -> RunFields:
    """Typed fields from lower-cased metadata keys; a bad value names its key."""
    values: dict[str, object] = {}
    extra: dict[str, str] = {}
    for key, text in metadata.items():
        text = text.strip()
        if not text:
            continue
        if key in _TEXT_KEYS:
            values[key] = text
        elif key in _NUMBER_KEYS:
            values[key] = _number(key, text, file)
        elif key == "date":
            values["date"] = parse_date(text, file=file)
        elif key == "load":
            values["load_value"], values["load_unit"] = parse_load(text, file=file)
        else:
            extra[key] = text
    return RunFields(**values, extra=extra)  # type: ignore[arg-type]


def parse_date(text: str, *, file: str | None = None) -> datetime:
    """An ISO 8601 date-time with a UTC offset, as an aware UTC datetime."""
    try:
        moment = datetime.fromisoformat(text)
    except ValueError:
        raise InputError(
            f"metadata 'date': {text!r} is not an ISO 8601 date-time", file=file
        ) from None
    if moment.tzinfo is None or moment.utcoffset() is None:
        raise InputError(
            f"metadata 'date': {text!r} has no UTC offset (add e.g. +00:00)", file=file
        )
    return moment.astimezone(UTC)


def parse_load(text: str, *, file: str | None = None) -> tuple[float, str | None]:
    """``"0.50 kg"`` -> (0.5, "kg"); the unit may be absent."""
    match = _LOAD.match(text.strip())
    if match is None:
        raise InputError(f"metadata 'load': {text!r} is not a number with its unit", file=file)
    return float(match.group(1)), match.group(2)


def _number(key: str, text: str, file: str | None) -> float:
    try:
        value = float(text)
    except ValueError:
        raise InputError(f"metadata '{key}': {text!r} is not a number", file=file) from None
    if not math.isfinite(value):
        raise InputError(f"metadata '{key}': {text!r} is not a finite number", file=file)
    return value


def merge_run_fields(from_file: RunFields, from_cli: RunFields) -> tuple[RunFields, list[str]]:
    """Each field from the CLI when given there, else from the file; plus the conflicts.

    A conflict is a field both give with different values; the CLI value is used.
    """
    merged: dict[str, object] = {}
    conflicts: list[str] = []
    for spec in fields(RunFields):
        if spec.name == "extra":
            continue
        file_value, cli_value = getattr(from_file, spec.name), getattr(from_cli, spec.name)
        merged[spec.name] = file_value if cli_value is None else cli_value
        if file_value is not None and cli_value is not None and file_value != cli_value:
            conflicts.append(
                f"{spec.name}: the command line gives {_show(cli_value)}, "
                f"the file {_show(file_value)}; using {_show(cli_value)}"
            )
    return replace(from_file, **merged, extra={**from_file.extra, **from_cli.extra}), conflicts


def _show(value: object) -> str:
    return value.isoformat() if isinstance(value, datetime) else repr(value)
