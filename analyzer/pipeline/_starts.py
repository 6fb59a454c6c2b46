"""Starting points of the burst regions: the hints, or blind tones and symbol rate, with the rates
of one capture held to one transmitter's."""

from __future__ import annotations

import numpy as np

from .. import acquire
from ..errors import warn
from ._results import AnalysisOptions

__all__ = ["starting_point", "common_rate"]


def starting_point(x: np.ndarray, fs: float, band, opts: AnalysisOptions, path, start: int,
                    kind: str = "iq"):
    """Tones, symbol rate and its line quality to start a region from: hints, or blind estimates.

    Blind on receiver audio, the tone pairs from the strongest peaks of the
    region's spectrum are tried beside the modes of its instantaneous frequency,
    and among the pairs with a symbol-rate line the one that keys most clearly
    between its two tones (:func:`analyzer.blind.keying_contrast`) is kept: an FM receiver's noise fills the
    voice band, shaped by its filters, and can pull the frequency modes or
    raise a peak of its own.
    """
    if opts.tones_hz is not None:
        pairs = [tuple(opts.tones_hz)]
    else:
        pairs = [acquire.blind_tones(x, fs, band)]
        if kind == "audio":
            pairs += acquire.peak_tone_pairs(x, fs, band)
    found, score = None, -1.0
    for tones in pairs:
        got = acquire.blind_rate(x, fs, tones) if opts.symbol_rate_hz is None else (float(opts.symbol_rate_hz),
                                                                              float("inf"))
        if got is None:
            continue
        # among pairs with a symbol-rate line, the one that keys most clearly between its tones
        clear_line = len(pairs) > 1 and got[1] >= acquire.BLIND_MIN_LINE_QUALITY
        sc = acquire.keying_contrast(x, fs, tones, got[0]) if clear_line else 0.0
        if found is None or sc > score:
            found, score = (tones, *got), sc
    if found is None:
        warn(f"{path}: no symbol rate could be found in the burst near sample {start}; "
             "give --baud to analyse it")
        return None
    tones, rs, quality = found
    if quality < acquire.BLIND_MIN_LINE_QUALITY:
        warn(f"{path}: the candidate burst near sample {start} ({len(x)} samples) shows no symbol-rate "
             f"line (quality {quality:.1f}, below {acquire.BLIND_MIN_LINE_QUALITY:g}): a noise peak or an "
             "unkeyed carrier, not analysed; give --tones and --baud to analyse it anyway")
        return None
    return (float(tones[0]), float(tones[1])), float(rs), float(quality)


def common_rate(starts: list) -> list:
    """Bursts of one capture share a transmitter: a blind rate that is a whole multiple
    (2..6, within 0.5%) of the rate found with the strongest timing line is that
    rate's harmonic, and is replaced by it."""
    found = [s for s in starts if s is not None]
    if len(found) < 2:
        return starts
    ref = max(found, key=lambda s: s[2])[1]
    out = []
    for s in starts:
        if s is None:
            out.append(None)
            continue
        k = round(s[1] / ref)
        if 2 <= k <= 6 and abs(s[1] / ref - k) < 0.005 * k:
            s = (s[0], ref, s[2])
        out.append(s)
    return out
