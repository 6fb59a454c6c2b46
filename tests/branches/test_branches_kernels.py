"""The correlator's fast kernels against general-purpose reference implementations.

Each kernel replaces a slower general routine on the hot path; here it is held
to that routine: numpy.exp for the block oscillator and the correlator, a
direct per-window sum for the window energies.
"""

from __future__ import annotations

import numpy as np
import pytest

from analyzer import branches
from analyzer.branches import _correlate  # private kernel, tested directly


@pytest.mark.parametrize("freq, first, count", [(12345.678, 0, 1000), (-0.31e6, 987_654_321, 5000),
                                                 (250e3, 3, 1)])
def test_oscillator_matches_numpy_exp(freq, first, count):
    fs = 1e6
    n = first + np.arange(count, dtype=np.float64)
    ref = np.exp(-2j * np.pi * np.mod(freq / fs * n, 1.0))      # reference: numpy.exp, phase reduced
    got = branches.oscillator(freq, fs, first, count)
    assert got.shape == (count,)
    # tolerance: a float64 phase of f/fs * n cycles carries ~1.1e-16 of that count (3e8 cycles here:
    # 3e-8 cycle, 2e-7 rad), in the reference as in the kernel
    assert np.max(np.abs(got - ref)) < 1e-15 * max(1.0, abs(freq / fs) * (first + count)) * 2 * np.pi + 1e-12


@pytest.mark.parametrize("first", [0, 123_456_789])
def test_correlate_matches_direct_template_sums(first):
    rng = np.random.default_rng(11)
    fs, tones = 1e6, (-50e3, 50e3)
    grid = branches.symbol_grid(first + 2.3, 20.37, 300)
    x = rng.standard_normal(6200) + 1j * rng.standard_normal(6200)
    got = branches.correlate(x, first, grid, tones, fs).z
    n = grid.first_samples[:, None] + np.arange(grid.window)[None, :]       # capture index of each sample
    # reference: the definition z_i = sum_n x[n] exp(-j 2 pi f_i n / fs) / sqrt(L), by numpy.exp with
    # the phase reduced modulo a cycle in exact integer arithmetic first (n f / fs = n / 20 here)
    ref = np.stack([np.sum(x[n - first] * np.exp(-2j * np.pi * np.mod(n * int(f / 1e3), 1000) / 1000), axis=1)
                    for f in tones], axis=1) / np.sqrt(grid.window)
    # tolerance: rounding only -- the kernel's float64 phase of f n / fs cycles (1.2e7 cycles at the
    # large offset) carries ~1e-16 of that count: 1.2e-9 cycle; sums of 20 unit samples are ~4.5
    tol = 1e-13 + 2 * np.pi * 1.2e-16 * abs(tones[0]) / fs * (first + 6200) * np.sqrt(grid.window) * 5
    assert np.max(np.abs(got - ref)) < tol


def test_window_energy_matches_direct_sums():
    rng = np.random.default_rng(7)
    fs, tones, L = 80000.0, (-4000.0, 6000.0), 16
    x = rng.standard_normal(700) + 1j * rng.standard_normal(700)
    got = branches.window_energy(x, 100, 150, 400, L, tones, fs)
    n = np.arange(150, 400)[:, None] + np.arange(L)[None, :]       # capture index of each window sample
    ref = sum(np.abs(np.sum(x[n - 100] * np.exp(-2j * np.pi * f * n / fs), axis=1)) ** 2 for f in tones) / L
    np.testing.assert_allclose(got, ref, rtol=1e-9)               # direct definition, rounding only


@pytest.mark.parametrize("sps", [20.0003, 20.5, 19.98, 16.0])
def test_window_products_equal_explicit_sums(sps):
    # reference: numpy.dot of each window with the templates, one symbol at a time
    rng = np.random.default_rng(int(sps * 100))
    x = rng.standard_normal(30000) + 1j * rng.standard_normal(30000)
    L = int(np.floor(sps + 0.02))
    base = rng.standard_normal((L, 2)) + 1j * rng.standard_normal((L, 2))
    first = np.ceil(7.3 + np.arange(1200) * sps - 1e-9).astype(np.int64)
    got = _correlate._window_products(x, first, L, base)
    ref = np.array([x[s:s + L] @ base for s in first])
    np.testing.assert_allclose(got, ref, rtol=1e-12, atol=1e-12)          # rounding only
