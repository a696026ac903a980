"""The catalogue of per-step figures: names, units and which way is better.

Names are the snake_case keys of ``logbook analyze --json`` and of stored analysis
results. A unit of ``"<feedback>"`` means "the unit of the feedback channel"; the
store resolves it when it saves a result. ``better`` is "lower", "higher", or None
where neither direction is worse (levels, times of events), and drives the
regression finder's "worse"/"better".
"""

from __future__ import annotations

from dataclasses import dataclass

FEEDBACK_UNIT = "<feedback>"


@dataclass(frozen=True)
class MetricInfo:
    name: str
    unit: str
    better: str | None
    description: str


_METRICS = [
    MetricInfo("t_step_s", "s", None, "time of the first sample carrying the new setpoint"),
    MetricInfo("setpoint_before", FEEDBACK_UNIT, None, "setpoint before the step"),
    MetricInfo("setpoint_after", FEEDBACK_UNIT, None, "setpoint after the step"),
    MetricInfo("initial", FEEDBACK_UNIT, None, "feedback level before the step"),
    MetricInfo("final", FEEDBACK_UNIT, None, "feedback level settled to within the segment"),
    MetricInfo("amplitude", FEEDBACK_UNIT, None, "final - initial"),
    MetricInfo("rise_start_s", "s", None, "time from the step to the low reference crossing"),
    MetricInfo("rise_time_s", "s", "lower", "time between the low and high reference crossings"),
    MetricInfo("delay_time_s", "s", "lower", "time from the step to the 50 % crossing"),
    MetricInfo("peak_time_s", "s", None, "time from the step to the extreme beyond final"),
    MetricInfo("overshoot_pct", "%", "lower", "extreme beyond final as % of |amplitude|"),
    MetricInfo("undershoot_pct", "%", "lower", "initial excursion the wrong way, % of |amplitude|"),
    MetricInfo("settling_time_s", "s", "lower", "time after which feedback stays in the band"),
    MetricInfo("steady_state_error", FEEDBACK_UNIT, None, "setpoint after the step - final"),
    MetricInfo("abs_steady_state_error", FEEDBACK_UNIT, "lower", "|steady_state_error|"),
    MetricInfo("iae", FEEDBACK_UNIT + "·s", "lower", "integral of |setpoint - feedback| dt"),
    MetricInfo("ise", FEEDBACK_UNIT + "²·s", "lower", "integral of (setpoint - feedback)² dt"),
    MetricInfo("itae", FEEDBACK_UNIT + "·s²", "lower", "integral of t·|setpoint - feedback| dt"),
    MetricInfo("hunting_pp", FEEDBACK_UNIT, "lower", "peak-to-peak of sustained oscillation"),
    MetricInfo("hunting_freq_hz", "Hz", None, "dominant frequency of that oscillation"),
    MetricInfo("hunting_flag", "bool", "lower", "1 when the oscillation exceeds the limit"),
    MetricInfo("saturation_time_s", "s", "lower", "time the effort spent at its limit"),
    MetricInfo("windup_overshoot_pct", "%", "lower", "overshoot following a saturated interval"),
    MetricInfo("windup_flag", "bool", "lower", "1 when saturation is followed by overshoot"),
    MetricInfo("zeta", "1", "higher", "damping ratio of the fitted second-order model"),
    MetricInfo("wn_rad_s", "rad/s", "higher", "natural frequency of the fitted model"),
    MetricInfo("fit_delay_s", "s", "lower", "dead time of the fitted model"),
    MetricInfo("fit_rmse_pct", "%", "lower", "fit residual RMS as % of |amplitude|"),
]

METRICS: dict[str, MetricInfo] = {m.name: m for m in _METRICS}


def resolve_unit(unit: str, feedback_unit: str) -> str:
    """Replace the feedback placeholder in ``unit`` with the channel's real unit."""
    return unit.replace(FEEDBACK_UNIT, feedback_unit)
