"""The analysis of one capture: survey, regions, starting points, bursts, summary (``analyze``)."""

from ._pipeline import AnalysisOptions, QUANTUM, analyze, analyze_capture

__all__ = ["AnalysisOptions", "QUANTUM", "analyze", "analyze_capture"]
