"""The analysis of one capture: survey, regions, starting points, bursts, summary (``analyze``)."""

from ._pipeline import BLOCK_SAMPLES, QUANTUM, analyze, analyze_capture
from ._results import AnalysisOptions, AnalysisResult, BerCount, BurstResult, Summary

__all__ = ["AnalysisOptions", "AnalysisResult", "BerCount", "BLOCK_SAMPLES", "BurstResult", "QUANTUM", "Summary",
           "analyze", "analyze_capture"]
