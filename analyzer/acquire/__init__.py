"""Acquisition: bursts in the power trace, tones, symbol rate and timing, blind choice of the rate."""

from ._acquire import (
    NOISE_GROUPS, PowerTrace, SPECTROGRAM_CELLS, SPECTROGRAM_NFFT, TimingEstimate, TraceFrames,
    band_bins, band_power_frames, blind_rate_candidates, blind_symbol_rate, blind_tones,
    doubling_means, find_bursts, floor_track, frame_length, grid_fit, grid_for_span,
    lag_products, line_fit, narrow_spectrum, noncoherent_frequency, occupied_band,
    peak_tone_pairs, refine_timing, refine_tones, remove_dc, segment_symbols, smoothing_frames,
    symbol_timing, tone_difference, tone_transitions,
)
from ._blind import BLIND_MIN_LINE_QUALITY, blind_rate, keying_contrast

__all__ = [
    "NOISE_GROUPS", "PowerTrace", "SPECTROGRAM_CELLS", "SPECTROGRAM_NFFT", "TimingEstimate",
    "TraceFrames", "band_bins", "band_power_frames", "blind_rate_candidates",
    "blind_symbol_rate", "blind_tones", "doubling_means", "find_bursts", "floor_track",
    "frame_length", "grid_fit", "grid_for_span", "lag_products", "line_fit", "narrow_spectrum",
    "noncoherent_frequency", "occupied_band", "peak_tone_pairs", "refine_timing",
    "refine_tones", "remove_dc", "segment_symbols", "smoothing_frames", "symbol_timing",
    "tone_difference", "tone_transitions", "BLIND_MIN_LINE_QUALITY", "blind_rate",
    "keying_contrast",
]
