"""The envelope law the model checks test against: the Rician CDF (Rayleigh without a tone).

``scipy.stats.rice.cdf`` (or ``scipy.special.chndtr``) evaluated at every
sample of a burst would cost far more than the rest of the diagnostics (one
noncentral chi-square evaluation per sample, thousands per burst); the CDF is
smooth, so it is evaluated exactly on a grid of its own and interpolated, to
within 1.2e-7 (far under the spread of the KS statistic it feeds).  scipy has
no routine that evaluates a distribution function on a sorted sample by
interpolation, so this one stays.
"""

from __future__ import annotations

import math

import numpy as np
from scipy import special

__all__ = ["envelope_cdf"]




#: Grid points per noise standard deviation on which a Rician CDF is evaluated
#: before cubic Hermite interpolation (CDF values and the Rician density as
#: slopes): the error is at most h^4/384 max|F^(4)| with h = sigma/16 and
#: |F^(4)| <= 3/sigma^4 (the Rayleigh density's third derivative at 0, the
#: largest over all Rice factors), i.e. below 1.2e-7 -- far under the KS
#: statistic's own spread.
_CDF_POINTS_PER_SIGMA = 16


def envelope_cdf(r: np.ndarray, nu: float, sigma: float) -> np.ndarray:
    """CDF of a Rician envelope (Rayleigh when ``nu = 0``) at ``r``.

    ``(R / sigma)^2`` is noncentral chi-square with two degrees of freedom and
    noncentrality ``(nu / sigma)^2``, evaluated with ``scipy.special.chndtr``
    on a grid of :data:`_CDF_POINTS_PER_SIGMA` points per ``sigma`` over the
    range of ``r`` and interpolated by cubic Hermite polynomials whose slopes
    are the Rician density ``(r / sigma^2) exp(-(r^2 + nu^2) / 2 sigma^2)
    I0(r nu / sigma^2)`` (the CDF is smooth; one exact evaluation per sample
    would cost far more).  The interpolation error is below 1.2e-7.  The
    Rayleigh case is the closed form ``1 - exp(-r^2 / 2 sigma^2)``.

    References
    ----------
    .. [1] ``scipy.stats.rice`` and ``scipy.stats.ncx2`` (the same law).
    """
    r = np.asarray(r, float)
    if nu <= 0:
        return -np.expm1(-0.5 * (r / sigma) ** 2)
    if r.size == 0:
        return np.zeros(0)
    lo, hi = float(r.min()), float(r.max())
    k = _cdf_grid_size(lo, hi, sigma)
    grid = np.linspace(lo, hi, k)
    a = nu / sigma
    u = grid / sigma
    cdf = special.chndtr(u * u, 2, a * a)
    h = (hi - lo) / (k - 1)
    if h <= 0:
        return np.full(r.shape, cdf[0])
    # slope times the step: h F'(r) = (h / sigma) u exp(-(u - a)^2 / 2) i0e(a u)
    hm = (h / sigma) * u * np.exp(-0.5 * (u - a) ** 2) * special.i0e(a * u)
    # Hermite form F0 + t m0 + t^2 (3d - 2m0 - m1) + t^3 (m0 + m1 - 2d), d = F1 - F0: the four
    # coefficients of every grid interval first (k - 1 of them), then one gather per sample
    m0, m1 = hm[:-1], hm[1:]
    d = cdf[1:] - cdf[:-1]
    coef = np.empty((4, k - 1))
    coef[0] = cdf[:-1]
    coef[1] = m0
    np.subtract(3.0 * d - 2.0 * m0, m1, out=coef[2])
    np.subtract(m0 + m1, 2.0 * d, out=coef[3])
    t = (r - lo) / h
    j = np.minimum(t.astype(np.intp), k - 2)
    t -= j
    c0, c1, c2, c3 = np.take(coef, j, axis=1)
    out = c0 + t * (c1 + t * (c2 + t * c3))
    return np.clip(out, 0.0, 1.0, out=out)


def _cdf_grid_size(lo: float, hi: float, sigma: float) -> int:
    """Grid points of :func:`envelope_cdf` over ``[lo, hi]``: ``_CDF_POINTS_PER_SIGMA`` per sigma, 3 to 2^14 + 1."""
    span = (hi - lo) / sigma * _CDF_POINTS_PER_SIGMA
    if math.isfinite(span):
        return min(max(math.ceil(span), 2), 1 << 14) + 1
    return int(np.clip(np.ceil(span), 2, 1 << 14)) + 1


def _envelope_cdfs(rs: list, nus: list, sigmas: list) -> list:
    """:func:`envelope_cdf` of several samples (the same values), the Rician ones in one pass.

    Each Rician sample keeps its own grid; the grids are laid end to end, so
    the CDF, slope and Hermite coefficients of all of them are formed by one
    call each, and every sample gathers the coefficients of its own intervals.
    """
    out = [None] * len(rs)
    batch = []
    for idx, (r, nu, sigma) in enumerate(zip(rs, nus, sigmas)):
        r = np.asarray(r, float)
        if nu <= 0 or r.size == 0:
            out[idx] = envelope_cdf(r, nu, sigma)
            continue
        lo, hi = float(r.min()), float(r.max())
        k = _cdf_grid_size(lo, hi, sigma)
        h = (hi - lo) / (k - 1)
        if h <= 0:
            out[idx] = envelope_cdf(r, nu, sigma)
            continue
        batch.append((idx, r, nu / sigma, float(sigma), lo, hi, k, h))
    if not batch:
        return out
    u = np.concatenate([np.linspace(lo, hi, k) / sigma for _, _, _, sigma, lo, hi, k, _ in batch])
    ks = np.array([b[6] for b in batch])
    a = np.repeat([b[2] for b in batch], ks)
    hs = np.repeat([b[7] / b[3] for b in batch], ks)
    cdf = special.chndtr(u * u, 2, a * a)
    hm = hs * u * np.exp(-0.5 * (u - a) ** 2) * special.i0e(a * u)     # h F'(r), as envelope_cdf
    m0, m1 = hm[:-1], hm[1:]
    d = cdf[1:] - cdf[:-1]                       # intervals across two grids are never gathered
    coef = np.empty((4, u.size - 1))
    coef[0] = cdf[:-1]
    coef[1] = m0
    np.subtract(3.0 * d - 2.0 * m0, m1, out=coef[2])
    np.subtract(m0 + m1, 2.0 * d, out=coef[3])
    sizes = [b[1].size for b in batch]
    r = np.concatenate([b[1] for b in batch])
    t = (r - np.repeat([b[4] for b in batch], sizes)) / np.repeat([b[7] for b in batch], sizes)
    j = np.minimum(t.astype(np.intp), np.repeat(ks - 2, sizes))
    t -= j
    j += np.repeat(np.cumsum(ks) - ks, sizes)    # each sample's intervals in the joined grid
    c0, c1, c2, c3 = np.take(coef, j, axis=1)
    val = c0 + t * (c1 + t * (c2 + t * c3))
    np.clip(val, 0.0, 1.0, out=val)
    for b, part in zip(batch, np.split(val, np.cumsum(sizes)[:-1])):
        out[b[0]] = part
    return out
