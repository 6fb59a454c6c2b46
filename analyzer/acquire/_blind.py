"""Blind acquisition of a region: which symbol rate, not a harmonic or a fraction of it.

Pure functions on the region's samples (numpy arrays; no I/O, no warnings): the
pipeline decides what to tell the user.
"""

from __future__ import annotations

import numpy as np

from .. import branches
from ._coarse import blind_rate_candidates, blind_symbol_rate
from ._timing import symbol_timing, tone_transitions

__all__ = ["BLIND_MIN_LINE_QUALITY", "HARMONIC_LINE_SHARE", "blind_rate", "keying_contrast", "sub_multiple"]

#: Blind, a region whose best timing line stands less than this far above the
#: spectrum around it (see acquire.TimingEstimate.line_snr) is not taken as a
#: burst: below about 10 the line is as likely a noise peak.
BLIND_MIN_LINE_QUALITY = 10.0


def keying_contrast(x: np.ndarray, fs: float, tones, rate: float) -> float:
    """``sum ||z1|^2 - |z0|^2| / sum (|z0|^2 + |z1|^2)`` over one-symbol windows at every start.

    Near 1 when each window holds one tone or the other (the two tones of an FSK
    burst, however unequal); lower when one template sits on noise that fills
    every window (a peak of a receiver's shaped noise).
    """
    w = int(np.floor(fs / rate))
    if w < 2 or len(x) < 4 * w:
        return 0.0
    n = len(x) - w + 1
    c = branches.window_energy(x, 0, 0, n, w, tones, fs, metric="contrast")
    e = branches.window_energy(x, 0, 0, n, w, tones, fs)
    total = float(np.sum(e))
    return float(np.sum(c) / total) if total > 0 else 0.0


def blind_rate(x: np.ndarray, fs: float, tones) -> tuple[float, float] | None:
    """Symbol rate and its timing-line quality with no hint, for the tones ``tones``; None if none."""
    trans = tone_transitions(x, fs, tones)        # shared by every rate tried below
    rs = blind_symbol_rate(x, fs, tones, transitions=trans)
    if rs is None or not np.isfinite(rs) or rs <= 0 or rs > fs / 2:
        return None
    # the transition line can lock to a harmonic or a spur on weak bursts:
    # keep, among the rate and its sub-multiples, the one whose timing line
    # (see acquire.symbol_timing) stands out most
    # (the energy trace is periodic at the symbol rate, so its harmonics carry
    # lines too -- at high SNR about as strong: the lowest rate whose line is
    # at least half as strong as the strongest is the symbol rate)
    tried = []
    cands = [rs / k for k in (1, 2, 3, 4)] + blind_rate_candidates(x, fs, tones, transitions=trans)
    energies: dict[int, branches.EnergyTrace] = {}      # one per window length
    for cand in cands:
        if fs / cand > len(x) / 16:
            continue
        w = int(np.floor(fs / cand))
        if w not in energies:
            energies[w] = branches.energy_trace(x, 0, w, tones, fs)
        tried.append(symbol_timing(x, 0, fs, tones, cand, search_ppm=10000.0, energy=energies[w],
                                   transitions=trans))
    if not tried:
        return None
    top = max(t.line_snr for t in tried)
    strongest = max(tried, key=lambda t: t.line_snr).symbol_rate_hz
    # the rate, not a harmonic: the lowest rate whose line is at least half the strongest,
    # or a sub-multiple R/2..R/4 of the strongest whose own line still stands out clearly
    # (short windows can make a harmonic's line several times the symbol rate's own)
    # (a lower rate than the strongest's must itself clear twice the line threshold: on a short
    # burst every line is weak, and half the rate can come within a factor of two by chance)
    clear = [t for t in tried if t.line_snr >= 2 * BLIND_MIN_LINE_QUALITY and (
        t.line_snr >= 0.5 * top
        or (t.line_snr >= HARMONIC_LINE_SHARE * top and sub_multiple(strongest, t.symbol_rate_hz)))]
    # with no line that clear (a weak burst, or noise), the lowest rate within a factor two of the
    # strongest, whose quality then decides whether it is analysed at all
    best = min(clear or [t for t in tried if t.line_snr >= 0.5 * top], key=lambda t: t.symbol_rate_hz)
    return float(best.symbol_rate_hz), float(best.line_snr)


#: A sub-multiple R/k (k = 2..4) of the rate with the strongest timing line is taken
#: for the symbol rate when its own line is at least this share of the strongest
#: (1200 Bd AFSK audio at 20 dB: the 3600 Bd window's line 566, the 1200 Bd one 175;
#: a Gaussian BT 0.3 burst with random phase at 30 dB: 7200 Bd 2284, 2400 Bd 325;
#: the spurious 400 Bd one 13).
HARMONIC_LINE_SHARE = 0.1


def sub_multiple(rate: float, cand: float) -> bool:
    """Whether ``cand`` is ``rate / k`` for k = 2, 3 or 4 (within 0.2%: both lines are measured to a few ppm)."""
    k = rate / cand
    return any(abs(k - m) < 0.002 * m for m in (2, 3, 4))
