"""Acceptance specs and decision rules: pure functions, no database, no files written.

``spec_file`` reads a spec (TOML or YAML) into a :class:`SpecDefinition`; ``rules``
judges per-run metric values against it under a documented decision rule.
"""

from logbook.acceptance.rules import (
    DecisionRule,
    Evaluation,
    MetricVerdict,
    RunValues,
    Verdict,
    evaluate,
)
from logbook.acceptance.spec_file import Limit, SpecDefinition, load_spec_file, spec_from_mapping

__all__ = [
    "DecisionRule",
    "Evaluation",
    "Limit",
    "MetricVerdict",
    "RunValues",
    "SpecDefinition",
    "Verdict",
    "evaluate",
    "load_spec_file",
    "spec_from_mapping",
]
