"""Synthetic two-tone FSK captures with known truth (demo data and tests).

This module only computes arrays; writing them to SigMF, WAV or FLAC files is
done by :mod:`analyzer.writers`.

Signal and noise definitions
----------------------------
Time is measured in samples.  Symbol ``k`` of a burst begins at the fractional
sample ``t_k = start + k * sps * (1 - rate_error_ppm * 1e-6)`` (a positive
``rate_error_ppm`` makes the transmitter fast), where ``sps = fs / R_s``.  A
sample at integer time ``n`` belongs to the symbol whose interval
``[t_k, t_k+1)`` contains it, so fractional start offsets are exact, not
interpolated.

*Complex baseband* (``real=False``): bit ``b`` sends
``a_b * A * exp(j(2 pi f_b n / fs + phi_k))``.  The energy of one symbol is the
sum of ``|x|^2`` over its samples, ``E_b = a_b^2 A^2 sps``.  Complex white
Gaussian noise with ``E|w|^2 = sigma^2`` per sample has a flat power spectral
density over the whole sample bandwidth ``fs``; in sample units
``N0 = sigma^2``.  Hence::

    Eb/N0 = mean_b(a_b^2) * A^2 * sps / sigma^2

*Real audio* (``real=True``): bit ``b`` sends ``a_b A cos(2 pi f_b n/fs + phi_k)``;
``E_b = a_b^2 A^2 sps / 2``.  Real noise of variance ``sigma^2`` has two-sided
density ``N0/2`` over ``[-fs/2, fs/2]``, i.e. ``N0 = 2 sigma^2``, so::

    Eb/N0 = mean_b(a_b^2) * A^2 * sps / (4 sigma^2)

In both cases ``Eb`` is the average bit energy over the two tones (bits are
equiprobable for a PRBS) and ``N0`` is taken over the sample bandwidth.

Phase: with ``continuous_phase=True`` the carrier phase runs on across symbol
boundaries (continuous-phase FSK); otherwise each symbol gets an independent
uniformly distributed phase (phase-discontinuous, switched oscillators).
"""

from __future__ import annotations

from dataclasses import dataclass, field, asdict

import numpy as np

from . import frames, prbs

__all__ = ["SynthParams", "SynthResult", "synthesize"]


@dataclass(frozen=True)
class SynthParams:
    """Everything that defines a synthetic capture.

    Attributes
    ----------
    tones_hz : tuple of float
        Nominal tone frequencies (f0 < f1), baseband Hz relative to the capture
        centre (or audio Hz when ``real``).  Bit 0 sends f0, bit 1 sends f1.
    symbol_rate_hz : float
        Nominal symbol rate R_s.
    sample_rate_hz : float
        Sample rate fs.
    ebn0_db : float
        Average bit energy over N0 (see module docstring); ``inf`` for no noise.
    centre_offset_hz : float
        Frequency error of the transmitter: added to both tones.
    continuous_phase : bool
        Continuous-phase (True) or a random phase per symbol (False).
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
    continuous_phase: bool = False
    start_offset_samples: float = 1000.0
    rate_error_ppm: float = 0.0
    n_bursts: int = 1
    symbols_per_burst: int = 2000
    gap_samples: float = 4000.0
    tail_samples: int = 1000
    pattern: str = "PN9"
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
        if self.pattern not in prbs.PATTERNS:
            raise ValueError(f"unknown pattern {self.pattern!r}")
        if self.framing not in ("none", "hdlc"):
            raise ValueError(f"unknown framing {self.framing!r} (none or hdlc)")
        if self.framing == "hdlc":
            if self.frame_bytes < 2 or self.preamble_flags < 1 or self.flags_between < 1:
                raise ValueError("hdlc framing needs frames of at least 2 bytes and at least one flag before "
                                 "and after each")
            need = 8 * (self.preamble_flags + self.flags_between) + frames.frame_bits(bytes(self.frame_bytes)).size + 1
            if self.symbols_per_burst < need:
                raise ValueError(f"a burst of {self.symbols_per_burst} symbols cannot hold one frame of "
                                 f"{self.frame_bytes} bytes with its flags (about {need} symbols or more)")


@dataclass(frozen=True)
class SynthResult:
    """A synthetic capture and its truth.

    Attributes
    ----------
    samples : numpy.ndarray
        complex128 (baseband) or float64 (audio) samples.
    bits : numpy.ndarray
        uint8, all bits sent, bursts concatenated.
    truth : dict
        JSON-ready description: parameters, noise level and, per burst, the
        fractional start sample, symbol count, actual tones and symbol rate.
    """

    samples: np.ndarray
    bits: np.ndarray
    truth: dict


def _noise_sigma(p: SynthParams, amplitude: float) -> float:
    """Noise standard deviation that gives ``p.ebn0_db`` (see module docstring)."""
    if not np.isfinite(p.ebn0_db):
        return 0.0
    sps = p.sample_rate_hz / p.symbol_rate_hz
    a0, a1 = p.tone_amplitudes
    eb = 0.5 * (a0**2 + a1**2) * amplitude**2 * sps * (0.5 if p.real else 1.0)
    n0 = eb / 10.0 ** (p.ebn0_db / 10.0)
    # complex: N0 = sigma^2 ; real: N0 = 2 sigma^2
    return float(np.sqrt(n0 / 2.0) if p.real else np.sqrt(n0))


def _framed_tones(p: SynthParams, rng: np.random.Generator) -> tuple[np.ndarray, list[list[dict]]]:
    """Tone indices of HDLC traffic for every burst (see ``SynthParams.framing``) and each burst's frames."""
    n_sym = p.symbols_per_burst
    out, listed = [], []
    for _ in range(p.n_bursts):
        parts = [np.tile(frames.FLAG_BITS, p.preamble_flags)]
        used, sent = parts[0].size, []
        closing = np.tile(frames.FLAG_BITS, p.flags_between)
        while True:
            payload = rng.integers(0, 256, p.frame_bytes, dtype=np.uint8).tobytes()
            body = frames.frame_bits(payload)
            if used + body.size + closing.size > n_sym - 1:
                break
            sent.append({"start_symbol": used + 1, "hex": payload.hex()})
            parts += [body, closing]
            used += body.size + closing.size
        fill = np.tile(frames.FLAG_BITS, (n_sym - 1 - used) // 8 + 1)[:n_sym - 1 - used]
        out.append(frames.nrzi_encode(np.concatenate(parts + [fill]), int(rng.integers(0, 2))))
        listed.append(sent)
    return np.concatenate(out), listed


def synthesize(p: SynthParams) -> SynthResult:
    """Generate a capture of FSK bursts in white Gaussian noise.

    Parameters
    ----------
    p : SynthParams
        What to generate.

    Returns
    -------
    SynthResult
        Samples, bits and truth.  The signal amplitude ``A`` is chosen so that
        the stronger tone peaks at 0.25 of full scale, or lower when needed to
        keep signal plus five noise standard deviations below 0.9 of full
        scale (head room for integer formats).
    """
    rng = np.random.default_rng(p.seed)
    fs = p.sample_rate_hz
    sps_tx = fs / p.symbol_rate_hz * (1.0 - p.rate_error_ppm * 1e-6)
    n_sym = p.symbols_per_burst
    burst_len = n_sym * sps_tx
    starts = p.start_offset_samples + np.arange(p.n_bursts) * (burst_len + p.gap_samples)
    total = int(np.ceil(starts[-1] + burst_len)) + int(p.tail_samples)

    # Peak of the stronger tone at 0.25 of full scale, lowered when the noise is
    # strong so that signal + 5 sigma of noise per component stays below 0.9
    # (head room for integer formats).
    per_unit = _noise_sigma(p, 1.0) / (1.0 if p.real else np.sqrt(2.0))
    amplitude = min(0.25 / max(p.tone_amplitudes), 0.9 / (max(p.tone_amplitudes) + 5.0 * per_unit))
    tones = np.asarray(p.tones_hz, dtype=float) + p.centre_offset_hz
    amps = np.asarray(p.tone_amplitudes, dtype=float) * amplitude
    gains = np.asarray(p.burst_gains_db if p.burst_gains_db else (0.0,), dtype=float)

    framed = None
    if p.framing == "hdlc":
        all_bits, framed = _framed_tones(p, rng)
    else:
        all_bits = prbs.prbs_sequence(p.pattern, n_sym * p.n_bursts)
    samples = np.zeros(total, dtype=float if p.real else complex)
    n = np.arange(total, dtype=float)
    bursts = []
    for b, t0 in enumerate(starts):
        bits = all_bits[b * n_sym:(b + 1) * n_sym]
        first = int(np.ceil(t0))
        last = int(np.ceil(t0 + burst_len))  # exclusive
        nn = n[first:last]
        k = np.minimum(np.floor((nn - t0) / sps_tx).astype(np.int64), n_sym - 1)
        freq = tones[bits]                      # per symbol
        # phase at the start of each symbol
        if p.continuous_phase:
            incr = 2 * np.pi * freq * sps_tx / fs
            phi0 = np.concatenate(([rng.uniform(0, 2 * np.pi)], np.cumsum(incr)[:-1]))
            # phase(t) = phi0_k + 2 pi f_k (t - t_k)/fs  (continuous at boundaries)
            tk = t0 + k * sps_tx
            phase = phi0[k] + 2 * np.pi * freq[k] * (nn - tk) / fs
        else:
            phi = rng.uniform(0, 2 * np.pi, n_sym)
            phase = phi[k] + 2 * np.pi * freq[k] * nn / fs
        env = amps[bits][k] * 10.0 ** (gains[b % len(gains)] / 20.0)
        if p.symbol_ramp > 0:
            tk = t0 + k * sps_tx
            d = np.minimum(nn - tk, tk + sps_tx - nn)
            env = env * np.sin(0.5 * np.pi * np.clip(d / (p.symbol_ramp * sps_tx), 0.0, 1.0)) ** 2
        if p.ramp_symbols > 0:
            ramp = p.ramp_symbols * sps_tx
            u = np.clip(np.minimum(nn - t0, t0 + burst_len - nn) / ramp, 0.0, 1.0)
            env = env * np.sin(0.5 * np.pi * u) ** 2
        samples[first:last] = env * (np.cos(phase) if p.real else np.exp(1j * phase))
        bursts.append({
            "start_sample": float(t0),
            "stop_sample": float(t0 + burst_len),
            "n_symbols": int(n_sym),
            "tones_hz": [float(tones[0]), float(tones[1])],
            "symbol_rate_hz": float(fs / sps_tx),
            "gain_db": float(gains[b % len(gains)]),
        })
        if framed is not None:
            bursts[-1]["frames"] = framed[b]

    sigma = _noise_sigma(p, amplitude)
    if sigma > 0:
        scale = sigma
        if p.noise_drift_db:
            db = p.noise_drift_db * (np.arange(total) / max(total - 1, 1) - 0.5)
            scale = sigma * 10.0 ** (db / 20.0)
        if p.real:
            samples += scale * rng.standard_normal(total)
        else:
            samples += scale / np.sqrt(2) * (rng.standard_normal(total) + 1j * rng.standard_normal(total))

    params = asdict(p)
    params["tones_hz"] = list(p.tones_hz)
    params["tone_amplitudes"] = list(p.tone_amplitudes)
    params["burst_gains_db"] = list(p.burst_gains_db)
    if not np.isfinite(p.ebn0_db):
        params["ebn0_db"] = None
    truth = {
        "params": params,
        "noise_sigma": sigma,
        "signal_amplitude": amplitude,
        "n0": (2 * sigma**2 if p.real else sigma**2),
        "bursts": bursts,
    }
    return SynthResult(samples=samples, bits=all_bits, truth=truth)
