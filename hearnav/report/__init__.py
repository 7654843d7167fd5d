"""Presentation of benchmark results: the plain-text table (the HTML report will live here too)."""

from hearnav.report.table import format_table

__all__ = ["format_table"]
