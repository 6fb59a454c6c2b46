"""The modulator: the bits sent, the frequency pulse and the closed-form phase of every burst.

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

The bits come from an ITU-T O.150 pattern, or are HDLC traffic (``framing="hdlc"``).

``tone_amplitudes`` keys the amplitude with the bit (a level difference at the
transmitter, applied to the signal only).

References
----------
.. [1] K. Murota and K. Hirade, "GMSK modulation for digital mobile radio
   telephony", IEEE Trans. Communications, vol. 29, no. 7, pp. 1044-1050,
   1981 (from memory).
"""

from __future__ import annotations

import numpy as np
from scipy import special

from .. import errorcount
from ._params import SynthParams

__all__ = ["frequency_pulse", "phase_pulse", "gaussian_sigma"]


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



def _sent_bits(p: SynthParams, rng: np.random.Generator) -> tuple[np.ndarray, list[list[dict]] | None]:
    """All bits sent, bursts end to end, and each burst's frames (None without framing)."""
    if p.framing == "hdlc":
        return _framed_tones(p, rng)
    n_bits = p.symbols_per_burst * p.n_bursts
    return errorcount.prbs_sequence(p.pattern, n_bits) ^ np.uint8(p.pattern_inverted), None
