"""Pure step-response analysis on numpy arrays. Imports no database or file code.

Start with :func:`analyze_arrays` or :func:`analyze_trace` (or
:func:`transient_figures` for the timing and overshoot figures alone); every
figure is named in :data:`METRICS` and defined in the module that computes it
(``metrics``, ``levels``, ``oscillation``, ``saturation``, ``model_fit``,
``velocity``).
"""

from logbook.analysis.analyze import analyze_arrays, analyze_trace, transient_figures
from logbook.analysis.catalog import METRICS
from logbook.analysis.results import Figure, StepAnalysis, TraceAnalysis
from logbook.analysis.settings import ANALYSIS_VERSION, AnalysisSettings
from logbook.analysis.velocity import estimate_velocity

__all__ = [
    "ANALYSIS_VERSION",
    "METRICS",
    "AnalysisSettings",
    "Figure",
    "StepAnalysis",
    "TraceAnalysis",
    "analyze_arrays",
    "analyze_trace",
    "estimate_velocity",
    "transient_figures",
]
