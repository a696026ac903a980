"""Writers of small, valid capture files for import tests (first-order responses)."""

from __future__ import annotations

from pathlib import Path

import numpy as np


def write_capture(
    path: Path,
    *,
    seed: int = 0,
    rows: int = 300,
    tau: float = 0.02,
    metadata: dict[str, str] | None = None,
) -> Path:
    """A 1 kHz capture of a 0 -> 2 mm step at t = 0.05 s with a first-order response.

    ``seed`` changes the noise, so every seed gives different bytes (a new run).
    """
    rng = np.random.default_rng(seed)
    t = np.arange(rows) / 1000.0
    setpoint = np.where(t >= 0.05, 2.0, 0.0)
    feedback = np.where(t >= 0.05, 2.0 * (1 - np.exp(-(t - 0.05) / tau)), 0.0)
    feedback = feedback + rng.normal(0.0, 0.001, rows)
    lines = [f"# {k}: {v}" for k, v in (metadata or {}).items()]
    lines.append("t [s],setpoint [mm],position [mm],effort [V]")
    lines += [
        f"{a:.4f},{b:.1f},{c:.6f},{(b - c) * 4:.5f}"
        for a, b, c in zip(t, setpoint, feedback, strict=True)
    ]
    path.write_text("\n".join(lines) + "\n")
    return path


def write_batch(folder: Path, count: int, *, start_seed: int = 0) -> list[Path]:
    folder.mkdir(parents=True, exist_ok=True)
    return [
        write_capture(folder / f"capture_{start_seed + i:04d}.csv", seed=start_seed + i)
        for i in range(count)
    ]
