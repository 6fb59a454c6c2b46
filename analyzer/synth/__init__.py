"""Synthetic FSK bursts with their truth (demo data and test inputs)."""

from ._channel import channel_filter_taps, deemphasis_ba, receiver_audio_sos
from ._modulator import frequency_pulse, phase_pulse
from ._params import SynthParams
from ._synth import synthesize

__all__ = [
    "SynthParams", "channel_filter_taps", "deemphasis_ba", "frequency_pulse", "phase_pulse",
    "receiver_audio_sos", "synthesize",
]
