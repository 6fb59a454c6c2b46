"""The channel: Eb/N0 at the capture, the noise density behind filters, the I/Q channel filter and the receiver audio chain.

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
  [1]_, the decimation filter of an SDR) applied to signal and noise together,
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

References
----------
.. [1] J. F. Kaiser, "Nonrecursive digital filter design using the I0-sinh
   window function", Proc. IEEE ISCAS, 1974 (the Kaiser window; design
   formulas as in scipy.signal.kaiserord).
"""

from __future__ import annotations

import numpy as np
from scipy import signal as sps_signal

from ._params import SynthParams

__all__ = ["channel_filter_taps", "deemphasis_ba", "receiver_audio_sos", "tilt_gain_db", "template_noise_gain"]


def channel_filter_taps(bandwidth_hz: float, fs: float) -> np.ndarray:
    """Linear-phase low-pass FIR (odd length): flat to ``bandwidth_hz``, 60 dB down from 1.25x it [1]_."""
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
    k = 2 * fs * tau
    fit = optimize.least_squares(_deemphasis_misfit_db, [(k - 1) / (k + 1), 0.99], args=(z, ref),
                                 bounds=([0.0, -1.0], [1.0 - 1e-9, 1.0]))
    a1, b1 = fit.x
    g = (1 - a1) / (1 + b1)
    return np.array([g, g * b1]), np.array([1.0, -a1])


def _deemphasis_misfit_db(x: np.ndarray, z: np.ndarray, ref_db: np.ndarray) -> np.ndarray:
    """Gain (dB) of the first-order IIR ``x = (a1, b1)`` at ``z = exp(-j 2 pi f / fs)`` less ``ref_db``."""
    a1, b1 = x
    return 20 * np.log10(np.abs((1 - a1) / (1 + b1) * (1 + b1 * z) / (1 - a1 * z))) - ref_db


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

