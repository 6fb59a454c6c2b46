"""analyzer.theory.marcum_q1 against scipy.stats.ncx2 and direct quadrature.

References: Marcum 1950 / Simon & Alouini -- the Marcum Q definition (from memory);
scipy.stats.ncx2 and scipy.integrate.quad as general-purpose reference implementations.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import integrate, special, stats

from analyzer import theory


def test_marcum_q1_against_ncx2_grid():
    # Reference: Q1(a, b) = P(chi'^2_2(a^2) > b^2) = scipy.stats.ncx2.sf(b^2, 2, a^2)
    # (Marcum 1950 definition, from memory).  Tolerance: rel 1e-8.
    # scipy's ncx2 tail itself loses accuracy below ~1e-250 (checked against quadrature
    # of the defining integral), so the grid comparison uses reference values >= 1e-250;
    # the deeper tail is checked against quadrature below.
    g = np.concatenate([np.linspace(0.0, 40.0, 81), [0.01, 7.3, 19.999, 20.001, 39.99]])
    a, b = np.meshgrid(g, g)
    q = theory.marcum_q1(a, b)
    ref = stats.ncx2.sf(b**2, 2, a**2)
    use = ref >= 1e-250
    assert use.sum() > 4000
    np.testing.assert_allclose(q[use], ref[use], rtol=1e-8, atol=0)


def test_marcum_q1_near_diagonal_against_ncx2():
    # Reference: scipy.stats.ncx2.sf(b^2, 2, a^2) along a ~ b, the hardest region for
    # the series.  Tolerance: rel 1e-8.
    d = np.linspace(0.0, 40.0, 201)
    for off in (0.0, 1e-7, 1e-3, 0.3):
        np.testing.assert_allclose(theory.marcum_q1(d, d + off),
                                   stats.ncx2.sf((d + off) ** 2, 2, d**2), rtol=1e-8)
        np.testing.assert_allclose(theory.marcum_q1(d + off, d),
                                   stats.ncx2.sf(d**2, 2, (d + off) ** 2), rtol=1e-8)


@pytest.mark.parametrize("a,b", [(2.0, 39.0), (3.5, 39.5), (5.0, 40.0), (1.5, 38.5)])
def test_marcum_q1_deep_tail_against_quadrature(a, b):
    # Reference: the defining integral Q1(a,b) = int_b^inf x exp(-(x^2+a^2)/2) I0(ax) dx
    # (Marcum 1950, from memory), by scipy.integrate.quad with the factor exp(-(b-a)^2/2)
    # taken out so the integrand is O(1).  Values are ~1e-300 .. 1e-268.  Tolerance: rel 1e-8.
    c = 0.5 * (b - a) ** 2
    val, _ = integrate.quad(lambda x: x * np.exp(-0.5 * (x - a) ** 2 + c) * special.ive(0, a * x),
                            b, np.inf, epsabs=0.0, epsrel=1e-12, limit=200)
    ref = val * math.exp(-c)
    assert ref > 1e-300
    assert theory.marcum_q1(a, b) == pytest.approx(ref, rel=1e-8, abs=0.0)


def test_marcum_q1_edges():
    # Reference: Q1(0, b) = exp(-b^2/2) and Q1(a, 0) = 1 (Simon & Alouini, from memory).
    b = np.linspace(0.0, 38.0, 77)
    np.testing.assert_allclose(theory.marcum_q1(0.0, b), np.exp(-0.5 * b**2), rtol=1e-12, atol=0)
    np.testing.assert_allclose(theory.marcum_q1(b, 0.0), np.ones_like(b), rtol=0, atol=1e-15)
