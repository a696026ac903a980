"""Pick the time, setpoint, feedback and effort columns of a table and build a Trace.

The by-name rule (:func:`find_column`): a header's *base name* is the header with
any trailing unit in brackets ``[...]`` or parentheses ``(...)`` removed, lower-cased,
with runs of spaces, hyphens and dots turned into ``_``. A column plays a role when
its base name is one of that role's names in :data:`ROLE_NAMES`; when several do,
the first in file order wins. So ``"t [s]"``, ``"Time (ms)"`` and ``"timestamp"``
are time columns, ``"Set Point [mm]"`` is a setpoint, ``"position [counts]"`` is
feedback. An explicitly named column always wins over the rule.
"""

from __future__ import annotations

import re
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from logbook.errors import InputError
from logbook.ingest.reader import RawTable
from logbook.trace import Channel, Role, Trace

#: Base names recognised for each role (see the module docstring for the rule).
#: r/y/u are the control-theory letters; sp/pv/mv the process-control ones.
ROLE_NAMES: dict[Role, tuple[str, ...]] = {
    Role.TIME: ("t", "time", "timestamp", "time_s", "elapsed", "seconds"),
    Role.SETPOINT: (
        "setpoint",
        "set_point",
        "target",
        "command",
        "cmd",
        "reference",
        "ref",
        "demand",
        "sp",
        "r",
    ),
    Role.FEEDBACK: (
        "feedback",
        "position",
        "pos",
        "actual",
        "measured",
        "angle",
        "speed",
        "velocity",
        "encoder",
        "counts",
        "pv",
        "y",
    ),
    Role.EFFORT: (
        "effort",
        "output",
        "control",
        "duty",
        "pwm",
        "voltage",
        "current",
        "torque",
        "mv",
        "u",
    ),
}

#: Time units, as factors to seconds.
TIME_UNITS = {"s": 1.0, "ms": 1e-3, "us": 1e-6}
#: Other spellings of those units accepted in a header's brackets.
TIME_UNIT_SPELLINGS = {"sec": "s", "µs": "us", "μs": "us"}
#: Fewest samples a trace may have (a step needs a before, an at and an after).
MIN_ROWS = 3

_UNIT = re.compile(r"\s*(?:\[([^\]]*)\]|\(([^)]*)\))\s*$")
_SEPARATORS = re.compile(r"[\s.\-]+")


def unit_of(header: str) -> str:
    """The unit written in brackets at the end of ``header``, or "" when none."""
    match = _UNIT.search(header)
    if match is None:
        return ""
    return (match.group(1) if match.group(1) is not None else match.group(2)).strip()


def base_name(header: str) -> str:
    """``header`` without its unit, lower-cased, separators as ``_``."""
    return _SEPARATORS.sub("_", _UNIT.sub("", header).strip().lower())


def find_column(names: Sequence[str], role: Role) -> str | None:
    """The first of ``names`` whose base name is one of ``ROLE_NAMES[role]``, or None."""
    wanted = ROLE_NAMES.get(role, ())
    return next((name for name in names if base_name(name) in wanted), None)


@dataclass(frozen=True)
class ColumnRoles:
    """The columns chosen for each role (effort is optional)."""

    time: str
    setpoint: str
    feedback: str
    effort: str | None = None

    def items(self) -> list[tuple[Role, str]]:
        """(role, column) for every role that has a column, time first."""
        pairs = [
            (Role.TIME, self.time),
            (Role.SETPOINT, self.setpoint),
            (Role.FEEDBACK, self.feedback),
            (Role.EFFORT, self.effort),
        ]
        return [(role, name) for role, name in pairs if name is not None]


def choose_columns(
    table: RawTable,
    *,
    time: str | None = None,
    setpoint: str | None = None,
    feedback: str | None = None,
    effort: str | None = None,
) -> ColumnRoles:
    """Columns named explicitly, the rest found by :func:`find_column`.

    Rejects, naming the header line and column: an explicit name the file lacks, a
    required role (time, setpoint, feedback) not found, one column in two roles.
    """
    roles = ColumnRoles(
        time=_required(table, time, Role.TIME),
        setpoint=_required(table, setpoint, Role.SETPOINT),
        feedback=_required(table, feedback, Role.FEEDBACK),
        effort=_resolve(table, effort, Role.EFFORT),
    )
    roles_of: dict[str, Role] = {}
    for role, name in roles.items():
        if name in roles_of:
            raise InputError(
                f"the column is chosen as both {roles_of[name]} and {role}",
                file=table.path,
                line=table.header_line,
                column=name,
            )
        roles_of[name] = role
    return roles


def _resolve(table: RawTable, given: str | None, role: Role) -> str | None:
    if given is None:
        return find_column(list(table.columns), role)
    if given not in table.columns:
        raise InputError(
            f"no such {role} column; the columns are {list(table.columns)}",
            file=table.path,
            line=table.header_line,
            column=given,
        )
    return given


def _required(table: RawTable, given: str | None, role: Role) -> str:
    found = _resolve(table, given, role)
    if found is None:
        raise InputError(
            f"no {role} column found by name (looked for {', '.join(ROLE_NAMES[role])}; "
            f"the columns are {list(table.columns)}); name it explicitly",
            file=table.path,
            line=table.header_line,
        )
    return found


def header_time_unit(header: str) -> str:
    """The time unit in ``header``'s brackets as a key of TIME_UNITS; "s" when none.

    Raises InputError (column = ``header``, file left to the caller) for other units.
    """
    unit = unit_of(header) or "s"
    unit = TIME_UNIT_SPELLINGS.get(unit, unit)
    if unit not in TIME_UNITS:
        raise InputError(f"time unit '{unit}' is not one of s, ms, us", column=header)
    return unit


def trace_from_table(
    table: RawTable,
    *,
    time: str | None = None,
    setpoint: str | None = None,
    feedback: str | None = None,
    effort: str | None = None,
    min_rows: int = MIN_ROWS,
) -> Trace:
    """A Trace of the plain columns (no signal conversion) of ``table``.

    Columns are chosen by :func:`choose_columns`. Time is converted to seconds when
    its header carries ``[ms]`` or ``[us]`` (:func:`header_time_unit`). Rejects, with
    file, line and column: the faults of choose_columns, fewer than ``min_rows`` rows,
    NaN in a used column, time not strictly increasing.
    """
    roles = choose_columns(table, time=time, setpoint=setpoint, feedback=feedback, effort=effort)
    check_rows(table, min_rows)
    for _, name in roles.items():
        check_finite(table, name)
    try:
        time_unit = header_time_unit(roles.time)
    except InputError as exc:
        raise exc.located(table.path) from None
    seconds = to_seconds(table.columns[roles.time], time_unit)
    check_increasing(table, roles.time, seconds)
    channels = [Channel(roles.time, Role.TIME, "s", seconds)]
    channels += [
        Channel(name, role, unit_of(name), table.columns[name]) for role, name in roles.items()[1:]
    ]
    return Trace(tuple(channels))


def to_seconds(values: np.ndarray, unit: str) -> np.ndarray:
    """``values`` in ``unit`` (a key of :data:`TIME_UNITS`) as seconds; no copy for s."""
    factor = TIME_UNITS[unit]
    return values if factor == 1.0 else values * factor


def check_rows(table: RawTable, min_rows: int = MIN_ROWS) -> None:
    """At least ``min_rows`` data rows."""
    if len(table) < min_rows:
        raise InputError(
            f"only {len(table)} data rows; at least {min_rows} are needed", file=table.path
        )


def check_finite(table: RawTable, name: str) -> None:
    """No NaN (a missing value) in column ``name``."""
    missing = np.isnan(table.columns[name])
    if missing.any():
        row = int(np.argmax(missing))
        raise InputError(
            "missing value (NaN) in a used column",
            file=table.path,
            line=table.line_of(row),
            column=name,
        )


def check_increasing(table: RawTable, name: str, values: np.ndarray) -> None:
    """``values`` (the time column ``name``) strictly increasing, sample by sample."""
    steps = np.diff(values)
    bad = steps <= 0
    if bad.any():
        row = int(np.argmax(bad)) + 1
        what = "duplicate timestamp" if steps[row - 1] == 0 else "time goes backwards"
        raise InputError(
            f"{what}: {float(table.columns[name][row])!r} after "
            f"{float(table.columns[name][row - 1])!r}",
            file=table.path,
            line=table.line_of(row),
            column=name,
        )
