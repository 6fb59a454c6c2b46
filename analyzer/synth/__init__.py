"""Synthetic FSK bursts with their truth (demo data and test inputs)."""

from ._synth import (
    SynthParams, channel_filter_taps, deemphasis_ba, frequency_pulse, phase_pulse,
    receiver_audio_sos, synthesize,
)

__all__ = [
    "SynthParams", "channel_filter_taps", "deemphasis_ba", "frequency_pulse", "phase_pulse",
    "receiver_audio_sos", "synthesize",
]
