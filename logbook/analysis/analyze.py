"""Analyse a whole trace: find its steps and compute every catalogue figure per step."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from logbook.analysis.inputs import feedback_samples, samples, setpoint_samples, time_axis
from logbook.analysis.levels import median, tail_median, tail_start
from logbook.analysis.metrics import error_integrals, step_figures
from logbook.analysis.model_fit import fit_second_order
from logbook.analysis.oscillation import hunting_figures
from logbook.analysis.results import Figure, StepAnalysis, TraceAnalysis
from logbook.analysis.saturation import NAMES as SATURATION_NAMES
from logbook.analysis.saturation import output_limit, saturation_figures
from logbook.analysis.settings import AnalysisSettings
from logbook.analysis.steps import Step, find_steps
from logbook.errors import InputError
from logbook.trace import Role, Trace

DEFAULT_SETTINGS = AnalysisSettings()


@dataclass(frozen=True)
class _Names:
    """Channel names used in error messages."""

    time: str = "time"
    setpoint: str = "setpoint"
    feedback: str = "feedback"
    effort: str = "effort"


DEFAULT_NAMES = _Names()


def analyze_arrays(
    time: np.ndarray,
    setpoint: np.ndarray,
    feedback: np.ndarray,
    effort: np.ndarray | None = None,
    *,
    settings: AnalysisSettings = DEFAULT_SETTINGS,
) -> TraceAnalysis:
    """Every figure of every step of the trace given as arrays (time in seconds).

    Raises InputError (without a file) for fewer than 3 samples, NaN or infinite
    values, time not strictly increasing, constant feedback or no setpoint step.
    """
    return _analyze(time, setpoint, feedback, effort, settings, DEFAULT_NAMES)


def analyze_trace(trace: Trace, *, settings: AnalysisSettings = DEFAULT_SETTINGS) -> TraceAnalysis:
    """:func:`analyze_arrays` on the trace's time, setpoint, feedback and (optional)
    effort channels, picked by role; errors name the channel."""
    time, setpoint, feedback, effort = (
        trace.by_role(role) for role in (Role.TIME, Role.SETPOINT, Role.FEEDBACK, Role.EFFORT)
    )
    if setpoint is None or feedback is None:
        missing = Role.SETPOINT if setpoint is None else Role.FEEDBACK
        raise InputError(f"the trace has no {missing} channel")
    assert time is not None  # a Trace always has its time channel
    names = _Names(
        time.name, setpoint.name, feedback.name, effort.name if effort is not None else "effort"
    )
    return _analyze(
        time.values,
        setpoint.values,
        feedback.values,
        None if effort is None else effort.values,
        settings,
        names,
    )


def transient_figures(
    time: np.ndarray,
    setpoint: np.ndarray,
    feedback: np.ndarray,
    *,
    settings: AnalysisSettings = DEFAULT_SETTINGS,
) -> list[dict[str, Figure]]:
    """The transient figures of every step (levels, rise, delay, peak, overshoot,
    undershoot, settling, steady-state error: :func:`metrics.step_figures`), after the
    same checks as :func:`analyze_arrays`; a quick look without the error integrals,
    hunting, saturation and fit."""
    return _transients(time, setpoint, feedback, settings, DEFAULT_NAMES)[3]


def _transients(
    time: object, setpoint: object, feedback: object, settings: AnalysisSettings, names: _Names
) -> tuple[np.ndarray, np.ndarray, np.ndarray, list[dict[str, Figure]], tuple[Step, ...]]:
    """(time, setpoint, feedback as checked arrays, the transient figures of every step,
    the steps)."""
    t = time_axis(time, names.time)
    sp, changes = setpoint_samples(setpoint, names.setpoint, length=len(t))
    fb = feedback_samples(feedback, names.feedback, length=len(t))
    steps = find_steps(sp, tolerance=settings.step_tolerance, changes=changes)
    if not steps:
        raise InputError("no step: the setpoint never changes", column=names.setpoint)
    return t, sp, fb, steps_transient_figures(t, fb, steps, settings=settings), steps


def steps_transient_figures(
    time: np.ndarray, feedback: np.ndarray, steps: tuple[Step, ...], *, settings: AnalysisSettings
) -> list[dict[str, Figure]]:
    """The transient figures of ``steps`` (at least one) of arrays already checked.
    A step's initial level is the final level of the step before it (for the first
    step, the level of the samples before it)."""
    window = settings.level_window
    figures = []
    initial = tail_median(time, feedback, 0, steps[0].start, window=window)
    for step in steps:
        final_window = tail_start(time, step.start, step.end, window=window)
        final = median(feedback[final_window : step.end])
        figures.append(
            step_figures(
                time, feedback, step, initial, final, final_window=final_window, settings=settings
            )
        )
        initial = final
    return figures


def _analyze(
    time: object,
    setpoint: object,
    feedback: object,
    effort: object | None,
    settings: AnalysisSettings,
    names: _Names,
) -> TraceAnalysis:
    t, sp, fb, transients, steps = _transients(time, setpoint, feedback, settings, names)
    u = None if effort is None else samples(effort, names.effort, length=len(t))
    limit = None if u is None else output_limit(u, effort_limit=settings.effort_limit)
    results = []
    for index, (step, figures) in enumerate(zip(steps, transients, strict=True)):
        figures |= error_integrals(t, sp, fb, step)
        figures |= _hunting(t, fb, step, figures, settings)
        figures |= _saturation(t, fb, u, step, limit, figures, settings)
        figures |= fit_second_order(
            t,
            fb,
            step.start,
            step.end,
            initial=figures["initial"].value,
            amplitude=figures["amplitude"].value,
            settling_time=figures["settling_time_s"].value,
            overshoot_pct=figures["overshoot_pct"].value,
            peak_time=figures["peak_time_s"].value,
            rise_time=figures["rise_time_s"].value,
            delay_time=figures["delay_time_s"].value,
            max_samples=settings.fit_max_samples,
        )
        results.append(StepAnalysis(index, figures))
    return TraceAnalysis(tuple(results), settings)


def _hunting(
    t: np.ndarray,
    fb: np.ndarray,
    step: Step,
    figures: dict[str, Figure],
    settings: AnalysisSettings,
) -> dict[str, Figure]:
    """Hunting figures over the settled part: the last half of the segment, or less
    when the step settles later than its midpoint."""
    settling = figures["settling_time_s"].value
    t_step = float(t[step.start])
    begin = 0.5 * (t_step + t[step.end - 1])
    if settling is not None:
        begin = max(begin, t_step + settling)
    first = step.start + int(np.searchsorted(t[step.start : step.end], begin, side="left"))
    return hunting_figures(
        t[first : step.end],
        fb[first : step.end],
        band_width=2.0 * settings.band * abs(figures["amplitude"].value or 0.0),
        fraction=settings.hunting_fraction,
        min_cycles=settings.hunting_min_cycles,
        min_share=settings.hunting_min_share,
    )


def _saturation(
    t: np.ndarray,
    fb: np.ndarray,
    u: np.ndarray | None,
    step: Step,
    limit: float | None,
    figures: dict[str, Figure],
    settings: AnalysisSettings,
) -> dict[str, Figure]:
    if u is None or limit is None:
        reason = "no effort channel" if u is None else "the effort is zero throughout"
        return {name: Figure(None, reason) for name in SATURATION_NAMES}
    final, amplitude = figures["final"].value, figures["amplitude"].value
    assert final is not None and amplitude is not None  # levels always exist
    return saturation_figures(
        t,
        fb,
        u,
        step.start,
        step.end,
        limit=limit,
        final=final,
        amplitude=amplitude,
        band=settings.band,
        fraction=settings.saturation_fraction,
        min_samples=settings.saturation_min_samples,
    )
