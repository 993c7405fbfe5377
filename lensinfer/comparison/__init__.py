"""Comparing halo-response hypotheses: evidences, Bayes factors and the continuous answer.

- :func:`compare` — the whole comparison for one lens (``lensinfer compare``;
  also ``lensinfer.compare``);
- :func:`nested_evidence`, :func:`importance_evidence` — the two ln Z estimators;
- :func:`evidence_table`, :func:`kass_raftery`, :func:`effective_nu`;
- :func:`comparability_note` — why a total-mass model's ln Z is not a Bayes factor
  against the decomposition models.
"""

from lensinfer.comparison.evidence import (
    Evidence,
    UnitCubeProblem,
    importance_evidence,
    nested_evidence,
    problem_of,
)
from lensinfer.comparison.hypotheses import effective_nu, evidence_table, kass_raftery
from lensinfer.comparison.run import CompareSettings, comparability_note, compare, to_markdown

__all__ = [
    "CompareSettings",
    "Evidence",
    "UnitCubeProblem",
    "comparability_note",
    "compare",
    "effective_nu",
    "evidence_table",
    "importance_evidence",
    "kass_raftery",
    "nested_evidence",
    "problem_of",
    "to_markdown",
]
