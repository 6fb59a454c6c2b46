"""Burst edges to the symbol: each edge moved by whole symbols where the presence likelihood of the
edge symbols says so."""

from __future__ import annotations

import numpy as np

from .. import branches
from ..acquire import MIN_BURST_SYMBOLS
from ._reference import count_bits, is_synced

__all__ = ["EDGE_SYMBOLS", "EDGE_LLR", "refine_edges"]

EDGE_SYMBOLS = 4   # symbols examined on each side of each burst edge
# An edge symbol belongs to the burst when its presence log-likelihood ratio
# exceeds this (0: equal prior odds).  At high Es/N0 a noise symbol then passes
# with probability about exp(-Es/N0 / 4) and a burst symbol fails with
# probability Phi(-sqrt(Es/N0 / 2)): about 2% and 0.3% at 12 dB.
EDGE_LLR = 0.0


def refine_edges(x, x_start, grid, tones, fs, out, dec, ec, ref):
    """Move each burst edge by whole symbols where the edge symbols say so.

    For every symbol within ``EDGE_SYMBOLS`` of an edge (inside and outside),
    the log-likelihood ratio of "the burst's tone is present" against "noise
    only" is ``ln I0(2 g r / s2) - g^2 / s2`` with ``r`` the envelope on the
    branch of the tone that symbol should carry -- the pattern's bit when the
    pattern is known, the decided tone otherwise -- and ``g``, ``s2`` the
    signal amplitude and complex noise variance fitted on the burst.  The
    edge moves outwards over symbols whose ratio exceeds ``EDGE_LLR`` and
    inwards over symbols whose ratio does not.

    Returns the new grid with the outputs already made for its symbols and
    the first whole sample each was made on, or None when nothing changes.
    """
    n = grid.n_symbols
    if n < 4 * EDGE_SYMBOLS:
        return None
    sps = grid.samples_per_symbol
    # extended grid, as far as the samples allow
    pre = EDGE_SYMBOLS
    while pre > 0 and np.ceil(grid.first_start - pre * sps - 1e-9) < x_start:
        pre -= 1
    post = EDGE_SYMBOLS
    while post > 0 and np.ceil(grid.first_start + (n + post - 1) * sps - 1e-9) + grid.window > x_start + len(x):
        post -= 1
    ext = branches.symbol_grid(grid.first_start - pre * sps, sps, n + pre + post)
    # the burst's own outputs are known: correlate only the symbols beyond each edge
    at_pre = branches.symbol_grid(ext.first_start, sps, pre).first_samples if pre else np.empty(0, np.int64)
    at_post = branches.symbol_grid(grid.stop, sps, post).first_samples if post else np.empty(0, np.int64)
    z_edge = branches.correlate_at(x, x_start, np.concatenate((at_pre, at_post)), grid.window, tones, fs)
    z = np.concatenate((z_edge[:pre], out.z, z_edge[pre:]))
    used = (at_pre, grid.first_samples, at_post)
    dec_ext = branches.square_law(z)
    bits = dec_ext
    if is_synced(ec):
        if ref.is_prbs and ec.slips == 0:
            # one alignment throughout: the pattern carried on over the symbols beyond each edge
            bits = ref.expected(ec.alignment, -pre, n + post).astype(np.int64)
        else:
            ec_ext, _ = count_bits(dec_ext, ref, ec.alignment - pre)    # bit k of the burst is bit k + pre here
            if ec_ext.synced:
                bits = ec_ext.expected.astype(np.int64)
    # fitted levels from the burst's own symbols (decisions)
    p = np.abs(out.z) ** 2
    on = p[np.arange(n), dec]
    off = p[np.arange(n), 1 - dec]
    s2 = float(np.mean(off))
    # each tone's own level: with unequal tones the weaker one's symbols at an
    # edge would fail a test made for the mean of the two
    g2_tone = np.array([np.mean(on[dec == i]) - s2 if np.any(dec == i) else np.nan for i in (0, 1)])
    g2_tone = np.where(np.isfinite(g2_tone) & (g2_tone > 0), g2_tone, np.mean(on) - s2)
    if not (np.all(g2_tone > 0) and s2 > 0):
        return None
    # the ratio of the symbols within EDGE_SYMBOLS of each edge (the only ones looked at below)
    near = np.r_[0:min(pre + EDGE_SYMBOLS, ext.n_symbols), max(pre + n - EDGE_SYMBOLS, 0):ext.n_symbols]
    b_idx = np.asarray(bits, np.int64)[near] % 2
    g2 = g2_tone[b_idx]
    g = np.sqrt(g2)
    r = np.abs(z[near, b_idx])
    llr = np.full(ext.n_symbols, np.nan)
    llr_near = branches.log_i0(2 * g * r / s2) - g2 / s2
    # correlated tones: the other branch carries the leakage |rho| g when the tone is there
    rho = abs(branches.template_correlation(tones, fs, grid.window))
    if rho > 0.05:
        r_o = np.abs(z[near, 1 - b_idx])
        llr_near = llr_near + branches.log_i0(2 * rho * g * r_o / s2) - (rho * g) ** 2 / s2
    llr[near] = llr_near
    first, stop = pre, pre + n                  # current edges in the extended grid
    tau = EDGE_LLR
    while first > 0 and llr[first - 1] > tau:
        first -= 1
    while first < pre + EDGE_SYMBOLS and first < stop - 1 and llr[first] < tau:
        first += 1
    while stop < ext.n_symbols and llr[stop] > tau:
        stop += 1
    while stop > pre + n - EDGE_SYMBOLS and stop > first + 1 and llr[stop - 1] < tau:
        stop -= 1
    if (first, stop) == (pre, pre + n) or stop - first < MIN_BURST_SYMBOLS:
        return None
    new = branches.symbol_grid(ext.starts[first], sps, stop - first)
    # the outputs already made for those symbols, and the whole samples they were made on
    return new, z[first:stop], np.concatenate(used)[first:stop]
