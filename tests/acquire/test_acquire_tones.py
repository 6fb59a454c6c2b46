"""Tone estimates: the lag products by their definition, the noncoherent frequency by scipy.optimize."""

from __future__ import annotations

import numpy as np
import pytest

from analyzer import acquire


def test_lag_products_match_their_definition():
    rng = np.random.default_rng(2)
    r = rng.standard_normal((50, 12)) + 1j * rng.standard_normal((50, 12))
    # reference: the defining double sum R[l] = sum_k sum_m r[k, m+l] conj(r[k, m]), written out
    ref = np.array([sum(np.sum(r[k, l:] * np.conj(r[k, :12 - l])) for k in range(50)) for l in range(12)])
    np.testing.assert_allclose(acquire.lag_products(r), ref, rtol=1e-12, atol=1e-9)


def test_tone_estimate_is_the_periodogram_maximum_scipy_finds():
    from scipy.optimize import minimize_scalar

    rng = np.random.default_rng(4)
    fs, L = 1e6, 20
    for f0 in (1234.5, -4100.0, 8000.0):
        t = np.arange(1500)[:, None] * L + np.arange(L)
        rows = (np.exp(1j * (2 * np.pi * f0 * t / fs + rng.uniform(0, 2 * np.pi, (1500, 1))))
                + 0.7 * (rng.standard_normal((1500, L)) + 1j * rng.standard_normal((1500, L))))
        got = acquire.noncoherent_frequency(rows, fs, 0.0, 20000.0)
        # reference: the summed periodogram sum_k |sum_m r[k,m] e^{-j w m}|^2 maximised by scipy.optimize
        m = np.arange(L)

        def minus_p(f):
            return -np.sum(np.abs(rows @ np.exp(-2j * np.pi * f * m / fs)) ** 2)

        ref = minimize_scalar(minus_p, bounds=(got - 2000.0, got + 2000.0), method="bounded",
                              options={"xatol": 1e-6}).x
        assert got == pytest.approx(ref, abs=1e-3)        # Hz; the estimate's own spread is ~50 Hz
