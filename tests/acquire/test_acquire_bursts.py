"""The burst search's kernels: moving averages by doubling (numpy.convolve) and the noise-floor track."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from analyzer import acquire, survey


def test_doubling_means_equal_numpy_convolve():
    # reference: numpy.convolve with a boxcar, mode "same" (the moving average it replaces)
    rng = np.random.default_rng(13)
    for n in (1, 3, 7, 100, 5000):
        p = rng.exponential(size=n) * 10.0 ** rng.uniform(-3, 3, n)
        seen = []
        for k, ps in acquire.doubling_means(p, 16):
            ref = np.convolve(p, np.ones(k) / k, mode="same")
            np.testing.assert_allclose(ps, ref, rtol=1e-12, atol=1e-12 * p.max())
            seen.append(k)
        assert seen == [k for k in (1, 2, 4, 8, 16) if k < n] + ([n] if n <= 16 else [])   # clipped to len(p)


def test_floor_track_follows_a_step_in_the_noise_level():
    # a noise estimate per frame scattered as a mean of 13 exponential bins (Gamma(13, 1/13),
    # scipy.stats.gamma) around a level that steps up 6 dB half way
    rng = np.random.default_rng(14)
    n = 20000
    level = np.where(np.arange(n) < n // 2, 1.0, 10 ** 0.6)
    nd = level * stats.gamma(13, scale=1 / 13).rvs(n, random_state=rng)
    tr = survey.PowerTrace(np.zeros(n), nd, 64, 13, (-1e5, 1e5))
    track = acquire.floor_track(tr, float("nan"))
    # away from the step the track holds the level: a median of 17 means of 8 frames has a
    # spread of about 1.25 / sqrt(17 * 8 * 13) = 3% (normal approximation); the worst of the
    # ~2400 blocks is then expected near 3.5 sd, so 15% (5 sd) bounds every frame
    for sl in (slice(200, n // 2 - 200), slice(n // 2 + 200, n - 200)):
        np.testing.assert_allclose(track[sl], level[sl], rtol=0.15)
        assert np.median(track[sl] / level[sl]) == pytest.approx(1.0, abs=0.02)   # and no bias
    # and it moves within half its window (68 frames) of the step (plus one block)
    assert np.all(track[n // 2 + 80:] > 0.5 * (1 + 10 ** 0.6))
