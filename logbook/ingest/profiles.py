"""Import profiles: a saved, named column mapping for one axis's capture files.

A profile is one TOML file (or the same keys as a dict, as stored in the database).
Every key is a field of :class:`ImportProfile`; unknown keys and bad values are
rejected with the field's name, so a typo never silently falls back to a default.
"""

from __future__ import annotations

import math
import os
import re
import tomllib
from collections.abc import Mapping
from dataclasses import MISSING, asdict, dataclass, fields
from typing import Any

from logbook.errors import InputError
from logbook.ingest.columns import TIME_UNITS as SECONDS_PER_UNIT

TIME_UNITS = tuple(SECONDS_PER_UNIT)
PULSE_UNITS = ("us", "ms")
SETPOINT_SIGNALS = ("value", "pulse_width")
FEEDBACK_SIGNALS = ("value", "counts", "quadrature", "analogue")


@dataclass(frozen=True)
class ImportProfile:
    """Which columns are time, setpoint, feedback and effort, and how to convert them.

    ``*_scale`` multiplies a column as read (for quadrature: the decoded count),
    before any conversion. ``delimiter``/``decimal`` of None are sniffed.
    ``setpoint_signal = "pulse_width"`` turns a hobby-servo pulse width into an angle
    in degrees using the ``pulse_*`` keys; ``feedback_signal`` "counts" and
    "quadrature" use the axis's counts_per_rev/units_per_rev, "analogue" its two-point
    calibration. ``speed = true`` turns the position feedback into a velocity.
    """

    name: str
    axis: str
    time_column: str
    setpoint_column: str
    delimiter: str | None = None
    decimal: str | None = None
    time_unit: str = "s"
    setpoint_unit: str = ""
    setpoint_scale: float = 1.0
    setpoint_signal: str = "value"
    feedback_column: str | None = None
    feedback_unit: str = ""
    feedback_scale: float = 1.0
    feedback_signal: str = "value"
    quadrature_a_column: str | None = None
    quadrature_b_column: str | None = None
    effort_column: str | None = None
    effort_unit: str = ""
    effort_scale: float = 1.0
    pulse_unit: str = "us"
    pulse_center_us: float = 1500.0
    pulse_half_span_us: float = 500.0
    pulse_half_travel_deg: float = 90.0
    speed: bool = False

    def __post_init__(self) -> None:
        for spec in fields(self):
            value = getattr(self, spec.name)
            if spec.type == "float" and isinstance(value, int) and not isinstance(value, bool):
                object.__setattr__(self, spec.name, float(value))  # TOML writes 1500 for 1500.0
            else:
                _check_type(spec.name, value, spec.type)
            if spec.type == "float" and not math.isfinite(getattr(self, spec.name)):
                raise InputError(f"profile field '{spec.name}' must be a finite number")
        _one_of("delimiter", self.delimiter, (",", ";", "\t"), optional=True)
        _one_of("decimal", self.decimal, (".", ","), optional=True)
        if self.delimiter == "," and self.decimal == ",":
            raise InputError("profile field 'decimal': ',' needs a ';' or tab delimiter")
        _one_of("time_unit", self.time_unit, TIME_UNITS)
        _one_of("setpoint_signal", self.setpoint_signal, SETPOINT_SIGNALS)
        _one_of("feedback_signal", self.feedback_signal, FEEDBACK_SIGNALS)
        _one_of("pulse_unit", self.pulse_unit, PULSE_UNITS)
        for name in ("name", "axis", "time_column", "setpoint_column"):
            if not getattr(self, name).strip():
                raise InputError(f"profile field '{name}' is empty")
        if self.feedback_signal == "quadrature":
            for name in ("quadrature_a_column", "quadrature_b_column"):
                if getattr(self, name) is None:
                    raise InputError(f"profile field '{name}' is required for quadrature")
            if self.feedback_column is not None:
                raise InputError(
                    "profile field 'feedback_column' must be omitted for quadrature "
                    "(the A and B columns are the feedback)"
                )
        elif self.feedback_column is None:
            raise InputError("profile field 'feedback_column' is required")
        if self.setpoint_signal == "pulse_width" and self.setpoint_unit not in ("", "deg"):
            raise InputError(
                "profile field 'setpoint_unit': a pulse_width setpoint is "
                f"converted to deg, not {self.setpoint_unit!r}"
            )
        named = [(key, getattr(self, key)) for key in _COLUMN_FIELDS if getattr(self, key)]
        for i, (key, column) in enumerate(named):
            for other, same in named[:i]:
                if same == column:
                    raise InputError(
                        f"profile fields '{other}' and '{key}' name the same column {column!r}"
                    )
        for name in ("pulse_half_span_us", "pulse_half_travel_deg"):
            if not getattr(self, name) > 0:
                raise InputError(f"profile field '{name}' must be positive")
        for name in ("setpoint_scale", "feedback_scale", "effort_scale"):
            if getattr(self, name) == 0:
                raise InputError(f"profile field '{name}' must not be zero")

    def to_dict(self) -> dict[str, Any]:
        """The profile as TOML-ready keys (None values, which TOML cannot hold, left out)."""
        return {key: value for key, value in asdict(self).items() if value is not None}

    @property
    def columns(self) -> tuple[str, ...]:
        """Every file column the profile reads."""
        named = (getattr(self, key) for key in _COLUMN_FIELDS)
        return tuple(c for c in named if c is not None)


_COLUMN_FIELDS = (
    "time_column",
    "setpoint_column",
    "feedback_column",
    "quadrature_a_column",
    "quadrature_b_column",
    "effort_column",
)


_FIELDS = {spec.name: spec for spec in fields(ImportProfile)}


def profile_from_dict(data: Mapping[str, Any], *, file: str | None = None) -> ImportProfile:
    """Build a profile from TOML-style keys; unknown or missing keys name the field."""
    unknown = sorted(set(data) - set(_FIELDS))
    if unknown:
        raise InputError(
            f"unknown profile field '{unknown[0]}' (known: {', '.join(_FIELDS)})", file=file
        )
    missing = [
        name for name, spec in _FIELDS.items() if spec.default is MISSING and name not in data
    ]
    if missing:
        raise InputError(f"profile field '{missing[0]}' is required", file=file)
    try:
        return ImportProfile(**data)
    except InputError as exc:
        if file is None:
            raise
        raise exc.located(file) from None


def load_profile(path: str | os.PathLike[str]) -> ImportProfile:
    """Read one profile from a TOML file."""
    name = str(path)
    try:
        with open(name, "rb") as fh:
            data = tomllib.load(fh)
    except OSError as exc:
        raise InputError(f"cannot open the profile: {exc.strerror or exc}", file=name) from exc
    except tomllib.TOMLDecodeError as exc:
        where = re.search(r"at line (\d+)", str(exc))
        raise InputError(
            f"not valid TOML ({exc})", file=name, line=int(where.group(1)) if where else None
        ) from exc
    return profile_from_dict(data, file=name)


_TYPES = {"str": (str,), "str | None": (str, type(None)), "float": (float,), "bool": (bool,)}


def _check_type(name: str, value: Any, annotation: Any) -> None:
    allowed = _TYPES[str(annotation)]
    if not isinstance(value, allowed) or (bool not in allowed and isinstance(value, bool)):
        wanted = {
            "str": "text",
            "str | None": "text",
            "float": "a number",
            "bool": "true or false",
        }[str(annotation)]
        raise InputError(f"profile field '{name}' must be {wanted}, not {value!r}")


def _one_of(
    name: str, value: str | None, allowed: tuple[str, ...], *, optional: bool = False
) -> None:
    if value is None and optional:
        return
    if value not in allowed:
        raise InputError(
            f"profile field '{name}': {value!r} is not one of {', '.join(repr(a) for a in allowed)}"
        )
