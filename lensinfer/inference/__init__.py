"""Inference: NUTS sampling and results files."""

from lensinfer.inference.nuts import sample
from lensinfer.inference.results import read_results, summarize, write_results, write_summary

__all__ = ["read_results", "sample", "summarize", "write_results", "write_summary"]
