"""Binomial statistics of a bit count: the Clopper-Pearson interval and a two-sided band.

Pure functions on numpy arrays and integers; no I/O.
"""

from __future__ import annotations

import numpy as np
from scipy import special

__all__ = ["clopper_pearson", "binomial_band"]


def clopper_pearson(errors, bits, level: float = 0.95):
    """Exact (Clopper--Pearson) two-sided confidence interval for a BER.

    Parameters
    ----------
    errors : array_like of int
        Bit errors ``k`` (0 <= k <= n).
    bits : array_like of int
        Bits compared ``n`` (> 0).  Broadcast against ``errors``.
    level : float, optional
        Confidence level, default 0.95.

    Returns
    -------
    (lo, hi) : tuple of numpy.ndarray or numpy.float64
        ``lo = B^-1(alpha/2; k, n-k+1)`` (0 when ``k = 0``) and
        ``hi = B^-1(1-alpha/2; k+1, n-k)`` (1 when ``k = n``), with
        ``alpha = 1 - level`` and ``B^-1`` the inverse regularised incomplete
        beta function.

    References
    ----------
    .. [1] C. J. Clopper and E. S. Pearson, "The use of confidence or fiducial
       limits illustrated in the case of the binomial", *Biometrika*, 1934
       -- from memory.
    """
    if np.ndim(errors) == 0 and np.ndim(bits) == 0:
        # one count: the same interval without the array machinery
        k, n = float(errors), float(bits)
        if n <= 0 or k < 0 or k > n:
            raise ValueError("clopper_pearson: need 0 <= errors <= bits and bits > 0")
        if not (0.0 < level < 1.0):
            raise ValueError("clopper_pearson: level must be in (0, 1)")
        alpha = 1.0 - level
        lo = special.betaincinv(k, n - k + 1.0, alpha / 2.0) if k > 0 else 0.0
        hi = special.betaincinv(k + 1.0, n - k, 1.0 - alpha / 2.0) if k < n else 1.0
        return np.float64(lo), np.float64(hi)
    k, n = np.broadcast_arrays(np.asarray(errors, dtype=float), np.asarray(bits, dtype=float))
    if np.any(n <= 0) or np.any(k < 0) or np.any(k > n):
        raise ValueError("clopper_pearson: need 0 <= errors <= bits and bits > 0")
    if not (0.0 < level < 1.0):
        raise ValueError("clopper_pearson: level must be in (0, 1)")
    alpha = 1.0 - level
    k_lo = np.where(k > 0, k, 1.0)
    k_hi = np.where(k < n, k, n - 1.0)
    with np.errstate(invalid="ignore"):
        lo = np.where(k > 0, special.betaincinv(k_lo, n - k_lo + 1.0, alpha / 2.0), 0.0)
        hi = np.where(k < n, special.betaincinv(k_hi + 1.0, n - k_hi, 1.0 - alpha / 2.0), 1.0)
    return lo[()], hi[()]


def binomial_band(p, n, level: float = 0.999):
    """Central band of error counts for ``n`` bits at BER ``p``.

    Parameters
    ----------
    p : array_like of float
        Bit error probability, in [0, 1].
    n : array_like of int
        Number of bits.
    level : float, optional
        Probability content of the band, default 0.999.

    Returns
    -------
    (lo_count, hi_count) : tuple of numpy.ndarray of int or int
        Smallest ``lo`` with ``P(K <= lo) >= (1-level)/2`` and smallest ``hi``
        with ``P(K > hi) <= (1-level)/2`` for ``K ~ Binomial(n, p)``, so
        ``P(lo <= K <= hi) >= level``.

    References
    ----------
    .. [1] Binomial distribution quantiles; evaluated with ``scipy.stats.binom``.
    """
    if not (0.0 < level < 1.0):
        raise ValueError("binomial_band: level must be in (0, 1)")
    from scipy import stats             # imported where needed: a heavy module

    tail = (1.0 - level) / 2.0
    lo = stats.binom.ppf(tail, n, p)
    hi = stats.binom.isf(tail, n, p)
    return np.asarray(lo).astype(np.int64)[()], np.asarray(hi).astype(np.int64)[()]
