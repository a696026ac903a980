"""Statistics of regression finding: pure numpy/scipy, no database.

- :mod:`~logbook.stats.compare`: two samples of one metric (medians, effect sizes,
  Mann-Whitney U);
- :mod:`~logbook.stats.multiple`: Holm and Benjamini-Hochberg adjusted p-values;
- :mod:`~logbook.stats.changepoint`: level shifts along a chronological series (PELT);
- :mod:`~logbook.stats.lineage`: verdicts along a revision lineage, first bad revision;
- :mod:`~logbook.stats.explain`: loss of damping versus loss of bandwidth.
"""

from logbook.stats.changepoint import ChangePoint, ChangePointScan, find_change_points
from logbook.stats.compare import Comparison, compare_samples
from logbook.stats.explain import DynamicsExplanation, explain_dynamics
from logbook.stats.lineage import (
    BadRevision,
    MetricLineage,
    ParentComparison,
    RevisionVerdict,
    analyse_lineage,
    bad_revisions,
    classify,
    compare_with_parents,
    lineage_order,
)
from logbook.stats.multiple import adjust, benjamini_hochberg, holm

__all__ = [
    "BadRevision",
    "ChangePoint",
    "ChangePointScan",
    "Comparison",
    "DynamicsExplanation",
    "MetricLineage",
    "ParentComparison",
    "RevisionVerdict",
    "adjust",
    "analyse_lineage",
    "bad_revisions",
    "benjamini_hochberg",
    "classify",
    "compare_samples",
    "compare_with_parents",
    "explain_dynamics",
    "find_change_points",
    "holm",
    "lineage_order",
]
