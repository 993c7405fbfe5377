"""Posterior reports: diagnostics with a verdict, tables, figures and an HTML page."""

from lensinfer.report.build import assumptions, report
from lensinfer.report.diagnostics import THRESHOLDS, Diagnostics, diagnose_run
from lensinfer.report.tables import consistent_imfs, quantity_rows, to_latex, to_markdown

__all__ = [
    "THRESHOLDS",
    "Diagnostics",
    "assumptions",
    "consistent_imfs",
    "diagnose_run",
    "quantity_rows",
    "report",
    "to_latex",
    "to_markdown",
]
