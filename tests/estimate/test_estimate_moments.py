"""The grouped branch moments against numpy.mean / numpy.cov."""

from __future__ import annotations

import numpy as np

from analyzer import estimate


def test_group_moments_match_numpy_mean_and_cov():
    rng = np.random.default_rng(17)
    n = 900
    sent = rng.integers(0, 2, n)
    mask = rng.uniform(size=n) < 0.8
    z = rng.standard_normal((n, 2)) + 1j * rng.standard_normal((n, 2))
    z[np.arange(n), sent] += 2.0
    for m in (None, mask):
        got = estimate.group_moments(z, sent, m)
        use = np.ones(n, bool) if m is None else m
        for j in (0, 1):
            p = np.abs(z[use & (sent == j)]) ** 2
            assert got.n[j] == len(p)
            np.testing.assert_allclose(got.mean[j], p.mean(axis=0), rtol=1e-13)          # numpy.mean
            np.testing.assert_allclose(got.cov[j], np.cov(p, rowvar=False), rtol=1e-12)  # reference: numpy.cov
    one = estimate.group_moments(z[:3], np.array([0, 0, 1]))
    np.testing.assert_allclose(one.mean[1], np.abs(z[2]) ** 2, rtol=1e-14)
    assert one.n[1] == 1 and np.all(one.cov[1] == 0)
