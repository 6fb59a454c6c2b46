"""The pass over a whole capture: sanity checks, DC offset, spectra, the band-power trace."""

from ._pass import (
    DC_FALSE_ALARM, QUANTUM, SPECTROGRAM_CELLS, SPECTROGRAM_NFFT, Survey, TraceSpec, block_size, cell_edges_hz,
    dc_offset_test, periodic_hann, spectrogram_stride, survey, trace_pass,
)
from ._trace import NOISE_GROUPS, PowerTrace, TraceFrames, band_bins, band_power_frames, frame_length, remove_dc

__all__ = [
    "DC_FALSE_ALARM", "QUANTUM", "SPECTROGRAM_CELLS", "SPECTROGRAM_NFFT", "Survey", "TraceSpec", "block_size",
    "cell_edges_hz", "dc_offset_test", "periodic_hann", "spectrogram_stride", "survey", "trace_pass",
    "NOISE_GROUPS", "PowerTrace", "TraceFrames", "band_bins", "band_power_frames", "frame_length", "remove_dc",
]
