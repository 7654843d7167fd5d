"""Presentation of benchmark results: the plain-text table and the self-contained HTML report (report/html.py)."""

from hearnav.report.table import format_table

__all__ = ["format_table"]
