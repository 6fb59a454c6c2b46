"""What defines a synthetic capture (:class:`SynthParams`, checked on construction) and what comes out (:class:`SynthResult`).

The model behind each parameter is described in :mod:`._modulator` (timing,
frequency pulse, phase) and :mod:`._channel` (Eb/N0 at the capture, noise,
channel filter, receiver audio chain).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from .. import errorcount

__all__ = ["SynthParams", "SynthResult", "PULSES"]

PULSES = ("rect", "gaussian", "raised-cosine")


@dataclass(frozen=True)
class SynthParams:
    """Everything that defines a synthetic capture (the model: :mod:`._modulator` and :mod:`._channel`).

    Attributes
    ----------
    tones_hz : tuple of float
        Nominal tone frequencies (f0 < f1), baseband Hz relative to the capture
        centre (or audio Hz when ``real``).  Bit 0 sends f0, bit 1 sends f1
        (swapped by ``one_on_low_tone``).
    symbol_rate_hz : float
        Nominal symbol rate R_s.
    sample_rate_hz : float
        Sample rate fs.
    ebn0_db : float
        Eb/N0 at the capture (module docstring); ``inf`` for no noise.
    centre_offset_hz : float
        Frequency error of the transmitter: added to both tones.
    continuous_phase : bool
        Continuous phase (True, the default) or an independent uniform phase
        jump at every symbol boundary (False).
    pulse : str
        Frequency pulse: ``"rect"``, ``"gaussian"`` or ``"raised-cosine"``.
    bt : float
        Bandwidth-time product of the Gaussian pulse.
    transition : float
        Length of the raised-cosine frequency transition, in symbols.
    deviation_hz : float or None
        Half the tone spacing; when given, the tones become midpoint of
        ``tones_hz`` -/+ ``deviation_hz``.
    drift_hz : float
        Linear frequency change of both tones over each burst (centred).
    channel_filter_hz : float
        One-sided passband of the I/Q channel filter, Hz (0: none).
    receiver_audio : bool
        Audio only: pass signal and noise through the receiver chain.
    audio_band_hz : tuple of float
        Band-pass edges of the receiver chain, Hz.
    audio_order : int
        Butterworth order of the band-pass (poles per edge).
    deemphasis_us : float
        De-emphasis time constant of the receiver chain, microseconds (0: off).
    tilt_db : float
        Audio only: gain at the upper tone over the lower one, dB.
    start_offset_samples : float
        Fractional sample at which the first symbol of the first burst begins.
    rate_error_ppm : float
        Symbol-rate error of the transmitter in parts per million.
    n_bursts : int
        Number of bursts.
    symbols_per_burst : int
        Symbols in each burst.
    gap_samples : float
        Silence (noise only) between bursts.
    tail_samples : int
        Noise-only samples after the last burst.
    pattern : str
        ITU-T O.150 pattern name (``"PN9"`` ...); the pattern runs on across bursts.
    pattern_inverted : bool
        Send the complement of the pattern as O.150 defines it (for PN15 and PN23,
        whose O.150 form is the inverted register output, this is the raw register).
    one_on_low_tone : bool
        A ONE of the pattern sends the low tone f0 (and a ZERO f1); default the high tone.
    tone_amplitudes : tuple of float
        Relative amplitudes (a0, a1) of the two tones.
    ramp_symbols : float
        Length of a raised-cosine power ramp at each burst edge, in symbols
        (0 for hard keying).
    symbol_ramp : float
        Length of a raised-cosine (``sin^2``) amplitude ramp at both edges of
        *every* symbol, in symbols, 0 ... 0.5 (0: rectangular symbols).  The
        pulse is ``sin^2(pi u / 2)`` with ``u`` the distance to the nearer
        symbol edge over the ramp length, clipped to 1.
    burst_gains_db : tuple of float
        Per-burst power change in dB (cycled); empty for equal bursts.
    real : bool
        Real audio instead of complex baseband.
    noise_drift_db : float
        Noise power changes linearly in dB from ``-drift/2`` at the first
        sample to ``+drift/2`` at the last (``ebn0_db`` holds at the middle).
    framing : str
        ``"none"``: the bursts carry the PRBS ``pattern``.  ``"hdlc"``: each
        burst carries HDLC frames (ISO/IEC 13239: NRZI, zero-bit insertion,
        FCS as in ITU-T X.25) of random payloads of ``frame_bytes`` octets:
        ``preamble_flags`` flags, then frames with ``flags_between`` flags
        after each, as many as fit, the rest of the burst filled with flags.
        The truth lists each frame (first symbol after its opening flag, bytes).
    frame_bytes : int
        Payload octets of each frame (the 2-octet FCS is added).
    preamble_flags : int
        Flags before the first frame of a burst.
    flags_between : int
        Flags after each frame.
    seed : int
        Seed of the random generator (noise, random phases and frame payloads).
    """

    tones_hz: tuple[float, float] = (-2500.0, 2500.0)
    symbol_rate_hz: float = 5000.0
    sample_rate_hz: float = 80000.0
    ebn0_db: float = 10.0
    centre_offset_hz: float = 0.0
    continuous_phase: bool = True
    pulse: str = "rect"
    bt: float = 0.5
    transition: float = 0.5
    deviation_hz: float | None = None
    drift_hz: float = 0.0
    channel_filter_hz: float = 0.0
    receiver_audio: bool = False
    audio_band_hz: tuple[float, float] = (300.0, 3000.0)
    audio_order: int = 4
    deemphasis_us: float = 750.0
    tilt_db: float = 0.0
    start_offset_samples: float = 1000.0
    rate_error_ppm: float = 0.0
    n_bursts: int = 1
    symbols_per_burst: int = 2000
    gap_samples: float = 4000.0
    tail_samples: int = 1000
    pattern: str = "PN9"
    pattern_inverted: bool = False
    one_on_low_tone: bool = False
    tone_amplitudes: tuple[float, float] = (1.0, 1.0)
    ramp_symbols: float = 0.0
    symbol_ramp: float = 0.0
    burst_gains_db: tuple[float, ...] = field(default_factory=tuple)
    real: bool = False
    noise_drift_db: float = 0.0
    framing: str = "none"
    frame_bytes: int = 32
    preamble_flags: int = 8
    flags_between: int = 1
    seed: int = 1

    def __post_init__(self) -> None:
        f0, f1 = self.tones_hz
        if not f0 < f1:
            raise ValueError("tones_hz must be (f0, f1) with f0 < f1")
        lo, hi = f0 + self.centre_offset_hz, f1 + self.centre_offset_hz
        if self.real and not (0.0 < lo and hi < self.sample_rate_hz / 2):
            raise ValueError(f"audio tones (with the offset) {lo:g},{hi:g} Hz must lie above 0 and below "
                             f"half the sample rate ({self.sample_rate_hz / 2:g} Hz)")
        if self.symbol_rate_hz <= 0 or self.sample_rate_hz <= 2 * self.symbol_rate_hz:
            raise ValueError("need 0 < symbol_rate_hz < sample_rate_hz / 2")
        if self.n_bursts < 1 or self.symbols_per_burst < 1:
            raise ValueError("need at least one burst of one symbol")
        if self.start_offset_samples < 0 or self.gap_samples < 0 or self.tail_samples < 0:
            raise ValueError("offsets, gaps and tails must not be negative")
        if min(self.tone_amplitudes) < 0 or max(self.tone_amplitudes) <= 0:
            raise ValueError("tone amplitudes must be non-negative and not both zero")
        if not 0.0 <= self.symbol_ramp <= 0.5:
            raise ValueError("symbol_ramp must be between 0 and 0.5 symbols")
        if self.pattern not in errorcount.PATTERNS:
            raise ValueError(f"unknown pattern {self.pattern!r}")
        if self.framing not in ("none", "hdlc"):
            raise ValueError(f"unknown framing {self.framing!r} (none or hdlc)")
        if self.framing == "hdlc":
            if self.frame_bytes < 2 or self.preamble_flags < 1 or self.flags_between < 1:
                raise ValueError("hdlc framing needs frames of at least 2 bytes and at least one flag before "
                                 "and after each")
            need = 8 * (self.preamble_flags + self.flags_between) + errorcount.frame_bits(bytes(self.frame_bytes)).size + 1
            if self.symbols_per_burst < need:
                raise ValueError(f"a burst of {self.symbols_per_burst} symbols cannot hold one frame of "
                                 f"{self.frame_bytes} bytes with its flags (about {need} symbols or more)")
        if self.pulse not in PULSES:
            raise ValueError(f"pulse must be one of {', '.join(PULSES)}, got {self.pulse!r}")
        if not 0.1 <= self.bt <= 10.0:
            raise ValueError("bt (Gaussian bandwidth-time product) must be between 0.1 and 10")
        if not 0.0 < self.transition <= 4.0:
            raise ValueError("transition (raised-cosine length) must be above 0 and at most 4 symbols")
        if self.deviation_hz is not None and not self.deviation_hz > 0:
            raise ValueError("deviation_hz must be positive")
        fs = self.sample_rate_hz
        if self.channel_filter_hz:
            if self.real:
                raise ValueError("the channel filter is for I/Q captures (audio has the receiver chain)")
            if not 0 < self.channel_filter_hz < 0.4 * fs:
                raise ValueError("channel_filter_hz must be between 0 and 0.4 times the sample rate")
        if (self.receiver_audio or self.tilt_db) and not self.real:
            raise ValueError("the receiver audio chain and the tilt are for audio (real=True)")
        lo, hi = self.audio_band_hz
        if self.receiver_audio and not 0 < lo < hi < 0.5 * fs:
            raise ValueError("audio_band_hz must be 0 < low < high < half the sample rate")
        if self.deemphasis_us < 0 or self.audio_order < 1:
            raise ValueError("deemphasis_us must not be negative and audio_order at least 1")

    def steady_tones(self) -> tuple[float, float]:
        """The tones a long run of one symbol settles to (transmitter offset included)."""
        mid = 0.5 * (self.tones_hz[0] + self.tones_hz[1]) + self.centre_offset_hz
        dev = self.deviation() if self.deviation_hz is None else self.deviation_hz
        return (mid - dev, mid + dev)

    def deviation(self) -> float:
        """Half the tone spacing, Hz."""
        if self.deviation_hz is not None:
            return float(self.deviation_hz)
        return 0.5 * (self.tones_hz[1] - self.tones_hz[0])


@dataclass(frozen=True)
class SynthResult:
    """A synthetic capture and its truth.

    Attributes
    ----------
    samples : numpy.ndarray
        complex128 (baseband) or float64 (audio) samples: signal plus noise.
    bits : numpy.ndarray
        uint8, all pattern bits sent (after ``pattern_inverted``), bursts
        concatenated; the tone index of each is ``bits ^ one_on_low_tone``.
    truth : dict
        JSON-ready description: parameters, steady tones, deviation, pulse,
        Eb, N0 and Eb/N0 at the capture, and per burst the fractional start
        sample, symbol count, tones and symbol rate.
    signal : numpy.ndarray
        The noiseless signal as it is in ``samples`` (after any filter).
    """

    samples: np.ndarray
    bits: np.ndarray
    truth: dict
    signal: np.ndarray

