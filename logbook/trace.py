"""The in-memory trace: named channels of samples with a role and a unit each.

A :class:`Trace` is what importers produce, what the analysis consumes and what the
store serialises. It holds numpy arrays only, so every layer can use it without
importing the database or the file readers.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from enum import StrEnum

import numpy as np


class Role(StrEnum):
    """What a channel means to the analysis."""

    TIME = "time"
    SETPOINT = "setpoint"
    FEEDBACK = "feedback"
    EFFORT = "effort"
    OTHER = "other"


@dataclass(frozen=True)
class Channel:
    """One column of samples. ``values`` is float64 and never copied on access."""

    name: str
    role: Role
    unit: str
    values: np.ndarray

    def __post_init__(self) -> None:
        if self.values.ndim != 1:
            raise ValueError(f"channel '{self.name}' must be one-dimensional")


@dataclass(frozen=True)
class Trace:
    """Equal-length channels; exactly one has the TIME role (in seconds).

    ``quality`` carries data-quality figures found while converting the file
    (for example illegal quadrature transitions or out-of-range pulse widths);
    they are stored with the run.
    """

    channels: tuple[Channel, ...]
    quality: dict[str, float] = field(default_factory=dict)

    def __post_init__(self) -> None:
        lengths = {len(c.values) for c in self.channels}
        if len(lengths) > 1:
            raise ValueError("all channels of a trace must have the same length")
        names = [c.name for c in self.channels]
        if len(set(names)) != len(names):
            raise ValueError("channel names of a trace must be unique")
        if sum(c.role is Role.TIME for c in self.channels) != 1:
            raise ValueError("a trace needs exactly one time channel")

    def __len__(self) -> int:
        return len(self.channels[0].values) if self.channels else 0

    def by_role(self, role: Role) -> Channel | None:
        """The first channel with ``role``, or None."""
        return next((c for c in self.channels if c.role is role), None)

    @property
    def time(self) -> np.ndarray:
        channel = self.by_role(Role.TIME)
        assert channel is not None  # guaranteed by __post_init__
        return channel.values
