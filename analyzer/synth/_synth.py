"""Synthetic two-tone FSK captures with known truth (demo data and tests).

This module only computes arrays; writing them to SigMF, WAV or FLAC files is
done by :mod:`analyzer.writers`.

Timing
------
Time is measured in samples.  Symbol ``k`` of a burst begins at the fractional
sample ``t_k = start + k * T`` with ``T = sps * (1 - rate_error_ppm * 1e-6)``
samples (a positive ``rate_error_ppm`` makes the transmitter fast) and
``sps = fs / R_s``.  A sample at integer time ``n`` belongs to the symbol whose
interval ``[t_k, t_k+1)`` contains it.  Every frequency and phase below is a
closed-form function of the continuous time ``n - t_k``, so fractional start
offsets and rate errors are exact, not interpolated.

Frequency and phase
-------------------
The tones are ``f_c -/+ dev`` with ``f_c`` the midpoint of ``tones_hz`` plus
``centre_offset_hz`` and ``dev`` half the tone spacing; ``deviation_hz`` (when
given) replaces the spacing and keeps the midpoint.  Bit ``b_k`` gives
``d_k = -dev`` (bit 0) or ``+dev`` (bit 1).  The instantaneous frequency is::

    f(t) = f_c + sum_k d_k g((t - t_k) / T - 1/2) + drift(t)

with ``g`` the *frequency pulse* (argument in symbols from the symbol centre),
normalised so that ``sum_k g(u - k) = 1`` for every ``u``: a long run of one
symbol settles exactly on its tone ``f_c +/- dev`` (the *steady tones*, which
the truth states).  ``g`` is a unit rectangle of one symbol convolved with a
kernel of unit area whose distribution function is ``W``:

* ``rect``: no kernel (``W`` a unit step): rectangular keying, ``g = 1`` on
  ``[-1/2, 1/2)``.
* ``gaussian``: a Gaussian kernel of standard deviation
  ``sigma = sqrt(ln 2) / (2 pi BT)`` symbols (the GMSK frequency pulse, [1]_),
  ``g(u) = Phi((u + 1/2)/sigma) - Phi((u - 1/2)/sigma)`` with ``Phi`` the
  standard normal distribution function.  ``bt`` is the bandwidth-time product
  (0.5 and 0.3 are common).
* ``raised-cosine``: a raised-cosine (Hann) kernel of total length ``beta =
  transition`` symbols, so every change of tone is a raised-cosine transition
  lasting ``beta`` symbols centred on the symbol boundary (``0 < beta <= 1``:
  full response, the tone is held in the middle of each symbol; ``beta > 1``
  overlaps neighbouring symbols).  ``W(s) = 1/2 + s/beta + sin(2 pi s/beta)/(2 pi)``
  for ``|s| <= beta/2``.

The phase is ``2 pi / fs`` times the integral of the frequency, evaluated in
closed form through the integral of ``W`` (``V(s) = s Phi(s/sigma) + sigma
phi(s/sigma)`` for the Gaussian), so it is continuous across symbol boundaries
(continuous-phase FSK, what a VCO or DDS modulator sends; the default).  With
``continuous_phase=False`` an independent phase, uniform on ``[0, 2 pi)``, is
added at every symbol boundary on top of the shaped frequency (switched
oscillators); for rectangular keying this is the original random-phase model,
sample for sample.  Before the first and after the last symbol the data are
zero (the modulator idles at ``f_c``) and the burst is gated to its symbols.

``drift_hz`` adds a linear frequency change to both tones within each burst,
from ``-drift/2`` at its first symbol to ``+drift/2`` at its end, so the steady
tones hold at the burst middle.

Signal and noise at the capture
-------------------------------
Bits come from an ITU-T O.150 pattern.  ``Eb`` is the average signal energy
per bit *at the capture*: the sum of ``|s|^2`` over the noiseless samples as
written (after any filter below), divided by the number of bits sent, with
per-burst gains left out (``ebn0_db`` holds for a 0 dB burst).  The noise is
scaled so that ``Eb / N0`` equals ``ebn0_db``, whatever the pulse, ramps or
filters do to the signal energy; the figure measured from the samples is
written to the truth.  ``N0`` (sample units, i.e. energy per sample per unit of
normalised bandwidth) is:

* *complex baseband* (``real=False``): white complex Gaussian noise with
  ``E|w|^2 = sigma^2`` per sample has ``N0 = sigma^2``.  With a channel filter
  (``channel_filter_hz = B > 0``: a linear-phase low-pass FIR passing
  ``|f| <= B`` flat within 0.02 dB and stopping ``|f| >= 1.25 B`` by 60 dB,
  [2]_, the decimation filter of an SDR) applied to signal and noise together,
  the noise at the capture is coloured; ``N0`` is then the density seen by
  the receiver (below).  The FIR is applied centred (zero delay), so the
  timing truth is unchanged.
* *real audio* (``real=True``): real noise of variance ``sigma^2`` has
  two-sided density ``N0/2 = sigma^2``, so ``N0 = 2 sigma^2``.  With the
  receiver audio chain (``receiver_audio=True``) signal and noise pass, in this
  order, a voice-band band-pass (Butterworth, ``audio_order`` poles per edge,
  edges ``audio_band_hz``, second-order sections), a first-order de-emphasis
  ``|H(f)| = 1/sqrt(1 + (2 pi f tau)^2)`` with ``tau = deemphasis_us`` (75 us or
  750 us are used by FM receivers, a 6 dB/octave roll-off above
  ``1/(2 pi tau)``; common practice; a first-order IIR fitted to that
  magnitude over the band, :func:`deemphasis_ba`; 0 turns it off) and a level
  tilt (``tilt_db``, below).  The
  noise at the capture is then not white, and ``N0`` is the density seen by
  the receiver (below).  The filters are causal: the bursts reach the capture delayed
  by the chain's group delay (averaged at the two tones), which the truth adds
  to the burst start and stop samples (``chain_delay_samples``).

*Coloured noise* (channel filter, receiver chain, tilt): ``N0`` is the
density of the white noise that would put the same noise on a unit-energy
rectangular template of one symbol at each steady tone, averaged over the two
tones (:func:`template_noise_gain`): the noise the noncoherent receiver's
correlators see, which sets its error rate.  For a passband flat across each
template's main lobes it is the passband density.

``tilt_db`` (audio) is a zero-phase gain linear in dB between the steady
tones, ``tilt_db`` higher at the upper tone than at the lower (0 dB at their
midpoint, held constant outside them), applied to signal and noise; negative
values make the upper tone weaker, as de-emphasis does.

``tone_amplitudes`` keys the amplitude with the bit (a level difference at the
transmitter, applied to the signal only).

References
----------
.. [1] K. Murota and K. Hirade, "GMSK modulation for digital mobile radio
   telephony", IEEE Trans. Communications, vol. 29, no. 7, pp. 1044-1050,
   1981 (from memory).
.. [2] J. F. Kaiser, "Nonrecursive digital filter design using the I0-sinh
   window function", Proc. IEEE ISCAS, 1974 (the Kaiser window; design
   formulas as in scipy.signal.kaiserord).
"""

from __future__ import annotations

from dataclasses import dataclass, field, asdict

import numpy as np
from scipy import signal as sps_signal
from scipy import special

from .. import errorcount

__all__ = ["SynthParams", "SynthResult", "synthesize", "frequency_pulse", "phase_pulse", "PULSES",
           "channel_filter_taps", "deemphasis_ba", "receiver_audio_sos", "tilt_gain_db", "template_noise_gain"]

PULSES = ("rect", "gaussian", "raised-cosine")


@dataclass(frozen=True)
class SynthParams:
    """Everything that defines a synthetic capture (see the module docstring).

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


# ---------------------------------------------------------------- pulses
def gaussian_sigma(bt: float) -> float:
    """Standard deviation, in symbols, of the Gaussian kernel of bandwidth-time product ``bt`` [1]_."""
    return float(np.sqrt(np.log(2.0)) / (2.0 * np.pi * bt))


def _kernel_halfwidth(pulse: str, bt: float, transition: float) -> float:
    """Half the support of the kernel, symbols (Gaussian cut at 8.5 sigma, below 1e-16)."""
    if pulse == "gaussian":
        return 8.5 * gaussian_sigma(bt)
    if pulse == "raised-cosine":
        return 0.5 * transition
    return 0.0


def _w(s: np.ndarray, pulse: str, bt: float, transition: float) -> np.ndarray:
    """Distribution function of the kernel at ``s`` symbols."""
    if pulse == "gaussian":
        return special.ndtr(s / gaussian_sigma(bt))
    if pulse == "raised-cosine":
        u = np.clip(s / transition, -0.5, 0.5)
        return 0.5 + u + np.sin(2 * np.pi * u) / (2 * np.pi)
    return (s >= 0).astype(float)


def _v(s: np.ndarray, pulse: str, bt: float, transition: float) -> np.ndarray:
    """Integral of the kernel's distribution function from -inf to ``s`` (symbols)."""
    if pulse == "gaussian":
        sg = gaussian_sigma(bt)
        x = s / sg
        return sg * (x * special.ndtr(x) + np.exp(-0.5 * x * x) / np.sqrt(2 * np.pi))
    if pulse == "raised-cosine":
        b = transition
        u = np.clip(s / b, -0.5, 0.5)
        inner = b * (0.5 * (u + 0.5) + 0.5 * (u * u - 0.25) - (np.cos(2 * np.pi * u) + 1) / (4 * np.pi**2))
        return np.where(s > 0.5 * b, s, np.where(s < -0.5 * b, 0.0, inner))
    return np.maximum(s, 0.0)


def frequency_pulse(u, pulse: str = "gaussian", bt: float = 0.5, transition: float = 0.5) -> np.ndarray:
    """Frequency pulse ``g(u)``, ``u`` in symbols from the symbol centre; ``sum_k g(u - k) = 1``.

    Parameters
    ----------
    u : array_like
        Time from the centre of the symbol, in symbol periods.
    pulse, bt, transition
        As in :class:`SynthParams`.

    Returns
    -------
    numpy.ndarray
        ``g(u)``; its integral over ``u`` is 1 (the textbook GMSK pulse [1]_
        is ``g / (2T)``, of area 1/2).
    """
    u = np.asarray(u, dtype=float)
    return _w(u + 0.5, pulse, bt, transition) - _w(u - 0.5, pulse, bt, transition)


def phase_pulse(u, pulse: str = "gaussian", bt: float = 0.5, transition: float = 0.5) -> np.ndarray:
    """Integral of :func:`frequency_pulse` from ``-inf`` to ``u`` (0 before the pulse, 1 after it)."""
    u = np.asarray(u, dtype=float)
    return _v(u + 0.5, pulse, bt, transition) - _v(u - 0.5, pulse, bt, transition)


def _shaped_phase(k: np.ndarray, tau: np.ndarray, d: np.ndarray, p: SynthParams) -> np.ndarray:
    """``sum_i d_i Q(k + tau - i)`` in Hz x symbols: the phase the frequency offsets ``d`` build up.

    ``k`` is the symbol of each time, ``tau`` its position from the centre of that symbol (symbols);
    symbols outside ``d`` send 0.  Exact (closed form) for any fractional time.
    """
    span = int(np.ceil(_kernel_halfwidth(p.pulse, p.bt, p.transition)))
    pad = np.concatenate((np.zeros(span + 1), d, np.zeros(span + 1)))
    before = np.concatenate(([0.0], np.cumsum(pad)))       # before[i] = sum of pad[:i]
    kk = k + span + 1                                         # index of symbol k in pad
    acc = before[kk - span]                                   # symbols fully elapsed: Q = 1
    for j in range(-span, span + 1):
        acc = acc + pad[kk + j] * phase_pulse(tau - j, p.pulse, p.bt, p.transition)
    return acc


def _shaped_frequency(k: np.ndarray, tau: np.ndarray, d: np.ndarray, p: SynthParams) -> np.ndarray:
    """``sum_i d_i g(k + tau - i)``: the frequency offset from the centre, Hz."""
    span = int(np.ceil(_kernel_halfwidth(p.pulse, p.bt, p.transition)))
    pad = np.concatenate((np.zeros(span + 1), d, np.zeros(span + 1)))
    kk = k + span + 1
    acc = np.zeros(np.shape(tau))
    for j in range(-span, span + 1):
        acc = acc + pad[kk + j] * frequency_pulse(tau - j, p.pulse, p.bt, p.transition)
    return acc


# ---------------------------------------------------------------- filters
def channel_filter_taps(bandwidth_hz: float, fs: float) -> np.ndarray:
    """Linear-phase low-pass FIR (odd length): flat to ``bandwidth_hz``, 60 dB down from 1.25x it [2]_."""
    width = 0.25 * bandwidth_hz
    numtaps, beta = sps_signal.kaiserord(60.0, width / (0.5 * fs))
    numtaps |= 1
    return sps_signal.firwin(numtaps, bandwidth_hz + 0.5 * width, window=("kaiser", beta), fs=fs)


def deemphasis_ba(tau_us: float, fs: float, band_hz: tuple[float, float] = (300.0, 3000.0)):
    """First-order de-emphasis ``(b, a)``: ``|H| = 1/sqrt(1 + (2 pi f tau)^2)`` over the audio band.

    A first-order IIR ``g (1 + b1 z^-1) / (1 - a1 z^-1)`` with unit gain at DC, its pole and zero fitted
    (least squares in dB on 64 log-spaced frequencies of ``band_hz``, up to 0.45 fs) to the analogue
    response: within 0.01 dB at 22 kHz sampling and above, 0.2 dB at 8 kHz (the bilinear transform
    errs by 2 dB at 2 kHz there).
    """
    from scipy import optimize

    tau = tau_us * 1e-6
    f = np.geomspace(band_hz[0], min(band_hz[1], 0.45 * fs), 64)
    z = np.exp(-2j * np.pi * f / fs)
    ref = -10 * np.log10(1 + (2 * np.pi * f * tau) ** 2)

    def err(x):
        a1, b1 = x
        return 20 * np.log10(np.abs((1 - a1) / (1 + b1) * (1 + b1 * z) / (1 - a1 * z))) - ref

    k = 2 * fs * tau
    fit = optimize.least_squares(err, [(k - 1) / (k + 1), 0.99], bounds=([0.0, -1.0], [1.0 - 1e-9, 1.0]))
    a1, b1 = fit.x
    g = (1 - a1) / (1 + b1)
    return np.array([g, g * b1]), np.array([1.0, -a1])


def receiver_audio_sos(p: SynthParams) -> np.ndarray:
    """Second-order sections of the receiver chain's band-pass and de-emphasis."""
    fs = p.sample_rate_hz
    sos = sps_signal.butter(p.audio_order, p.audio_band_hz, btype="bandpass", output="sos", fs=fs)
    if p.deemphasis_us > 0:
        b, a = deemphasis_ba(p.deemphasis_us, fs, p.audio_band_hz)
        sos = np.vstack((sos, [b[0], b[1], 0.0, 1.0, a[1], 0.0]))
    return sos


def tilt_gain_db(f, p: SynthParams) -> np.ndarray:
    """The tilt's gain, dB, at audio frequencies ``f`` (0 dB at the tones' midpoint)."""
    f0, f1 = p.steady_tones()
    x = np.clip((np.abs(np.asarray(f, dtype=float)) - 0.5 * (f0 + f1)) / (f1 - f0), -0.5, 0.5)
    return p.tilt_db * x


def _chain_power_gain(f: np.ndarray, p: SynthParams) -> np.ndarray:
    """|H(f)|^2 of everything applied to the capture (1 when nothing is)."""
    g = np.ones(np.shape(f))
    if p.receiver_audio:
        _, h = sps_signal.sosfreqz(receiver_audio_sos(p), worN=np.abs(f), fs=p.sample_rate_hz)
        g = g * np.abs(h) ** 2
    if p.tilt_db:
        g = g * 10.0 ** (tilt_gain_db(f, p) / 10.0)
    if p.channel_filter_hz:
        _, h = sps_signal.freqz(channel_filter_taps(p.channel_filter_hz, p.sample_rate_hz), worN=f,
                                fs=p.sample_rate_hz)
        g = g * np.abs(h) ** 2
    return g


def _chain_delay(p: SynthParams) -> float:
    """Group delay of the receiver chain averaged at the steady tones, samples (0 without it)."""
    if not p.receiver_audio:
        return 0.0
    fs = p.sample_rate_hz
    df = 1e-3 * p.symbol_rate_hz
    out = []
    for f in p.steady_tones():
        _, h = sps_signal.sosfreqz(receiver_audio_sos(p), worN=[f - df, f + df], fs=fs)
        dphi = np.angle(h[1] * np.conj(h[0]))
        out.append(-dphi / (2 * np.pi * 2 * df) * fs)
    return float(np.mean(out))


def _apply_chain(x: np.ndarray, p: SynthParams) -> np.ndarray:
    """Pass ``x`` through the channel filter or the receiver audio chain (as configured)."""
    if p.channel_filter_hz:
        x = sps_signal.oaconvolve(x, channel_filter_taps(p.channel_filter_hz, p.sample_rate_hz), mode="same")
    if p.receiver_audio:
        x = sps_signal.sosfilt(receiver_audio_sos(p), x)
    if p.tilt_db:
        spec = np.fft.rfft(x)
        f = np.fft.rfftfreq(len(x), 1.0 / p.sample_rate_hz)
        x = np.fft.irfft(spec * 10.0 ** (tilt_gain_db(f, p) / 20.0), n=len(x))
    return x


def _has_chain(p: SynthParams) -> bool:
    return bool(p.channel_filter_hz or p.receiver_audio or p.tilt_db)


# ---------------------------------------------------------------- capture
def _bursts(p: SynthParams, rng: np.random.Generator, total: int, starts: np.ndarray, sps_tx: float,
            all_bits: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Unit-amplitude signal of all bursts (no burst gains) and the per-sample burst gain."""
    fs = p.sample_rate_hz
    n_sym = p.symbols_per_burst
    burst_len = n_sym * sps_tx
    f0, f1 = p.steady_tones()
    fc, dev = 0.5 * (f0 + f1), 0.5 * (f1 - f0)
    tones = np.array([f0, f1])
    amps = np.asarray(p.tone_amplitudes, dtype=float)
    gains = np.asarray(p.burst_gains_db if p.burst_gains_db else (0.0,), dtype=float)
    out = np.zeros(total, dtype=float if p.real else complex)
    gain = np.ones(total)
    for b, t0 in enumerate(starts):
        bits = all_bits[b * n_sym:(b + 1) * n_sym]
        first = int(np.ceil(t0))
        last = int(np.ceil(t0 + burst_len))  # exclusive
        nn = np.arange(first, last, dtype=float)
        k = np.minimum(np.floor((nn - t0) / sps_tx).astype(np.int64), n_sym - 1)
        tau = (nn - t0) / sps_tx - k - 0.5
        d = np.where(bits == 1, dev, -dev)
        # 2 pi / fs x integral of the frequency from t0 (module docstring)
        phase = 2 * np.pi / fs * (fc * (nn - t0) + sps_tx * _shaped_phase(k, tau, d, p))
        if p.drift_hz:
            u = nn - t0
            phase += 2 * np.pi / fs * p.drift_hz * (0.5 * u * u / burst_len - 0.5 * u)
        if p.continuous_phase:
            phase += rng.uniform(0, 2 * np.pi)
        else:
            # phase phi_k + 2 pi f_k t_k / fs at the start of symbol k: an independent uniform jump at every
            # boundary (the original random-phase model for rectangular keying)
            phi = rng.uniform(0, 2 * np.pi, n_sym)
            ks = np.arange(n_sym)
            tk = t0 + ks * sps_tx
            at_tk = 2 * np.pi / fs * (fc * (tk - t0) + sps_tx * _shaped_phase(ks, np.full(n_sym, -0.5), d, p))
            if p.drift_hz:
                u = tk - t0
                at_tk += 2 * np.pi / fs * p.drift_hz * (0.5 * u * u / burst_len - 0.5 * u)
            jump = phi + 2 * np.pi * tones[bits] * tk / fs - at_tk
            phase += jump[k]
        env = amps[bits][k]
        if p.symbol_ramp > 0:
            tk = t0 + k * sps_tx
            dist = np.minimum(nn - tk, tk + sps_tx - nn)
            env = env * np.sin(0.5 * np.pi * np.clip(dist / (p.symbol_ramp * sps_tx), 0.0, 1.0)) ** 2
        if p.ramp_symbols > 0:
            ramp = p.ramp_symbols * sps_tx
            uu = np.clip(np.minimum(nn - t0, t0 + burst_len - nn) / ramp, 0.0, 1.0)
            env = env * np.sin(0.5 * np.pi * uu) ** 2
        out[first:last] = env * (np.cos(phase) if p.real else np.exp(1j * phase))
        gain[first:last] = 10.0 ** (gains[b % len(gains)] / 20.0)
    return out, gain


def template_noise_gain(p: SynthParams, grid_points: int = 1 << 14) -> float:
    """Power gain of the capture's filters for noise seen through a one-symbol tone template.

    The mean over the two steady tones of ``sum_f G(f) |W(f - f_i)|^2 / sum_f
    |W(f - f_i)|^2``, with ``G`` the power gain of everything applied to the
    capture (:func:`_chain_power_gain`, at ``|f|`` for real audio) and ``W`` the
    spectrum of a rectangular window of ``floor(fs / R_s)`` samples (a
    Dirichlet kernel); 1 when nothing is applied.
    """
    if not _has_chain(p):
        return 1.0
    fs = p.sample_rate_hz
    L = int(np.floor(fs / p.symbol_rate_hz))
    f = (np.arange(grid_points) / grid_points - 0.5) * fs
    g = _chain_power_gain(np.abs(f) if p.real else f, p)
    out = []
    for fi in p.steady_tones():
        u = (f - fi) / fs
        with np.errstate(invalid="ignore", divide="ignore"):
            w = np.where(np.abs(np.sin(np.pi * u)) < 1e-12, float(L),
                         np.sin(np.pi * L * u) / np.sin(np.pi * u)) ** 2
        out.append(float(np.sum(g * w) / np.sum(w)))
    return float(np.mean(out))


def _n0_per_sigma2(p: SynthParams) -> float:
    """N0 at the capture over the variance of the white noise added (module docstring)."""
    return (2.0 if p.real else 1.0) * template_noise_gain(p)


def _framed_tones(p: SynthParams, rng: np.random.Generator) -> tuple[np.ndarray, list[list[dict]]]:
    """Tone indices of HDLC traffic for every burst (see ``SynthParams.framing``) and each burst's frames."""
    n_sym = p.symbols_per_burst
    out, listed = [], []
    for _ in range(p.n_bursts):
        parts = [np.tile(errorcount.FLAG_BITS, p.preamble_flags)]
        used, sent = parts[0].size, []
        closing = np.tile(errorcount.FLAG_BITS, p.flags_between)
        while True:
            payload = rng.integers(0, 256, p.frame_bytes, dtype=np.uint8).tobytes()
            body = errorcount.frame_bits(payload)
            if used + body.size + closing.size > n_sym - 1:
                break
            sent.append({"start_symbol": used + 1, "hex": payload.hex()})
            parts += [body, closing]
            used += body.size + closing.size
        fill = np.tile(errorcount.FLAG_BITS, (n_sym - 1 - used) // 8 + 1)[:n_sym - 1 - used]
        out.append(errorcount.nrzi_encode(np.concatenate(parts + [fill]), int(rng.integers(0, 2))))
        listed.append(sent)
    return np.concatenate(out), listed


def synthesize(p: SynthParams) -> SynthResult:
    """Generate a capture of FSK bursts in Gaussian noise (module docstring).

    Parameters
    ----------
    p : SynthParams
        What to generate.

    Returns
    -------
    SynthResult
        Samples, bits, truth and the noiseless signal.  The signal is scaled so
        that its peak is 0.25 of full scale, or lower when needed to keep the
        peak plus five noise standard deviations (per component, at the
        capture) below 0.9 of full scale (head room for integer formats).
    """
    rng = np.random.default_rng(p.seed)
    fs = p.sample_rate_hz
    sps_tx = fs / p.symbol_rate_hz * (1.0 - p.rate_error_ppm * 1e-6)
    n_sym = p.symbols_per_burst
    burst_len = n_sym * sps_tx
    starts = p.start_offset_samples + np.arange(p.n_bursts) * (burst_len + p.gap_samples)
    total = int(np.ceil(starts[-1] + burst_len)) + int(p.tail_samples)
    framed = None
    if p.framing == "hdlc":
        all_bits, framed = _framed_tones(p, rng)
    else:
        all_bits = errorcount.prbs_sequence(p.pattern, n_sym * p.n_bursts) ^ np.uint8(p.pattern_inverted)
    tone_index = all_bits ^ np.uint8(p.one_on_low_tone)

    unit, gain = _bursts(p, rng, total, starts, sps_tx, tone_index)
    has_gains = bool(np.any(gain != 1.0))
    if _has_chain(p):
        ref = _apply_chain(unit, p)
        clean = _apply_chain(unit * gain, p) if has_gains else ref
    else:
        ref = unit
        clean = unit * gain if has_gains else unit
    eb_unit = float(np.sum(np.abs(ref) ** 2)) / all_bits.size
    peak_unit = float(np.max(np.abs(ref)))
    n0_ratio = _n0_per_sigma2(p)
    if np.isfinite(p.ebn0_db):
        sigma_unit = np.sqrt(eb_unit / 10.0 ** (p.ebn0_db / 10.0) / n0_ratio)
    else:
        sigma_unit = 0.0
    # noise per component at the capture, for the head room
    f_grid = np.linspace(-0.5 * fs, 0.5 * fs, 2048, endpoint=False)
    noise_gain = float(np.mean(_chain_power_gain(f_grid, p))) if _has_chain(p) else 1.0
    per_unit = sigma_unit * np.sqrt(noise_gain) / (1.0 if p.real else np.sqrt(2.0))
    amplitude = float(min(0.25 / peak_unit, 0.9 / (peak_unit + 5.0 * per_unit)))
    sigma = float(amplitude * sigma_unit)
    clean = amplitude * clean

    samples = clean.copy()
    if sigma > 0:
        scale = sigma
        if p.noise_drift_db:
            db = p.noise_drift_db * (np.arange(total) / max(total - 1, 1) - 0.5)
            scale = sigma * 10.0 ** (db / 20.0)
        if p.real:
            w = scale * rng.standard_normal(total)
        else:
            w = scale / np.sqrt(2) * (rng.standard_normal(total) + 1j * rng.standard_normal(total))
        samples += _apply_chain(w, p) if _has_chain(p) else w

    eb = eb_unit * amplitude**2
    n0 = n0_ratio * sigma**2
    f0, f1 = p.steady_tones()
    delay = _chain_delay(p)
    gains = np.asarray(p.burst_gains_db if p.burst_gains_db else (0.0,), dtype=float)
    bursts = [{
        "start_sample": float(t0 + delay),
        "stop_sample": float(t0 + burst_len + delay),
        "n_symbols": int(n_sym),
        "tones_hz": [float(f0), float(f1)],
        "symbol_rate_hz": float(fs / sps_tx),
        "gain_db": float(gains[b % len(gains)]),
    } for b, t0 in enumerate(starts)]
    if framed is not None:
        for b, listed in zip(bursts, framed):
            b["frames"] = listed

    params = asdict(p)
    for key in ("tones_hz", "tone_amplitudes", "burst_gains_db", "audio_band_hz"):
        params[key] = list(getattr(p, key))
    if not np.isfinite(p.ebn0_db):
        params["ebn0_db"] = None
    truth = {
        "params": params,
        "tones_hz": [float(f0), float(f1)],
        "deviation_hz": float(0.5 * (f1 - f0)),
        "modulation_index": float((f1 - f0) / p.symbol_rate_hz),
        "continuous_phase": bool(p.continuous_phase),
        "pulse": p.pulse,
        "bt": float(p.bt) if p.pulse == "gaussian" else None,
        "transition_symbols": float(p.transition) if p.pulse == "raised-cosine" else None,
        "drift_hz": float(p.drift_hz),
        "ebn0_db": float(10 * np.log10(eb / n0)) if n0 > 0 else None,
        "eb": eb,
        "n0": n0,
        "noise_sigma": sigma,
        "signal_amplitude": amplitude,
        "chain_delay_samples": delay,
        "bursts": bursts,
    }
    return SynthResult(samples=samples, bits=all_bits, truth=truth, signal=clean)
