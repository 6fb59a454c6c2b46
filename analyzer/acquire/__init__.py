"""Acquisition: bursts in the power trace, tones, symbol rate and timing, blind choice of the rate."""

from ._blind import BLIND_MIN_LINE_QUALITY, blind_rate, keying_contrast
from ._burst_timing import (
    ENERGY_REUSE_TONE_SHIFT, MIN_BURST_SYMBOLS, SpanTiming, burst_rate, burst_timing, bursts_in_span,
    retime_burst,
)
from ._bursts import doubling_means, find_bursts, floor_track, segment_symbols, smoothing_frames
from ._coarse import blind_tones, occupied_band, peak_tone_pairs
from ._timing import (
    TimingEstimate, grid_fit, grid_for_span, line_fit, narrow_spectrum, refine_timing, symbol_timing,
    tone_difference,
)
from ._rate import RATE_BLOCKS, RateEstimate, measured_rate, slope_interval
from ._tones import lag_products, noncoherent_frequency, refine_tones

__all__ = [
    "BLIND_MIN_LINE_QUALITY", "blind_rate", "keying_contrast",
    "doubling_means", "find_bursts", "floor_track", "segment_symbols", "smoothing_frames",
    "blind_tones", "occupied_band", "peak_tone_pairs",
    "RATE_BLOCKS", "RateEstimate", "TimingEstimate", "grid_fit", "grid_for_span", "line_fit",
    "measured_rate", "narrow_spectrum", "refine_timing", "slope_interval", "symbol_timing",
    "tone_difference",
    "lag_products", "noncoherent_frequency", "refine_tones",
    "ENERGY_REUSE_TONE_SHIFT", "MIN_BURST_SYMBOLS", "SpanTiming", "burst_timing", "bursts_in_span",
    "retime_burst", "burst_rate",
]
