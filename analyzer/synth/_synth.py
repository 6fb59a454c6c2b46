"""Synthetic two-tone FSK captures with known truth (demo data and tests): :func:`synthesize`.

This module only computes arrays; writing them to SigMF, WAV or FLAC files is
done by :mod:`analyzer.capture`.  The model: :mod:`._modulator` (timing,
frequency pulse, phase), :mod:`._channel` (Eb/N0 at the capture, noise,
filters); the parameters: :mod:`._params`.
"""

from __future__ import annotations

from dataclasses import asdict

import numpy as np

from ._channel import _apply_chain, _chain_delay, _chain_power_gain, _has_chain, _n0_per_sigma2
from ._modulator import _bursts, _sent_bits
from ._params import SynthParams, SynthResult

__all__ = ["synthesize"]


def synthesize(p: SynthParams) -> SynthResult:
    """Generate a capture of FSK bursts in Gaussian noise (the model: :mod:`._modulator`, :mod:`._channel`).

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
    burst_len = p.symbols_per_burst * sps_tx
    starts = p.start_offset_samples + np.arange(p.n_bursts) * (burst_len + p.gap_samples)
    total = int(np.ceil(starts[-1] + burst_len)) + int(p.tail_samples)
    all_bits, framed = _sent_bits(p, rng)
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
    n0_ratio = _n0_per_sigma2(p)
    amplitude, sigma = _level(p, ref, eb_unit, n0_ratio)
    clean = amplitude * clean
    samples = clean.copy()
    if sigma > 0:
        samples += _noise(p, rng, total, sigma)
    eb = eb_unit * amplitude**2
    n0 = n0_ratio * sigma**2
    delay = _chain_delay(p)
    bursts = _burst_truth(p, starts, burst_len, sps_tx, delay, framed)
    truth = _truth(p, eb, n0, sigma, amplitude, delay, bursts)
    return SynthResult(samples=samples, bits=all_bits, truth=truth, signal=clean)


def _level(p: SynthParams, ref: np.ndarray, eb_unit: float, n0_ratio: float) -> tuple[float, float]:
    """Signal amplitude and noise standard deviation for the unit-amplitude signal ``ref`` at the
    capture, ``n0_ratio`` being N0 over the variance of the white noise added (see :func:`synthesize`
    for the head room)."""
    fs = p.sample_rate_hz
    peak_unit = float(np.max(np.abs(ref)))
    if np.isfinite(p.ebn0_db):
        sigma_unit = np.sqrt(eb_unit / 10.0 ** (p.ebn0_db / 10.0) / n0_ratio)
    else:
        sigma_unit = 0.0
    # noise per component at the capture, for the head room
    f_grid = np.linspace(-0.5 * fs, 0.5 * fs, 2048, endpoint=False)
    noise_gain = float(np.mean(_chain_power_gain(f_grid, p))) if _has_chain(p) else 1.0
    per_unit = sigma_unit * np.sqrt(noise_gain) / (1.0 if p.real else np.sqrt(2.0))
    amplitude = float(min(0.25 / peak_unit, 0.9 / (peak_unit + 5.0 * per_unit)))
    return amplitude, float(amplitude * sigma_unit)


def _noise(p: SynthParams, rng: np.random.Generator, total: int, sigma: float) -> np.ndarray:
    """White Gaussian noise of standard deviation ``sigma`` (drifting by ``noise_drift_db``), through the
    capture's filters."""
    scale = sigma
    if p.noise_drift_db:
        db = p.noise_drift_db * (np.arange(total) / max(total - 1, 1) - 0.5)
        scale = sigma * 10.0 ** (db / 20.0)
    if p.real:
        w = scale * rng.standard_normal(total)
    else:
        w = scale / np.sqrt(2) * (rng.standard_normal(total) + 1j * rng.standard_normal(total))
    return _apply_chain(w, p) if _has_chain(p) else w


def _burst_truth(p: SynthParams, starts: np.ndarray, burst_len: float, sps_tx: float, delay: float,
                 framed) -> list[dict]:
    """Per burst: start and stop sample (after the chain's ``delay``), symbols, tones, rate, gain, frames."""
    f0, f1 = p.steady_tones()
    gains = np.asarray(p.burst_gains_db if p.burst_gains_db else (0.0,), dtype=float)
    bursts = [{
        "start_sample": float(t0 + delay),
        "stop_sample": float(t0 + burst_len + delay),
        "n_symbols": int(p.symbols_per_burst),
        "tones_hz": [float(f0), float(f1)],
        "symbol_rate_hz": float(p.sample_rate_hz / sps_tx),
        "gain_db": float(gains[b % len(gains)]),
    } for b, t0 in enumerate(starts)]
    if framed is not None:
        for b, listed in zip(bursts, framed):
            b["frames"] = listed
    return bursts


def _truth(p: SynthParams, eb: float, n0: float, sigma: float, amplitude: float, delay: float,
           bursts: list[dict]) -> dict:
    """The JSON-ready truth of a capture (see :class:`SynthResult`)."""
    f0, f1 = p.steady_tones()
    params = asdict(p)
    for key in ("tones_hz", "tone_amplitudes", "burst_gains_db", "audio_band_hz"):
        params[key] = list(getattr(p, key))
    if not np.isfinite(p.ebn0_db):
        params["ebn0_db"] = None
    return {
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
