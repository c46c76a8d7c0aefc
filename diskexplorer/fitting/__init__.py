"""Judging and seeding: χ² against data, starting points for formal fits, refinement, scans."""
from .comparison import DATA_KINDS, Comparison, ComparisonResult

__all__ = ["Comparison", "ComparisonResult", "DATA_KINDS"]
