"""The pass over a whole capture: sanity checks, DC offset, spectra, the band-power trace."""

from ._pass import (
    DC_FALSE_ALARM, QUANTUM, Survey, TraceSpec, block_size, dc_offset_test, periodic_hann,
    spectrogram_stride, survey, trace_pass,
)

__all__ = [
    "DC_FALSE_ALARM", "QUANTUM", "Survey", "TraceSpec", "block_size", "dc_offset_test",
    "periodic_hann", "spectrogram_stride", "survey", "trace_pass",
]
