"""Acceptance spec files (TOML or YAML, same keys) read into a :class:`SpecDefinition`.

A spec names, per metric of :data:`logbook.analysis.catalog.METRICS`, a lower and/or
upper limit with its unit, the test kind and axes it applies to, the statistic that
is judged and how many runs are required::

    name = "stage-position-acceptance"
    version = "1.0"
    test_kind = "position_step"
    axes = ["x-stage"]
    statistic = "median"           # every_run | median | p95  (default every_run)
    required_runs = 5              # default 1
    description = "..."
    [limits.overshoot_pct]
    upper = 10.0
    unit = "%"

Limits are inclusive: a value equal to a limit meets it. Units must be the
catalogue's unit of the metric, except for metrics measured in the feedback
channel's unit (levels, errors, integrals), where the spec's unit is taken as
written because it depends on the axis. Unknown keys are rejected rather than
ignored, so a misspelt ``uper`` cannot silently drop a limit. Every problem is an
:class:`~logbook.errors.InputError` naming the file and the field.
"""

from __future__ import annotations

import difflib
import math
import tomllib
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import yaml

from logbook.analysis.catalog import FEEDBACK_UNIT, METRICS
from logbook.errors import InputError
from logbook.store.models import SPEC_STATISTICS, TEST_KINDS

_TOP_KEYS = (
    "name",
    "version",
    "test_kind",
    "axes",
    "statistic",
    "required_runs",
    "description",
    "limits",
)
_LIMIT_KEYS = ("lower", "upper", "unit")
_NAME_MAX = 100  # the store's column widths
_VERSION_MAX = 32
SPEC_SUFFIXES = {".toml": "toml", ".yaml": "yaml", ".yml": "yaml"}
_Fail = Callable[[str, str], InputError]  # (field, reason) -> error naming the file


@dataclass(frozen=True)
class Limit:
    """An inclusive lower and/or upper limit on one metric, in ``unit``."""

    lower: float | None
    upper: float | None
    unit: str

    def to_dict(self) -> dict[str, float | str | None]:
        return {"lower": self.lower, "upper": self.upper, "unit": self.unit}


@dataclass(frozen=True)
class SpecDefinition:
    """A validated spec. ``limits`` maps metric name -> :class:`Limit`, sorted by name."""

    name: str
    version: str
    test_kind: str
    axes: tuple[str, ...]
    statistic: str
    required_runs: int
    description: str
    limits: Mapping[str, Limit]

    def to_dict(self) -> dict[str, Any]:
        """The spec as plain JSON-ready data (the file's keys; absent bounds are None)."""
        return {
            "name": self.name,
            "version": self.version,
            "test_kind": self.test_kind,
            "axes": list(self.axes),
            "statistic": self.statistic,
            "required_runs": self.required_runs,
            "description": self.description,
            "limits": {metric: limit.to_dict() for metric, limit in self.limits.items()},
        }


def load_spec_file(path: str | Path) -> SpecDefinition:
    """Read and validate a ``.toml``, ``.yaml`` or ``.yml`` spec file."""
    path = Path(path)
    fmt = SPEC_SUFFIXES.get(path.suffix.lower())
    if fmt is None:
        raise InputError("unknown spec file type; use .toml, .yaml or .yml", file=str(path))
    try:
        text = path.read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError) as exc:
        raise InputError(f"cannot read spec file: {exc}", file=str(path)) from exc
    return parse_spec_text(text, fmt=fmt, source=str(path))


def parse_spec_text(text: str, *, fmt: str, source: str) -> SpecDefinition:
    """Parse spec ``text`` in ``fmt`` ("toml" or "yaml"); ``source`` names it in errors."""
    if fmt == "toml":
        try:
            data: object = tomllib.loads(text)
        except tomllib.TOMLDecodeError as exc:
            raise InputError(f"not valid TOML: {exc}", file=source) from exc
    elif fmt == "yaml":
        try:
            data = yaml.safe_load(text)
        except yaml.YAMLError as exc:
            mark = getattr(exc, "problem_mark", None)
            line = mark.line + 1 if mark is not None else None
            problem = getattr(exc, "problem", None) or str(exc)
            raise InputError(f"not valid YAML: {problem}", file=source, line=line) from exc
    else:
        raise ValueError(f"unknown spec format {fmt!r}")
    if not isinstance(data, Mapping):
        raise InputError("a spec must be a table of keys (name, version, limits, ...)", file=source)
    return spec_from_mapping(data, source=source)


def spec_from_mapping(data: Mapping[str, Any], *, source: str = "<spec>") -> SpecDefinition:
    """Validate ``data`` (the file's keys) into a :class:`SpecDefinition`."""

    def fail(field: str, reason: str) -> InputError:
        return InputError(f"{field}: {reason}", file=source)

    _reject_unknown(data, _TOP_KEYS, "", fail)
    name = _text(data, "name", fail, max_len=_NAME_MAX)
    version = _text(data, "version", fail, max_len=_VERSION_MAX)
    test_kind = _text(data, "test_kind", fail, max_len=16)
    if test_kind not in TEST_KINDS:
        raise fail("test_kind", f"'{test_kind}' is not one of {', '.join(TEST_KINDS)}")
    statistic = data.get("statistic", "every_run")
    if statistic not in SPEC_STATISTICS:
        raise fail("statistic", f"{statistic!r} is not one of {', '.join(SPEC_STATISTICS)}")
    required_runs = data.get("required_runs", 1)
    if isinstance(required_runs, bool) or not isinstance(required_runs, int) or required_runs < 1:
        raise fail("required_runs", f"must be a whole number of at least 1, got {required_runs!r}")
    description = data.get("description", "")
    if not isinstance(description, str):
        raise fail("description", "must be text")
    return SpecDefinition(
        name=name,
        version=version,
        test_kind=test_kind,
        axes=_axes(data.get("axes"), fail),
        statistic=statistic,
        required_runs=required_runs,
        description=description,
        limits=_limits(data.get("limits"), fail),
    )


def _reject_unknown(
    table: Mapping[str, Any], known: tuple[str, ...], prefix: str, fail: _Fail
) -> None:
    for key in table:
        if key not in known:
            raise fail(f"{prefix}{key}", f"unknown key; expected one of {', '.join(known)}")


def _text(data: Mapping[str, Any], key: str, fail: _Fail, *, max_len: int) -> str:
    value = data.get(key)
    if value is None:
        raise fail(key, "missing")
    if not isinstance(value, str):
        # YAML reads version: 1.10 as the number 1.1; insist on the written text.
        raise fail(key, f"must be text (quote it), got {value!r}")
    value = value.strip()
    if not value:
        raise fail(key, "must not be empty")
    if len(value) > max_len:
        raise fail(key, f"longer than {max_len} characters")
    return value


def _axes(value: object, fail: _Fail) -> tuple[str, ...]:
    if not isinstance(value, list) or not value:
        raise fail("axes", "must be a non-empty list of axis names")
    names = []
    for i, item in enumerate(value):
        if not isinstance(item, str) or not item.strip():
            raise fail(f"axes[{i}]", f"must be an axis name, got {item!r}")
        names.append(item.strip())
    if len(set(names)) != len(names):
        raise fail("axes", "lists an axis twice")
    return tuple(names)


def _limits(value: object, fail: _Fail) -> dict[str, Limit]:
    if not isinstance(value, Mapping) or not value:
        raise fail("limits", "must be a table with at least one metric, e.g. [limits.rise_time_s]")
    limits = {}
    for metric in sorted(value):
        field = f"limits.{metric}"
        info = METRICS.get(metric)
        if info is None:
            close = difflib.get_close_matches(metric, METRICS, n=1)
            hint = f"did you mean '{close[0]}'?" if close else "see logbook.analysis.catalog"
            raise fail(field, f"unknown metric '{metric}'; {hint}")
        table = value[metric]
        if not isinstance(table, Mapping):
            raise fail(field, "must be a table with lower and/or upper and unit")
        _reject_unknown(table, _LIMIT_KEYS, f"{field}.", fail)
        lower = _bound(table, "lower", field, fail)
        upper = _bound(table, "upper", field, fail)
        if lower is None and upper is None:
            raise fail(field, "needs a lower or an upper limit (or both)")
        if lower is not None and upper is not None and lower > upper:
            raise fail(field, f"lower limit {lower:g} is above upper limit {upper:g}")
        unit = table.get("unit")
        if not isinstance(unit, str) or not unit.strip():
            raise fail(f"{field}.unit", f"missing; the catalogue unit of {metric} is '{info.unit}'")
        unit = unit.strip()
        if FEEDBACK_UNIT not in info.unit and unit != info.unit:
            raise fail(
                f"{field}.unit",
                f"'{unit}' does not match the catalogue unit '{info.unit}' of {metric};"
                f" give the limit in {info.unit}",
            )
        limits[metric] = Limit(lower=lower, upper=upper, unit=unit)
    return limits


def _bound(table: Mapping[str, Any], key: str, field: str, fail: _Fail) -> float | None:
    value = table.get(key)
    if value is None:
        return None
    if isinstance(value, bool) or not isinstance(value, int | float):
        raise fail(f"{field}.{key}", f"must be a number, got {value!r}")
    if not math.isfinite(value):
        raise fail(f"{field}.{key}", "must be a finite number")
    return float(value)
