"""PDF report of a groundcalc analysis (reportlab)."""

from .pdf import write_report

__all__ = ["write_report"]
