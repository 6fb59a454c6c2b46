"""The physical Eb/N0's sums (analyzer.estimate.energy_sums) against the definition computed
directly with numpy.linalg, one context and one fit at a time.

The definition (see analyzer/estimate/_signal_energy.py): the symbol windows in the coordinates of
the band basis; per context (the tones of a symbol and its two neighbours), the signal subspace is
the two leading eigenvectors of the rows' Gram matrix (fitted on all rows, and on the even and the
odd rows, each half's figures taken with the other half's fit); per row the energy in the subspace
and the residual (the row less its projection, numpy.linalg.lstsq) on each tone's template pair;
figures weighted 2/3 in-sample and 1/3 cross-fitted.  The receiver computes the same figures in a
batched form (every fit in one eigen call, the residual's projection as ``y t - c u^T t``): the
sums must agree to rounding (1e-12 relative; double precision sums of 4000 terms, common practice).
"""

from __future__ import annotations

import numpy as np

from analyzer import estimate


def _reference_sums(rows, sent, tones, fs):
    """``EnergySums.s`` and ``.m`` by the definition: one context and one fit at a time."""
    L = rows.shape[1]
    n = np.arange(L)
    # an orthonormal real basis of the band (exponentials at each tone +- 2 bins of fs / L; the figures
    # do not depend on which orthonormal basis of that span is taken)
    freqs = np.unique(np.round([f + m * fs / L for f in tones for m in range(-2, 3)], 6))
    v = np.exp(2j * np.pi * np.outer(n, freqs) / fs)
    basis = np.linalg.qr(np.block([[v.real, -v.imag], [v.imag, v.real]]))[0]
    pairs = []
    for f in tones:
        w = np.exp(2j * np.pi * f * n / fs)
        t = basis.T @ np.column_stack([np.concatenate([w.real, w.imag]), np.concatenate([-w.imag, w.real])])
        pairs.append(np.linalg.qr(t)[0])        # the template pair, orthonormal in the basis coordinates
    y = np.concatenate([rows.real, rows.imag], axis=1) @ basis
    code = np.full(len(sent), -1)
    code[1:-1] = 4 * sent[:-2] + 2 * sent[1:-1] + sent[2:]      # the tones of k-1, k, k+1

    def figures(rows_y, fit_y):
        u = np.linalg.eigh(fit_y.T @ fit_y)[1][:, -2:]
        c = rows_y @ u
        resid = rows_y - np.linalg.lstsq(u, rows_y.T, rcond=None)[0].T @ u.T
        cols = [np.sum(c ** 2, axis=1)]
        for t in pairs:
            cols += [np.sum((resid @ t) ** 2, axis=1), np.full(len(rows_y), 2.0 - np.sum((u.T @ t) ** 2))]
        return np.column_stack(cols)

    figs = []
    for ctx in np.unique(code[code >= 0]):
        idx = np.flatnonzero(code == ctx)
        if idx.size < 8:
            continue
        yc = y[idx]
        f = 2.0 / 3.0 * figures(yc, yc)
        f[0::2] += 1.0 / 3.0 * figures(yc[0::2], yc[1::2])
        f[1::2] += 1.0 / 3.0 * figures(yc[1::2], yc[0::2])
        figs.append(np.column_stack([f, np.ones(idx.size), sent[idx].astype(float)]))
    v = np.concatenate(figs)
    return v.sum(axis=0), v.T @ v


def test_energy_sums_match_the_definition():
    rng = np.random.default_rng(20261204)
    fs, L, n_sym = 80_000.0, 16, 4000
    tones = (-2500.0, 2500.0)
    sent = rng.integers(0, 2, n_sym)
    k = np.arange(n_sym * L)
    freq = np.asarray(tones)[np.repeat(sent, L)]
    phase = np.repeat(rng.uniform(0, 2 * np.pi, n_sym), L)
    x = np.exp(1j * (2 * np.pi * freq * k / fs + phase))
    x += 0.3 * (rng.standard_normal(x.size) + 1j * rng.standard_normal(x.size))
    rows = x.reshape(n_sym, L)
    got = estimate.energy_sums(rows, sent, tones, fs, real=False, scale=1.0)
    s_ref, m_ref = _reference_sums(rows, sent, tones, fs)
    np.testing.assert_allclose(got.s, s_ref, rtol=1e-12)
    np.testing.assert_allclose(got.m, m_ref, rtol=1e-12, atol=1e-12 * np.abs(m_ref).max())
