"""Receiver-model diagnostics: does each branch output look as theory says?

Under the model of DESIGN.md, on the branch pair of the tone *not* sent the I
and Q outputs are zero-mean Gaussian (plus a known leakage for correlated
tones), the four outputs are uncorrelated for orthogonal tones, the envelope
of the sent tone is Rician and that of the other Rayleigh, and Eb/N0 is the
same all along the burst.  Each check gives a statistic, a p-value and a plain
sentence saying what a failure usually means.  It also splits the
implementation loss into named parts.

All checks are general-purpose tests of ``scipy.stats`` (``normaltest``,
``kstest``, ``f_oneway``, normal-law z tests).  Their statistics are formed
here with numpy and referred to the same ``scipy.special`` / distribution tail
functions ``scipy.stats`` uses (for most KS distances, the Pelz-Good series
``scipy.stats.kstwo`` sums, summed here), which avoids the per-call overhead of
the ``scipy.stats`` wrappers; ``tests/test_kernels.py`` holds each one to the
``scipy.stats`` routine it reproduces.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy import special

__all__ = ["ModelCheck", "model_checks", "envelope_cdf", "ks_test", "normal_test", "f_test_oneway", "ebn0_trend",
           "output_correlations", "cross_branch_check", "PulseShape", "measured_pulse", "Leakage", "leakage",
           "NoiseCorrelation", "noise_correlation", "noise_window_outputs", "window_referenced", "idle_power_check"]

FLAG_LEVEL = 0.01   # a check is flagged when its p-value is below this


@dataclass(frozen=True)
class ModelCheck:
    """One check of the branch-output model.

    Attributes
    ----------
    name : str
        Short name.
    statistic : float
        Test statistic.
    p_value : float
        Probability of a statistic at least this extreme under the model.
    flagged : bool
        ``p_value < FLAG_LEVEL``.
    meaning : str
        What a failure usually means, in plain words.
    """

    name: str
    statistic: float
    p_value: float
    flagged: bool
    meaning: str


def _check(name, stat, p, meaning) -> ModelCheck:
    p = float(p)
    return ModelCheck(name, float(stat), p, bool(p < FLAG_LEVEL), meaning)


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


def _ks_statistics(cdf_values: list) -> list[float]:
    """:func:`_ks_statistic` of several samples at once (one sort of a padded array)."""
    sizes = [int(np.size(u)) for u in cdf_values]
    if not sizes or min(sizes) == 0:
        return [_ks_statistic(u) for u in cdf_values]
    m = max(sizes)
    buf = np.full((len(sizes), m), np.inf)           # padding sorts after every CDF value
    for row, u in zip(buf, cdf_values):
        row[:u.size] = u
    if np.isnan(buf).any():                          # NaN sorts after the padding: one by one
        return [_ks_statistic(u) for u in cdf_values]
    buf.sort(axis=1)
    nn = np.array(sizes, float)[:, None]
    steps = np.arange(m + 1) / nn                    # i / n for i = 0 ... m, per sample
    pad = np.arange(m)[None, :] >= nn
    up = steps[:, 1:] - buf
    down = buf - steps[:, :-1]
    up[pad] = -np.inf
    down[pad] = -np.inf
    return np.maximum(up.max(axis=1), down.max(axis=1)).tolist()


def _ks_statistic(cdf_values: np.ndarray) -> float:
    """Two-sided one-sample KS distance ``D`` from the model CDF at each sample."""
    u = np.sort(np.asarray(cdf_values, float))
    n = u.size
    steps = np.arange(n + 1) / n                   # i / n for i = 0 ... n
    return float(max(np.max(steps[1:] - u), np.max(u - steps[:-1])))


_PI_SQUARED = math.pi ** 2
_SQRT_2PI = math.sqrt(2.0 * math.pi)
_SQRT_3 = math.sqrt(3.0)


def _ks_cdf_pelz_good(n: int, x: float) -> float:
    """Pelz-Good approximation to ``P(D_n <= x)`` for one distance (the series ``scipy.stats.kstwo`` uses).

    ``P(D_n <= x) ~ K0(z) + K1(z)/sqrt(n) + K2(z)/n + K3(z)/n^1.5`` with
    ``z = x sqrt(n)`` (Li-Chien and Korolyuk), each ``K_i`` in the Jacobi
    theta form suited to small ``z`` and summed over odd and over all integers
    up to ``ceil(16 z / pi)``; the same terms as
    ``scipy.stats._ksstats._kolmogn_PelzGood``, on Python floats (a handful of
    distances per burst: numpy's per-call cost would dominate).

    References
    ----------
    .. [1] W. Pelz and I. J. Good, "Approximating the lower tail-areas of the
       Kolmogorov-Smirnov one-sample statistic", *J. R. Statist. Soc. B*,
       1976 -- from memory.
    .. [2] R. Simard and P. L'Ecuyer, "Computing the two-sided
       Kolmogorov-Smirnov distribution", *J. Stat. Software*, 2011 -- from
       memory (where the series is used).
    """
    z = math.sqrt(n) * x
    z2, z3, z4, z6 = z ** 2, z ** 3, z ** 4, z ** 6
    qlog = -_PI_SQUARED / 8 / z2
    if qlog < -708:
        return 0.0
    q = math.exp(qlog)
    pi4, pi6 = math.pi ** 4, math.pi ** 6
    k1a, k1b = -z2, _PI_SQUARED / 4
    k2a = 6 * z6 + 2 * z4
    k2b = (2 * z4 - 5 * z2) * _PI_SQUARED / 4
    k2c = pi4 * (1 - 2 * z2) / 16
    k3d = pi6 * (5 - 30 * z2) / 64
    k3c = pi4 * (-60 * z2 + 212 * z4) / 16
    k3b = _PI_SQUARED * (135 * z4 - 96 * z6) / 4
    k3a = -30 * z6 - 90 * z ** 8
    s0 = s1 = s2 = s3 = 0.0
    maxk = int(math.ceil(16 * z / math.pi))
    for k in range(maxk, 0, -1):          # Horner scheme in q^(8k) over the odd m = 2k - 1
        m2 = (2 * k - 1) ** 2
        m4, m6 = m2 * m2, m2 * m2 * m2    # exact integers
        qp = q ** (8 * k)
        s0 = s0 * qp + 1.0
        s1 = s1 * qp + (k1a + k1b * m2)
        s2 = s2 * qp + (k2a + k2b * m2 + k2c * m4)
        s3 = s3 * qp + (k3a + k3b * m2 + k3c * m4 + k3d * m6)
    s0, s1, s2, s3 = (v * q * _SQRT_2PI for v in (s0, s1, s2, s3))
    s0, s1, s2, s3 = s0 / z, s1 / (6 * z4), s2 / (72 * z ** 7), s3 / (6480 * z ** 10)
    # the terms over all integers k of K2 and K3
    q = math.exp(-_PI_SQUARED / 2 / z2)
    t2, t3 = [], []
    for k in range(maxk, 0, -1):
        kk = k * k
        qk = q ** kk
        t2.append(kk * qk)
        t3.append((_SQRT_3 * z + math.pi * k) * (_SQRT_3 * z - math.pi * k) * kk * qk)
    s2 += math.fsum(t2) * (_PI_SQUARED * _SQRT_2PI / (-36 * z3))
    s3 += math.fsum(t3) * (_PI_SQUARED * _SQRT_2PI / (216 * z6))
    return s0 + s1 / n ** 0.5 + s2 / n ** 1.0 + s3 / n ** 1.5


def _smirnov_sf(n: int, x: float) -> float:
    """One-sided exact tail ``P(D_n^+ >= x)`` for ``0 < x < 1`` (what ``scipy.special.smirnov`` gives).

    The Birnbaum-Tingey sum ``x sum_{j=0}^{floor(n (1 - x))} C(n, j)
    (1 - x - j/n)^(n - j) (x + j/n)^(j - 1)`` of positive terms, all at once
    in logarithms (``scipy.special.gammaln`` for the binomial coefficients)
    and summed relative to the largest; within 1e-11 relative (the
    logarithms of the binomial coefficients lose about 1e-16 of ln n!).

    References
    ----------
    .. [1] Z. W. Birnbaum and F. H. Tingey, "One-sided confidence contours for
       probability distribution functions", *Ann. Math. Statist.*, 1951 --
       from memory.
    """
    j = np.arange(int(math.floor(n * (1.0 - x))) + 1, dtype=float)
    with np.errstate(divide="ignore"):
        log_t = (special.gammaln(n + 1.0) - special.gammaln(j + 1.0) - special.gammaln(n - j + 1.0)
                 + (n - j) * np.log(np.maximum(1.0 - x - j / n, 0.0)) + (j - 1.0) * np.log(x + j / n))
    top = float(np.max(log_t))
    return x * math.exp(top) * float(np.sum(np.exp(log_t - top)))


def _ks_pvalues(d, n) -> np.ndarray:
    """Two-sided KS p-values of distances ``d`` for sample sizes ``n`` (arrays, one call per law).

    Up to 10 000 samples the exact law of ``scipy.stats.kstwo``; above,
    the asymptotic one (``scipy.stats.kstwobign``).  For ``140 < n`` and
    ``1 < n x < n - 1``, ``x < 0.5``, ``scipy.stats.kstwo`` evaluates the
    Pelz-Good series where ``n x^2 < 2.2`` and ``n x^1.5 > 1.4``, twice the
    one-sided tail where ``2.2 <= n x^2 < 370`` and 0 beyond; those are
    formed here (:func:`_ks_cdf_pelz_good`, :func:`_smirnov_sf`) without the
    distribution machinery around them (the one-sided tail of
    ``scipy.special.smirnov`` alone takes some milliseconds at ``n = 2000``).
    Every other distance goes to ``scipy.stats.kstwo.sf``.

    References
    ----------
    .. [1] ``scipy.stats.kstwo`` and ``scipy.stats.kstwobign``.
    """
    d = np.atleast_1d(np.asarray(d, float))
    n = np.atleast_1d(np.asarray(n, float))
    p = np.empty(d.shape)
    rest, big = [], []
    for i, (x, m) in enumerate(zip(d.tolist(), n.tolist())):     # a few distances, one by one
        if m > 10000:
            big.append(i)
            continue
        t = m * x
        if not (m > 140 and 1.0 < t < m - 1 and x < 0.5):
            rest.append(i)
        elif t * x < 2.2:
            if m * x ** 1.5 > 1.4:
                p[i] = 1.0 - _ks_cdf_pelz_good(int(m), x)
            else:
                rest.append(i)
        elif t * x < 370.0:
            p[i] = 2.0 * _smirnov_sf(int(m), x)
        else:
            p[i] = 0.0
    if rest or big:
        from scipy import stats         # imported where needed: a heavy module
    if rest:
        p[rest] = stats.kstwo.sf(d[rest], n[rest])
    if big:
        p[big] = stats.kstwobign.sf(d[big] * np.sqrt(n[big]))
    return np.clip(p, 0.0, 1.0)


def _ks_family_pvalues(d, n, factors, family) -> np.ndarray:
    """``min(1, factor_f * min_i p_i)`` for each family ``f`` of KS distances (one :func:`_ks_pvalues` call)."""
    p = _ks_pvalues(d, n)
    family = np.asarray(family, np.intp)
    return np.array([min(1.0, float(np.min(p[family == f])) * float(factor)) for f, factor in enumerate(factors)])


def ks_test(cdf_values: np.ndarray) -> tuple[float, float]:
    """One-sample Kolmogorov-Smirnov statistic and p-value from the model CDF at each sample.

    The same statistic and p-value as ``scipy.stats.ks_1samp`` (two-sided;
    exact distribution up to 10 000 samples, the asymptotic one above), from
    CDF values computed by the caller.

    References
    ----------
    .. [1] ``scipy.stats.ks_1samp`` and ``scipy.stats.kstwo`` /
       ``scipy.stats.kstwobign``.
    """
    u = np.asarray(cdf_values, float)
    d = _ks_statistic(u)
    return d, float(_ks_pvalues(d, u.size)[0])


def normal_test(x: np.ndarray) -> tuple[float, float]:
    """D'Agostino-Pearson omnibus normality test: ``K^2`` and its p-value.

    The same statistic and p-value as ``scipy.stats.normaltest`` (``nan`` for
    fewer than 8 samples or a constant sample), from the biased central
    moments ``m2, m3, m4``: the skewness ``b1 = m3 / m2^1.5`` and the kurtosis
    ``b2 = m4 / m2^2`` are each transformed to an approximately standard normal
    ``Z`` (D'Agostino's skewness transform; Anscombe and Glynn's kurtosis
    transform) and ``K^2 = Z_s^2 + Z_k^2`` is referred to chi-square with two
    degrees of freedom (``scipy.special.chdtrc``).

    References
    ----------
    .. [1] R. B. D'Agostino, A. J. Belanger and R. B. D'Agostino Jr., "A
       suggestion for using powerful and informative tests of normality",
       *The American Statistician*, 1990 -- from memory.
    .. [2] F. J. Anscombe and W. J. Glynn, "Distribution of the kurtosis
       statistic b2 for normal samples", *Biometrika*, 1983 -- from memory.
    .. [3] ``scipy.stats.normaltest``, ``scipy.stats.skewtest`` and
       ``scipy.stats.kurtosistest`` (the computation reproduced here).
    """
    x = np.asarray(x, float)
    n = float(x.size)
    if n < 8:
        return float("nan"), float("nan")
    mean = x.mean()
    d = x - mean
    d2 = d * d
    m2 = d2.mean()
    if not m2 > (np.finfo(float).eps * mean) ** 2:
        return float("nan"), float("nan")
    m3 = np.dot(d2, d) / n
    m4 = np.dot(d2, d2) / n
    # skewness
    y = m3 / m2 ** 1.5 * math.sqrt(((n + 1) * (n + 3)) / (6.0 * (n - 2)))
    beta2 = 3.0 * (n * n + 27 * n - 70) * (n + 1) * (n + 3) / ((n - 2.0) * (n + 5) * (n + 7) * (n + 9))
    w2 = -1.0 + math.sqrt(2.0 * (beta2 - 1.0))
    delta = 1.0 / math.sqrt(0.5 * math.log(w2))
    alpha = math.sqrt(2.0 / (w2 - 1.0))
    y = 1.0 if y == 0 else y
    z_s = delta * math.log(y / alpha + math.sqrt((y / alpha) ** 2 + 1.0))
    # kurtosis
    b2 = m4 / (m2 * m2)
    e = 3.0 * (n - 1) / (n + 1)
    var_b2 = 24.0 * n * (n - 2) * (n - 3) / ((n + 1) * (n + 1.0) * (n + 3) * (n + 5))
    xk = (b2 - e) / math.sqrt(var_b2)
    sqrt_beta1 = 6.0 * (n * n - 5 * n + 2) / ((n + 7) * (n + 9)) * math.sqrt(
        (6.0 * (n + 3) * (n + 5)) / (n * (n - 2) * (n - 3)))
    A = 6.0 + 8.0 / sqrt_beta1 * (2.0 / sqrt_beta1 + math.sqrt(1.0 + 4.0 / sqrt_beta1 ** 2))
    denom = 1.0 + xk * math.sqrt(2.0 / (A - 4.0))
    if denom == 0.0:
        return float("nan"), float("nan")
    term2 = math.copysign(((1.0 - 2.0 / A) / abs(denom)) ** (1.0 / 3.0), denom)
    z_k = (1.0 - 2.0 / (9.0 * A) - term2) / math.sqrt(2.0 / (9.0 * A))
    k2 = z_s * z_s + z_k * z_k
    return float(k2), float(special.chdtrc(2.0, k2))


def _pearson(x: np.ndarray, y: np.ndarray) -> float:
    """Pearson correlation coefficient of two real samples (as ``numpy.corrcoef``, clipped to [-1, 1])."""
    dx = x - x.mean()
    dy = y - y.mean()
    with np.errstate(invalid="ignore", divide="ignore"):
        r = np.dot(dx, dy) / math.sqrt(np.dot(dx, dx) * np.dot(dy, dy))
    return float(np.clip(r, -1.0, 1.0))


def _norm_sf(x: float) -> float:
    """Upper tail of the standard normal law (``scipy.stats.norm.sf`` is ``scipy.special.ndtr(-x)``)."""
    return float(special.ndtr(-x))


def model_checks(z: np.ndarray, sent: np.ndarray, gains: np.ndarray, noise_var: np.ndarray,
                 rho_abs: float, n_tests: int = 4) -> list[ModelCheck]:
    """Goodness-of-fit checks of the four correlator outputs.

    Parameters
    ----------
    z : numpy.ndarray
        (n, 2) complex outputs.
    sent : numpy.ndarray
        Tone index sent per symbol (known or decided).
    gains : numpy.ndarray
        (2,) fitted signal amplitudes g_i.
    noise_var : numpy.ndarray
        (2,) fitted variance of one real output per tone.
    rho_abs : float
        Tone correlation |rho| (the unsent branch then carries a leakage
        ``|rho| g``, so its envelope is tested against a Rician law).
    n_tests : int
        Number of checks reported together; each p-value is Bonferroni-corrected
        so the family is flagged on a clean capture at most ``FLAG_LEVEL`` of
        the time.

    Returns
    -------
    list of ModelCheck

    References
    ----------
    .. [1] Kolmogorov-Smirnov one-sample test, ``scipy.stats.kstest``
       (:func:`ks_test`).
    .. [2] D'Agostino-Pearson normality test, ``scipy.stats.normaltest``
       (:func:`normal_test`).
    .. [3] Fisher's z transform of a correlation coefficient (standard result,
       from memory); ``scipy.stats.norm`` tail.
    """
    zb = np.ascontiguousarray(np.asarray(z).T)          # (2, n): branch by branch
    sent = np.asarray(sent).astype(int)
    sig = np.sqrt(np.clip(np.asarray(noise_var, float), 1e-300, None))
    g = np.asarray(gains, float)
    is_tone = (sent == 0, sent == 1)
    n_tone = (int(np.count_nonzero(is_tone[0])), int(np.count_nonzero(is_tone[1])))
    checks = []
    # 1. noise branch Gaussianity (orthogonal tones: I and Q of the unsent branch, scaled)
    idle = (zb[0][~is_tone[0]], zb[1][~is_tone[1]])      # branch i on the symbols that did not send i
    n_noise = 2 * (idle[0].size + idle[1].size)
    if rho_abs < 0.05 and n_noise >= 20:
        noise = np.concatenate([idle[0].real / sig[0], idle[0].imag / sig[0],
                                idle[1].real / sig[1], idle[1].imag / sig[1]])
        k2, p = normal_test(noise)
        checks.append(_check("noise-branch Gaussianity", k2, min(1.0, p * n_tests),
                             "non-Gaussian noise on the idle branch: impulsive noise, an interferer near "
                             "a tone, or clipping"))
    # 2. envelopes against Rice (sent) and Rayleigh/Rice-with-leakage (not sent)
    r_on, nu_on, s_on, r_off, nu_off, s_off = [], [], [], [], [], []
    for i in (0, 1):
        j = 1 - i
        on = np.abs(zb[i][is_tone[i]])
        off = np.abs(idle[i])                              # the symbols that sent tone j
        if on.size >= 10 and g[i] > 0:
            r_on.append(on)
            nu_on.append(g[i])
            s_on.append(sig[i])
        if off.size >= 10:
            leak = rho_abs * g[j]
            r_off.append(off)
            nu_off.append(leak if leak > 1e-3 * sig[i] else 0.0)
            s_off.append(sig[i])
    u_all = _envelope_cdfs(r_on + r_off, nu_on + nu_off, s_on + s_off)
    u_on, u_off = u_all[:len(r_on)], u_all[len(r_on):]
    dist = _ks_statistics(u_all)                           # the KS distance of each sample
    d_on, d_off = dist[:len(u_on)], dist[len(u_on):]
    n_on, n_off = [u.size for u in u_on], [u.size for u in u_off]
    if d_on or d_off:
        # both families in one evaluation of the KS law
        p_on, p_off = _ks_family_pvalues(d_on + d_off, n_on + n_off, [2 * n_tests, 2 * n_tests],
                                         [0] * len(d_on) + [1] * len(d_off))
    if d_on:
        checks.append(_check("Rician fit, tone sent", max(d_on), p_on,
                             "the sent tone's envelope spreads more than Gaussian noise explains: "
                             "fading, amplitude or phase noise within the symbol, or timing jitter"))
    if d_off:
        checks.append(_check("Rayleigh fit, tone not sent", max(d_off), p_off,
                             "the idle branch holds more than noise: an interferer, leakage from "
                             "non-orthogonal tones, or intersymbol interference from timing error"))
    # 3. independence of the four outputs on the noise branches (orthogonal tones)
    if rho_abs < 0.05 and min(n_tone) >= 20:
        a, b = idle            # branch 0 on the symbols that sent tone 1, branch 1 on those that sent 0
        r_iq = [_pearson(a.real, a.imag), _pearson(b.real, b.imag)]
        n_min = min(a.size, b.size)
        zstat = max(abs(np.arctanh(r)) for r in r_iq) * np.sqrt(n_min - 3)
        p = min(1.0, 2 * _norm_sf(zstat) * 2 * n_tests)
        checks.append(_check("I/Q independence", zstat, p,
                             "I and Q of an idle branch are correlated: an I/Q imbalance in the "
                             "receiver or a narrowband interferer"))
    return checks


@dataclass(frozen=True)
class Trend:
    """Eb/N0 per block along a burst and the test of a constant level."""

    block_ebn0_db: np.ndarray
    slope_db_per_block: float
    p_value: float
    flagged: bool
    meaning: str


def f_test_oneway(values: np.ndarray, sizes: np.ndarray) -> tuple[float, float]:
    """One-way analysis of variance of consecutive groups: ``F`` and its p-value.

    Parameters
    ----------
    values : numpy.ndarray
        All observations, group after group.
    sizes : numpy.ndarray
        Number of observations of each group (each > 0), in order.

    Returns
    -------
    (float, float)
        ``F = (SS_between / (k - 1)) / (SS_within / (N - k))`` and
        ``P(F(k - 1, N - k) >= F)`` (``scipy.special.fdtrc``).  As in
        ``scipy.stats.f_oneway``: ``F = inf`` (p = 0) when every group is
        constant, ``nan`` when all observations are equal.

    Notes
    -----
    The group means are formed first and the within-group sum of squares from
    the deviations about them (two passes), so there is no cancellation.

    References
    ----------
    .. [1] ``scipy.stats.f_oneway`` (the same test; the computation reproduced
       here) and ``scipy.stats.f`` (its tail).
    """
    x = np.asarray(values, float)
    sizes = np.asarray(sizes, np.intp)
    k, n = sizes.size, x.size
    starts = np.concatenate([[0], np.cumsum(sizes)[:-1]])
    means = np.add.reduceat(x, starts) / sizes
    grand = x.mean()
    ss_between = float(np.dot(sizes, (means - grand) ** 2))
    dev = x - np.repeat(means, sizes)
    ss_within = float(np.dot(dev, dev))
    if np.all(np.maximum.reduceat(x, starts) == np.minimum.reduceat(x, starts)):
        f = float("nan") if np.all(x == x[0]) else float("inf")
    else:
        f = (ss_between / (k - 1)) / (ss_within / (n - k))
    return f, float(special.fdtrc(k - 1, n - k, f))


def ebn0_trend(z: np.ndarray, sent: np.ndarray, energy_scale: float, blocks: int = 8) -> Trend:
    """Eb/N0 in consecutive blocks and an F test that it is constant.

    The per-symbol signal energy ``|z_sent|^2 - |z_idle|^2`` is compared across
    blocks with a one-way analysis of variance (:func:`f_test_oneway`, the
    test of ``scipy.stats.f_oneway``); the slope is the least-squares line
    through the finite block values (as ``numpy.polyfit`` of degree 1).

    References
    ----------
    .. [1] ``scipy.stats.f_oneway`` (reproduced by :func:`f_test_oneway`).
    """
    z = np.asarray(z)
    sent = np.asarray(sent).astype(np.intp)
    n = len(z)
    blocks = int(max(1, min(blocks, n // 32)))
    if n == 0:
        return Trend(np.full(1, np.nan), 0.0, 1.0, False, _TREND_MEANING)
    power = (z.real ** 2 + z.imag ** 2).reshape(-1)       # (n, 2) row by row
    at = 2 * np.arange(n)
    p_on = np.take(power, at + sent)
    p_off = np.take(power, at + (1 - sent))
    edges = np.linspace(0, n, blocks + 1).astype(int)
    sizes = np.diff(edges)
    mean_on = np.add.reduceat(p_on, edges[:-1]) / sizes
    nv = np.add.reduceat(p_off, edges[:-1]) / sizes
    s = mean_on - nv
    ok = (s > 0) & (nv > 0)
    eb = np.full(blocks, np.nan)
    eb[ok] = 10 * np.log10(s[ok] / nv[ok] * energy_scale)
    if blocks >= 2:
        p = f_test_oneway(p_on - p_off, sizes)[1]
        fin = np.isfinite(eb)
        if fin.sum() >= 2:
            x = np.arange(blocks)[fin].astype(float)
            y = eb[fin]
            dx = x - x.mean()
            slope = float(np.dot(dx, y - y.mean()) / np.dot(dx, dx))
        else:
            slope = float("nan")
    else:
        p, slope = 1.0, 0.0
    return Trend(eb, slope, p, bool(p < FLAG_LEVEL), _TREND_MEANING)


_TREND_MEANING = ("the signal level changes along the burst: fading, a power ramp or AGC action, "
                  "or a transmitter that drifts")




# --------------------------------------------------------------------------- four-output correlations
OUTPUT_NAMES = ("I0", "Q0", "I1", "Q1")


def output_correlations(z: np.ndarray, sent: np.ndarray) -> np.ndarray:
    """Correlation matrices of the four real outputs, one per tone sent.

    Parameters
    ----------
    z : numpy.ndarray
        (n, 2) complex correlator outputs.
    sent : numpy.ndarray
        Tone index sent per symbol.

    Returns
    -------
    numpy.ndarray
        (2, 4, 4): ``[j]`` is the Pearson correlation matrix of
        ``(I0, Q0, I1, Q1)`` over the symbols that sent tone ``j`` (``nan`` with
        fewer than three such symbols).  Under the model with orthogonal tones
        and white noise every off-diagonal entry is zero.

    Notes
    -----
    Each matrix is ``C / sqrt(diag C) sqrt(diag C)^T`` with ``C`` the
    cross-product of the deviations from the group means, clipped to
    ``[-1, 1]``, as ``numpy.corrcoef`` computes it.

    References
    ----------
    .. [1] Pearson product-moment correlation, ``numpy.corrcoef``.
    """
    z = np.asarray(z)
    sent = np.asarray(sent).astype(int)
    iq = np.empty((4, len(z)))                           # rows I0, Q0, I1, Q1
    iq[0], iq[1], iq[2], iq[3] = z[:, 0].real, z[:, 0].imag, z[:, 1].real, z[:, 1].imag
    out = np.full((2, 4, 4), np.nan)
    for j in (0, 1):
        g = np.compress(sent == j, iq, axis=1)
        if g.shape[1] >= 3:
            g -= g.mean(axis=1, keepdims=True)
            c = g @ g.T
            sd = np.sqrt(np.diag(c))
            with np.errstate(invalid="ignore", divide="ignore"):
                c /= sd[:, None]
                c /= sd[None, :]
            out[j] = np.clip(c, -1.0, 1.0)
    return out


def cross_branch_check(z: np.ndarray, sent: np.ndarray, n_tests: int = 5,
                       correlations: np.ndarray | None = None) -> ModelCheck | None:
    """Test that the tone-0 outputs are uncorrelated with the tone-1 outputs.

    The eight cross entries (I0, Q0 against I1, Q1, in both groups) of
    :func:`output_correlations` are each asymptotically normal with variance
    ``1/n`` when the two pairs are independent, whatever their distributions.
    The largest ``|r| sqrt(n)`` is referred to the normal law with a
    Bonferroni factor of 8 (and ``n_tests`` for the family).  Only meaningful
    for orthogonal tones.  ``correlations``, if given, is
    ``output_correlations(z, sent)`` already computed by the caller.

    References
    ----------
    .. [1] Asymptotic variance of the sample correlation of independent
       variables, ``1/n`` (standard result, from memory); ``scipy.stats.norm``
       tail (``scipy.special.ndtr``).
    """
    sent = np.asarray(sent).astype(int)
    counts = (int(np.count_nonzero(sent == 0)), int(np.count_nonzero(sent == 1)))
    if min(counts) < 20:
        return None
    c = output_correlations(z, sent) if correlations is None else np.asarray(correlations)
    zs = []
    for j in (0, 1):
        if not np.all(np.isfinite(c[j])):
            return None
        zs.append(np.abs(c[j][:2, 2:]).max() * np.sqrt(counts[j]))
    stat = float(max(zs))
    p = min(1.0, 2 * _norm_sf(stat) * 8 * n_tests)
    return _check("tone 0 / tone 1 independence", stat, p,
                  "the two tones' outputs move together: tones not orthogonal (spacing or frequency "
                  "error), noise coloured by a filter, or interference spanning both tones")


# --------------------------------------------------------------------------- likelihood-ratio gain


# --------------------------------------------------------------------------- measured pulse
@dataclass(frozen=True)
class PulseShape:
    """Mean received pulse of each tone, with the tone and each symbol's phase removed.

    Attributes
    ----------
    pulse : numpy.ndarray
        (2, L) complex mean derotated pulse per tone (sample units).
    n_used : numpy.ndarray
        (2,) symbols averaged per tone.
    template_loss_db : numpy.ndarray
        (2,) ``-10 log10(|<m,w>|^2 / (||m||^2 ||w||^2))`` against the
        rectangular template (>= 0: dB the template fails to collect).
    template_loss_db_mean : float
        Loss of the two tones together (energies added).
    noise_per_sample : float
        Complex noise variance per sample left after removing each symbol's
        projection on its measured pulse (independent of the tone-correlation
        model).
    """

    pulse: np.ndarray
    n_used: np.ndarray
    template_loss_db: np.ndarray
    template_loss_db_mean: float
    noise_per_sample: float


#: Products of a symbol matrix with a few vectors are formed this many matrix
#: entries at a time (at most 2^17 multiply-adds with four vectors).  BLAS
#: libraries run products below about 2^18 multiply-adds on one thread; more
#: threads bring nothing to products this small but waiting when the cores are
#: busy (a batch runs one capture per core).
_PRODUCT_BLOCK_ENTRIES = 1 << 15


def _rows_times(m: np.ndarray, v: np.ndarray) -> np.ndarray:
    """``m @ v`` for a complex (n, L) matrix and a complex (L, c) one, in blocks of rows.

    Formed in real arithmetic: ``m`` seen as an (n, 2L) real matrix (real and
    imaginary parts side by side, no copy) times the (2L, 2c) real matrix of
    ``v`` whose product gives the real and imaginary parts of ``m @ v`` side
    by side.  The same multiply-adds as the complex product; real BLAS kernels
    run these thin products about twice as fast as the complex ones.
    """
    m = np.ascontiguousarray(m, dtype=np.complex128)
    n, L = m.shape
    c = v.shape[1]
    V = np.empty((L, 2, c, 2))
    V[:, 0, :, 0] = v.real           # Re(m v) = Re m Re v - Im m Im v
    V[:, 1, :, 0] = -v.imag
    V[:, 0, :, 1] = v.imag           # Im(m v) = Re m Im v + Im m Re v
    V[:, 1, :, 1] = v.real
    V = V.reshape(2 * L, 2 * c)
    mr = m.view(np.float64)
    step = max(1, _PRODUCT_BLOCK_ENTRIES // max(1, L))
    if n <= step:
        out = mr @ V
    else:
        out = np.concatenate([mr[a:a + step] @ V for a in range(0, n, step)])
    return out.view(np.complex128)


def _times_rows(w: np.ndarray, m: np.ndarray) -> np.ndarray:
    """``w @ m`` for a complex (c, n) matrix and a complex (n, L) one, in blocks of rows of ``m``.

    Formed in real arithmetic as :func:`_rows_times`: ``[Re w; Im w]`` (2c, n)
    times ``m`` seen as (n, 2L) real gives the four real sums, combined into
    ``Re = Re w Re m - Im w Im m`` and ``Im = Re w Im m + Im w Re m``.
    """
    m = np.ascontiguousarray(m, dtype=np.complex128)
    n, L = m.shape
    c = w.shape[0]
    W = np.concatenate([w.real, w.imag])
    mr = m.view(np.float64)
    step = max(1, _PRODUCT_BLOCK_ENTRIES // max(1, L))
    acc = W[:, :step] @ mr[:step]
    for a in range(step, n, step):
        acc += W[:, a:a + step] @ mr[a:a + step]
    out = np.empty((c, L), complex)
    out.real = acc[:c, 0::2] - acc[c:, 1::2]
    out.imag = acc[:c, 1::2] + acc[c:, 0::2]
    return out


def measured_pulse(rows: np.ndarray, sample_index: np.ndarray, sent: np.ndarray,
                   tones_hz, sample_rate_hz: float, noise_var_complex,
                   ) -> PulseShape:
    """Average the symbols of each tone into a measured pulse.

    Parameters
    ----------
    rows : numpy.ndarray
        (n, L) samples of every symbol.
    sample_index : numpy.ndarray
        (n, L) capture sample index of every entry of ``rows``, or (n,) the
        index of each row's first sample when every row holds ``L`` consecutive
        samples (as :func:`analyzer.branches.symbol_rows` gathers them); the
        short form skips the check that the rows are consecutive.
    sent : numpy.ndarray
        Tone sent per symbol (known or decided).
    tones_hz : (float, float)
        Tone frequencies of the templates.
    sample_rate_hz : float
    noise_var_complex : array_like
        (2,) fitted ``E|n_i|^2`` per unit-energy branch (= complex noise per
        sample for white noise); used to remove the noise bias of ``||m||^2``.

    Returns
    -------
    PulseShape

    Notes
    -----
    Symbol ``k`` of tone ``i`` is derotated as
    ``y_k = x_k exp(-j 2 pi f_i n / fs) exp(-j phi_k)``, so every symbol adds
    in phase.  ``phi_k`` is the phase of the tone over the odd samples for the
    even ones and over the even samples for the odd ones: a phase taken from
    the same samples (or a selection of symbols by their own envelope) would
    pull the noise into the template direction and make any pulse look
    rectangular.  The phase error only scales the mean, which the loss ignores.
    All symbols of the tone are used (decisions errors are rare where the
    check matters).  The noise left in the mean, ``L s^2 / K`` in both
    ``||m||^2`` and ``|sum m|^2``, is subtracted.  The loss follows from the
    Cauchy-Schwarz inequality.

    References
    ----------
    .. [1] J. G. Proakis and M. Salehi, *Digital Communications*, McGraw-Hill,
       matched filter and Cauchy-Schwarz inequality -- from memory.
    """
    rows = np.asarray(rows)
    if rows.dtype != np.complex128 or not rows.flags.c_contiguous:
        rows = np.ascontiguousarray(rows, dtype=np.complex128)
    sent = np.asarray(sent).astype(int)
    n, L = rows.shape
    f = np.asarray(tones_hz, float)
    nv = np.asarray(noise_var_complex, float)
    even = (np.arange(L) % 2 == 0)
    idx = np.asarray(sample_index)
    if idx.ndim == 1:
        first, contiguous = idx, True
    else:
        first = idx[:, 0] if L > 0 else np.zeros(n)
        contiguous = bool(idx.size and np.all(idx[:, 1:] - idx[:, :-1] == 1)) if L > 1 else True

    # Symbol k of tone i derotated is x_k = a_k * rows[k] * q_n with the per-symbol phasor
    # a_k = exp(-j 2 pi f_i n_k0 / fs) and the per-sample one q_n = exp(-j 2 pi f_i n / fs) (whole-
    # sample windows; otherwise rows are derotated entry by entry and a = q = 1).  Every sum over a
    # symbol's samples is then a product of the symbol matrix with a vector of length L, and every
    # sum over symbols one with a vector of length n, so no (n, L) derotated copy is formed:
    # * the phase of the even / odd samples, arg(a_k S_k) with S = rows @ (q on that parity);
    # * exp(-j arg(a_k S_k)) a_k = conj(S_k) / |S_k|: a_k cancels from the mean pulse;
    # * |x_k|^2 = |rows[k]|^2 and |<x_k, u>| = |rows[k] @ (q conj(u))| for the residual noise.
    if contiguous:
        q = np.exp(-2j * np.pi * np.outer(f / sample_rate_hz, np.arange(L)))        # (2, L)
        mats = (rows, rows)
    else:
        q = np.ones((2, L), complex)
        mats = tuple(rows * np.exp(-2j * np.pi * f[i] * idx / sample_rate_hz) for i in (0, 1))

    def right(v: np.ndarray) -> np.ndarray:
        """``mats[i] @ v[i]`` for both tones; ``v`` is (2, L, c), the result (n, 2, c)."""
        if contiguous:
            c = v.shape[2]
            return _rows_times(rows, v.transpose(1, 0, 2).reshape(L, 2 * c)).reshape(n, 2, c)
        return np.stack([_rows_times(mats[i], v[i]) for i in (0, 1)], axis=1)

    def left(w: np.ndarray) -> np.ndarray:
        """``w[i] @ mats[i]`` for both tones; ``w`` is (2, c, n), the result (2, c, L)."""
        if contiguous:
            return _times_rows(w.reshape(-1, n), rows).reshape(2, w.shape[1], L)
        return np.stack([_times_rows(w[i], mats[i]) for i in (0, 1)])

    mine = [sent == 0, sent == 1]
    counts = np.array([np.count_nonzero(m_) for m_ in mine])
    parity = np.stack([np.where(even, q, 0), np.where(even, 0, q)], axis=2)           # (2, L, 2)
    s_par = right(parity)                                                              # (n, 2, 2)
    # phase of each symbol from the samples of the other parity, so that the noise of a sample
    # never steers its own derotation (no bias towards the template); all symbols at once, each
    # with the sums of the tone it sent
    k = np.flatnonzero((mine[0] & (counts[0] >= 4)) | (mine[1] & (counts[1] >= 4)))
    tone = sent[k]
    w = np.conj(np.take(s_par.reshape(2 * n, 2), 2 * k + tone, axis=0))               # (m, 2)
    mag = np.abs(w)
    with np.errstate(invalid="ignore", divide="ignore"):
        w *= 1.0 / mag                           # conj(S) / |S| (numpy divides by |S| + 0j so)
    zero = mag == 0
    if np.any(zero):                             # arg(0) = 0: the symbol keeps its own phasor a_k
        kz = np.nonzero(zero)[0]
        w[zero] = np.exp(-2j * np.pi * np.mod(f[tone[kz]] / sample_rate_hz * first[k[kz]], 1.0)) \
            if contiguous else 1.0
    weights = np.zeros((2, 2, n), complex)
    flat = weights.reshape(-1)
    flat[tone * (2 * n) + k] = w[:, 1]           # even samples take the odd samples' phase, and back
    flat[tone * (2 * n) + n + k] = w[:, 0]
    sums = left(weights)                                                               # (2, 2, L)
    pulse = np.zeros((2, L), complex)
    used = np.zeros(2, int)
    loss = np.full(2, np.nan)
    coll = np.zeros(2)
    tot = np.zeros(2)
    for i in (0, 1):
        if counts[i] < 4:
            continue
        m = q[i] * np.where(even, sums[i, 0], sums[i, 1]) / counts[i]
        pulse[i] = m
        used[i] = counts[i]
        noise = L * max(float(nv[i]), 0.0) / counts[i]      # noise energy left in the mean (and in its sum)
        c = max(abs(m.sum()) ** 2 - noise, 0.0) / L
        e = max(float(np.sum(m.real ** 2 + m.imag ** 2)) - noise, c)
        coll[i], tot[i] = c, e
        loss[i] = max(0.0, -10 * np.log10(c / e)) if e > 0 and c > 0 else np.nan
    mean = max(0.0, -10 * np.log10(coll.sum() / tot.sum())) if tot.sum() > 0 and coll.sum() > 0 else float("nan")
    # noise per sample: each symbol minus its projection on its tone's measured pulse
    nm = np.sqrt(np.sum(pulse.real ** 2 + pulse.imag ** 2, axis=1))
    fit = nm > 0
    npsd = float("nan")
    if np.any(fit) and L > 1:
        u = np.where(fit[:, None], pulse, 0) / np.where(fit, nm, 1.0)[:, None]
        proj = right((q * np.conj(u))[:, :, None])[:, :, 0]                               # (n, 2)
        p2 = proj.real ** 2 + proj.imag ** 2
        if contiguous and np.all(fit) and counts.sum() == n:
            v = rows.reshape(-1).view(np.float64)
            energy_sum = float(np.dot(v, v))       # every symbol is fitted: one sum over all samples
        else:
            energy_sum = 0.0
            for i in np.flatnonzero(fit):
                v = mats[i].view(np.float64)
                energy_sum += float(np.sum(np.einsum("ij,ij->i", v, v), where=mine[i]))
        p2 = np.ascontiguousarray(p2.T)
        proj_sum = sum(float(np.sum(p2[i], where=mine[i])) for i in np.flatnonzero(fit))
        npsd = float((energy_sum - proj_sum) / counts[fit].sum() / (L - 1))
    return PulseShape(pulse, used, loss, float(mean), npsd)


# --------------------------------------------------------------------------- leakage
@dataclass(frozen=True)
class Leakage:
    """Signal measured on the branch of the tone not sent.

    Attributes
    ----------
    ratio : numpy.ndarray
        (2,) amplitude ratio of the leakage to the sent branch: ``[0]`` on the
        tone-1 branch when tone 0 is sent, ``[1]`` on the tone-0 branch when
        tone 1 is sent; compare with ``|rho|``.
    ratio_mean : float
        Energy-weighted mean of the two.
    noise_per_sample : float
        The noise level used (complex variance per sample).
    """

    ratio: np.ndarray
    ratio_mean: float
    noise_per_sample: float


def leakage(moments, noise_per_sample: float) -> Leakage:
    """Leakage amplitude ratio from the grouped branch powers and an independent noise level.

    With ``S_j`` the mean ``|z_j|^2`` when tone j is sent and ``U_i`` the mean
    ``|z_i|^2`` on the other branch (see :mod:`analyzer.estimate`), and ``s^2``
    the noise per unit-energy branch (white noise: the complex noise variance
    per sample), the leakage ratio is ``sqrt((U_i - s^2) / (S_j - s^2))``
    (0 when the idle power does not exceed the noise).

    References
    ----------
    .. [1] Mean of a noncentral chi-square variable (``scipy.stats.ncx2``).
    """
    m = moments.mean
    s2 = float(noise_per_sample)
    out = np.full(2, np.nan)
    num = np.zeros(2)
    den = np.zeros(2)
    for j in (0, 1):
        i = 1 - j
        sig = m[j, j] - s2
        if moments.n[j] > 0 and sig > 0:
            num[j] = max(m[j, i] - s2, 0.0)
            den[j] = sig
            out[j] = np.sqrt(num[j] / sig)
    mean = float(np.sqrt(num.sum() / den.sum())) if den.sum() > 0 else float("nan")
    return Leakage(out, mean, s2)


# --------------------------------------------------------------------------- noise correlation
@dataclass(frozen=True)
class NoiseCorrelation:
    """Complex correlation of the two branches' outputs on noise alone.

    Attributes
    ----------
    value : complex
        ``sum z0 conj(z1) / sqrt(sum |z0|^2 sum |z1|^2)`` over noise-only windows.
    n_windows : int
    ci95_abs : float
        Approximate 95% half-width of ``|value|`` (``1.96 (1 - |r|^2) / sqrt(n)``).
    template_correlation : complex
        ``<w1, w0>``: what white noise gives.
    p_value : float
        Test that ``value`` equals the template correlation (complex normal
        approximation, variance ``(1 - |rho|^2)^2 / n``).
    """

    value: complex
    n_windows: int
    ci95_abs: float
    template_correlation: complex
    p_value: float


def noise_correlation(z_idle: np.ndarray, rho: complex) -> NoiseCorrelation | None:
    """Noise correlation between the two branches from noise-only windows.

    Parameters
    ----------
    z_idle : numpy.ndarray
        (n, 2) outputs of both correlators on windows that hold noise only.
    rho : complex
        Template correlation ``<w1, w0>`` (:func:`analyzer.branches.template_correlation`).

    Returns
    -------
    NoiseCorrelation or None
        None with fewer than 8 windows.

    Notes
    -----
    For white noise of variance ``s^2`` per sample, ``E[z0 conj(z1)] =
    s^2 <w1, w0>``, so the coefficient equals the template correlation; a
    receiver filter that colours the noise changes it.  For circular complex
    Gaussian pairs the sample coefficient has variance ``(1 - |rho|^2)^2 / n``
    (about half in each of its real and imaginary parts).

    References
    ----------
    .. [1] N. R. Goodman, "Statistical analysis based on a certain multivariate
       complex Gaussian distribution", *Ann. Math. Statist.*, 1963 -- from memory.
    """
    z = np.asarray(z_idle)
    n = len(z)
    if n < 8:
        return None
    a, b = z[:, 0], z[:, 1]
    den = np.sqrt(np.vdot(a, a).real * np.vdot(b, b).real)
    r = complex(np.vdot(b, a) / den) if den > 0 else complex("nan")
    rho = complex(rho)
    sd = (1 - min(abs(rho) ** 2, 1.0)) / np.sqrt(n)
    d = abs(r - rho) / max(sd, 1e-12)
    # |r - rho|^2 / (sd^2 / 2) is chi-square with 2 degrees of freedom under the null
    p = float(special.chdtrc(2, 2 * d * d)) if np.isfinite(d) else float("nan")   # scipy.stats.chi2(2).sf
    return NoiseCorrelation(r, n, float(1.96 * (1 - min(abs(r) ** 2, 1.0)) / np.sqrt(n)), rho, p)


def window_referenced(out, sample_rate_hz: float) -> np.ndarray:
    """Correlator outputs with each template referred to its window's first sample.

    :func:`analyzer.branches.correlate` refers the templates to absolute
    sample time, so ``z0 conj(z1)`` turns by ``2 pi (f1 - f0) n0 / fs`` from
    window to window; referred to the window start, white noise gives
    ``E[z0 conj(z1)] = s^2 <w1, w0>`` in every window.
    """
    n0 = out.grid.first_samples.astype(float)
    f = np.asarray(out.tones_hz, float)
    return out.z * np.exp(2j * np.pi * np.outer(n0, f) / sample_rate_hz)


def noise_window_outputs(x: np.ndarray, x_start: int, grid, tones_hz, sample_rate_hz: float,
                         guard_symbols: float = 2.0) -> np.ndarray:
    """Both correlator outputs on the whole windows of ``x`` that lie outside the burst.

    Windows of the burst's length ``L`` are laid back to back before the first
    symbol and after the last one, leaving ``guard_symbols`` symbols free at
    each edge (ramps, timing), and correlated with the burst's templates.

    Returns
    -------
    numpy.ndarray
        (n, 2) complex outputs (n may be 0), each template referred to its
        window's first sample ``n0``: ``z_i = sum_m x[n0 + m] exp(-j 2 pi f_i
        m / fs) / sqrt(L)``, as :func:`window_referenced` gives them from
        :func:`analyzer.branches.correlate`.

    Notes
    -----
    The windows are consecutive blocks of ``x``, so they are a reshape of it
    and the outputs one product with the two templates of the window start;
    the absolute-time phase the correlator applies and
    :func:`window_referenced` takes off again is never formed (that round
    trip only adds rounding, about 1e-16 per cycle of ``f n0 / fs``).
    """
    L = grid.window
    sps = grid.samples_per_symbol
    f = np.asarray(tones_hz, float)
    parts = []
    before_end = int(np.floor(grid.first_start - guard_symbols * sps)) - x_start
    n_before = max(before_end, 0) // L
    if n_before > 0:
        parts.append(x[before_end - n_before * L:before_end].reshape(n_before, L))
    after_start = int(np.ceil(grid.stop + guard_symbols * sps)) - x_start
    n_after = max(len(x) - after_start, 0) // L
    if n_after > 0:
        if after_start < 0:
            raise ValueError("symbol grid runs outside the samples given")
        parts.append(x[after_start:after_start + n_after * L].reshape(n_after, L))
    if not parts:
        return np.zeros((0, 2), complex)
    rows = parts[0] if len(parts) == 1 else np.concatenate(parts)
    # the conjugate templates of a window starting at sample 0, as branches.correlate forms them
    base = np.exp(-2j * np.pi * np.outer(np.arange(L), f) / sample_rate_hz) / np.sqrt(L)
    return np.asarray(rows, complex) @ base


def idle_power_check(moments, noise_var_complex, noise_per_sample: float, rho_abs: float,
                     n_tests: int = 6) -> ModelCheck | None:
    """Test that the idle-branch power is noise plus the template leakage only.

    The moment fit (:mod:`analyzer.estimate`) reads the noise of branch i off
    the idle power ``U_i = |rho|^2 g_j^2 + s_i^2``; ``noise_per_sample``
    (:func:`measured_pulse`) measures it without that model.  Under the model
    the two agree; ``U_i`` is a mean of ``n_i`` powers with relative standard
    deviation about ``1/sqrt(n_i)`` (exponential law), the independent level
    is far more precise, so ``(s_fit / s_ind - 1) sqrt(n)`` is referred to the
    normal law (two branches, Bonferroni).

    References
    ----------
    .. [1] Exponential law of the power of circular complex Gaussian noise
       (chi-square with two degrees of freedom) -- from memory; ``scipy.stats.norm``
       tail (``scipy.special.ndtr``).
    """
    s_ind = float(noise_per_sample)
    nv = np.asarray(noise_var_complex, float)
    if not (np.isfinite(s_ind) and s_ind > 0) or np.any(moments.n < 20):
        return None
    zs = []
    for i in (0, 1):
        n_idle = moments.n[1 - i]
        # relative sd of U_i; the leakage part r g^2 adds a little spread, ignored (conservative for r -> 0)
        zs.append(abs(nv[i] / s_ind - 1.0) * np.sqrt(n_idle) * s_ind / max(moments.mean[1 - i, i], 1e-300))
    stat = float(max(zs))
    p = min(1.0, 2 * _norm_sf(stat) * 2 * n_tests)
    return _check("idle-branch power", stat, p,
                  "the idle branch holds more than noise and the expected tone leakage: the pulse is "
                  "not rectangular (shaping, filtering), timing or frequency error, or an interferer; "
                  "the fitted noise and Eb/N0 are then biased")
