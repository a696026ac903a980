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

#: Time units a header may carry, as factors to seconds.
TIME_UNITS = {"s": 1.0, "sec": 1.0, "ms": 1e-3, "us": 1e-6, "µs": 1e-6, "μs": 1e-6}
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

    Columns not named are found by :func:`find_column`; effort is optional. Time is
    converted to seconds when its header carries ``[ms]`` or ``[us]``. Rejects, with
    file, line and column: a missing column, one column in two roles, fewer than
    ``min_rows`` rows, NaN in a used column, time not strictly increasing.
    """
    chosen = {
        Role.TIME: _resolve(table, time, Role.TIME, required=True),
        Role.SETPOINT: _resolve(table, setpoint, Role.SETPOINT, required=True),
        Role.FEEDBACK: _resolve(table, feedback, Role.FEEDBACK, required=True),
        Role.EFFORT: _resolve(table, effort, Role.EFFORT, required=False),
    }
    used = {role: name for role, name in chosen.items() if name is not None}
    check_rows(table, min_rows)
    roles_of: dict[str, Role] = {}
    for role, name in used.items():
        if name in roles_of:
            raise InputError(
                f"the column is chosen as both {roles_of[name]} and {role}",
                file=table.path,
                column=name,
            )
        roles_of[name] = role
        check_finite(table, name)
    time_name = used[Role.TIME]
    time_unit = unit_of(time_name) or "s"
    if time_unit not in TIME_UNITS:
        raise InputError(
            f"time unit '{time_unit}' is not one of s, ms, us", file=table.path, column=time_name
        )
    seconds = to_seconds(table.columns[time_name], time_unit)
    check_increasing(table, time_name, seconds)
    channels = [Channel(time_name, Role.TIME, "s", seconds)]
    channels += [
        Channel(name, role, unit_of(name), table.columns[name])
        for role, name in used.items()
        if role is not Role.TIME
    ]
    return Trace(tuple(channels))


def to_seconds(values: np.ndarray, unit: str) -> np.ndarray:
    """``values`` in ``unit`` (one of :data:`TIME_UNITS`) as seconds; no copy for s."""
    factor = TIME_UNITS[unit]
    return values if factor == 1.0 else values * factor


def _resolve(table: RawTable, given: str | None, role: Role, *, required: bool) -> str | None:
    names = list(table.columns)
    if given is not None:
        if given not in table.columns:
            raise InputError(
                f"no such {role} column; the columns are {names}",
                file=table.path,
                line=table.header_line,
                column=given,
            )
        return given
    found = find_column(names, role)
    if found is None and required:
        raise InputError(
            f"no {role} column found by name (looked for {', '.join(ROLE_NAMES[role])}; "
            f"the columns are {names}); name it explicitly",
            file=table.path,
            line=table.header_line,
        )
    return found


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
