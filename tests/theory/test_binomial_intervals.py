"""Clopper-Pearson intervals and binomial bands against scipy.stats.

References: Clopper & Pearson 1934 -- exact binomial interval (from memory);
scipy.stats (binom, binomtest) as general-purpose reference implementations.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from analyzer import theory

CASES = [(0, 1), (1, 1), (0, 10), (3, 10), (10, 10), (1, 37), (0, 1000), (7, 1000),
         (999, 1000), (123, 12345), (1, 10**6), (50, 10**6), (0, 10**7), (10**5, 10**7)]


@pytest.mark.parametrize("level", [0.95, 0.99])
def test_clopper_pearson_against_binomtest(level):
    # Reference: scipy.stats.binomtest(k, n).proportion_ci(method='exact')
    # (Clopper & Pearson 1934, from memory).  Tolerance: rel 1e-7, abs 1e-12: binomtest
    # finds its limits by root finding, good only to ~6e-9 relative / ~2.3e-13 absolute at
    # n = 1e6 .. 1e7 (the closed-form test below checks the ends to rel 1e-12).
    for k, n in CASES:
        ref = stats.binomtest(k, n).proportion_ci(confidence_level=level, method="exact")
        lo, hi = theory.clopper_pearson(k, n, level)
        assert lo == pytest.approx(ref.low, rel=1e-7, abs=1e-12), (k, n)
        assert hi == pytest.approx(ref.high, rel=1e-7, abs=1e-12), (k, n)
    # Vectorised call must agree with the scalar references too.
    k = np.array([c[0] for c in CASES])
    n = np.array([c[1] for c in CASES])
    lo, hi = theory.clopper_pearson(k, n, level)
    ref_hi = [stats.binomtest(int(a), int(b)).proportion_ci(level, "exact").high for a, b in CASES]
    np.testing.assert_allclose(hi, ref_hi, rtol=1e-7, atol=1e-12)
    assert lo[0] == 0.0 and hi[1] == 1.0


@pytest.mark.parametrize("level", [0.95, 0.99])
@pytest.mark.parametrize("n", [1, 10, 1000, 10**6, 10**9])
def test_clopper_pearson_closed_form_ends(n, level):
    # Reference: closed forms of the exact interval (Clopper & Pearson 1934, from memory):
    # k = 0 -> hi = 1 - (alpha/2)^(1/n);  k = 1 -> lo = 1 - (1 - alpha/2)^(1/n);
    # k = n -> lo = (alpha/2)^(1/n).  Tolerance: rel 1e-12.
    half = (1.0 - level) / 2.0
    lo0, hi0 = theory.clopper_pearson(0, n, level)
    lo1, _ = theory.clopper_pearson(1, n, level)
    lon, hin = theory.clopper_pearson(n, n, level)
    assert hi0 == pytest.approx(-math.expm1(math.log(half) / n), rel=1e-12)
    assert lo1 == pytest.approx(-math.expm1(math.log1p(-half) / n), rel=1e-12)
    assert lon == pytest.approx(math.exp(math.log(half) / n), rel=1e-12)
    assert lo0 == 0.0 and hin == 1.0


@pytest.mark.parametrize("p,n", [(1e-2, 200_000), (1e-5, 10**6), (0.3, 50), (1e-3, 12345)])
def test_binomial_band_tails(p, n):
    # Reference: scipy.stats.binom.cdf / sf: each tail outside the band holds at most
    # (1 - level)/2 = 5e-4, and widening by one count on either side would not be needed
    # (the band is the tightest quantile band).  Tolerance: exact integer counts.
    lo, hi = theory.binomial_band(p, n, 0.999)
    assert stats.binom.cdf(lo - 1, n, p) <= 5e-4 < stats.binom.cdf(lo, n, p)
    assert stats.binom.sf(hi, n, p) <= 5e-4 < stats.binom.sf(hi - 1, n, p)
