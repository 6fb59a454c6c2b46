"""The survey pass: the DC offset removed after the pass (against the pass over corrected samples) and its
window (scipy.signal.windows.hann)."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import signal

from analyzer import survey


def test_dc_removed_after_the_pass_equals_dc_removed_before():
    rng = np.random.default_rng(5)
    fs, n = 1e6, 1024 * 40
    x = (0.2 * (rng.standard_normal(n) + 1j * rng.standard_normal(n))
         + 0.5 * np.exp(2j * np.pi * 2e4 * np.arange(n) / fs)).astype(np.complex64)
    d = np.complex64(0.05 - 0.03j)
    spec = survey.TraceSpec((-5e4, 5e4), 64, [(-5e5, -1e5), (1e5, 5e5)])

    def run(samples):
        return survey.survey(lambda a, c: samples[a:a + c], n, fs, 8192, 1024, trace=spec)

    raw, clean = run(x + d), run(x)
    # reference: the same pass over samples with the offset already subtracted (numpy arithmetic)
    assert raw.mean - clean.mean == pytest.approx(complex(d), abs=1e-7)
    np.testing.assert_allclose(raw.trace.power, clean.trace.power, rtol=1e-4, atol=1e-9)
    np.testing.assert_allclose(raw.spectrogram, clean.spectrogram, rtol=1e-3, atol=1e-9)
    np.testing.assert_allclose(raw.psd, clean.psd, rtol=1e-3, atol=1e-12)


def test_periodic_hann_is_scipy_hann_to_the_bit():
    # reference: scipy.signal.windows.hann(n, sym=False), every frame length the survey uses and a few others
    for n in [0, 1, 2, 3, 7] + [2 ** k for k in range(4, 13)]:
        ref = signal.windows.hann(n, sym=False)
        got = survey.periodic_hann(n)
        assert got.dtype == ref.dtype and got.shape == ref.shape
        assert np.array_equal(got, ref)                    # tolerance: exactly equal
