"""Model checks of the four correlator outputs: does each look as the receiver model says?

Under the model of the design notes, on the branch pair of the tone *not*
sent the I and Q outputs are zero-mean Gaussian (plus a known leakage for
correlated tones), the four outputs are uncorrelated for orthogonal tones,
the envelope of the sent tone is Rician and that of the other Rayleigh, and
Eb/N0 is the same all along the burst.  Each check gives a statistic, a
p-value and a plain sentence saying what a failure usually means.

The tests are those of ``scipy.stats`` (``normaltest``, the Kolmogorov-Smirnov
law ``kstwo`` of ``kstest``, ``f_oneway``) and normal-law z tests, called on
the whole families at once where they vectorise.
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass

import numpy as np
from scipy import special

from ._envelope import _envelope_cdfs

__all__ = ["FLAG_LEVEL", "ModelCheck", "model_checks", "output_correlations", "cross_branch_check",
           "Trend", "ebn0_trend"]

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


#: Largest sample whose KS p-value is taken from the law of ``scipy.stats.kstwo`` (what
#: ``scipy.stats.kstest`` uses); larger samples take the asymptotic law ``scipy.stats.kstwobign``,
#: within 1% of it there: ``kstwo.sf`` costs about 9 ms for one distance at 12 000 samples and
#: 25 ms at 30 000 (scipy 1.17, one core), ``kstwobign.sf`` 0.05 ms.
_KS_EXACT_MAX = 10000


def _ks_pvalues(d, n) -> np.ndarray:
    """Two-sided KS p-values of distances ``d`` for sample sizes ``n`` (arrays, one scipy call per law).

    ``scipy.stats.kstwo.sf(d, n)`` up to :data:`_KS_EXACT_MAX` samples,
    ``scipy.stats.kstwobign.sf(d sqrt(n))`` above, each on all its distances
    at once.

    References
    ----------
    .. [1] ``scipy.stats.kstwo`` and ``scipy.stats.kstwobign``.
    """
    from scipy import stats             # imported where needed: a heavy module

    d = np.atleast_1d(np.asarray(d, float))
    n = np.atleast_1d(np.asarray(n, float))
    p = np.empty(d.shape)
    exact = n <= _KS_EXACT_MAX
    if np.any(exact):
        p[exact] = stats.kstwo.sf(d[exact], n[exact])
    if not np.all(exact):
        p[~exact] = stats.kstwobign.sf(d[~exact] * np.sqrt(n[~exact]))
    return np.clip(p, 0.0, 1.0)

def _ks_family_pvalues(d, n, factors, family) -> np.ndarray:
    """``min(1, factor_f * min_i p_i)`` for each family ``f`` of KS distances (one :func:`_ks_pvalues` call)."""
    p = _ks_pvalues(d, n)
    family = np.asarray(family, np.intp)
    return np.array([min(1.0, float(np.min(p[family == f])) * float(factor)) for f, factor in enumerate(factors)])


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
    .. [1] Kolmogorov-Smirnov one-sample test, ``scipy.stats.kstest`` (the law
       ``scipy.stats.kstwo``).
    .. [2] D'Agostino-Pearson normality test, ``scipy.stats.normaltest``.
    .. [3] Fisher's z transform of a correlation coefficient (standard result,
       from memory); ``scipy.stats.norm`` tail.
    """
    zb = np.ascontiguousarray(np.asarray(z).T)          # (2, n): branch by branch
    sent = np.asarray(sent).astype(int)
    sig = np.sqrt(np.clip(np.asarray(noise_var, float), 1e-300, None))
    g = np.asarray(gains, float)
    is_tone = (sent == 0, sent == 1)
    idle = (zb[0][~is_tone[0]], zb[1][~is_tone[1]])      # branch i on the symbols that did not send i
    checks = []
    # 1. noise branch Gaussianity (orthogonal tones: I and Q of the unsent branch, scaled)
    if rho_abs < 0.05 and 2 * (idle[0].size + idle[1].size) >= 20:
        checks.append(_gaussianity_check(idle, sig, n_tests))
    # 2. envelopes against Rice (sent) and Rayleigh/Rice-with-leakage (not sent)
    checks += _envelope_checks([np.abs(zb[i][is_tone[i]]) for i in (0, 1)], [np.abs(v) for v in idle],
                               g, sig, rho_abs, n_tests)
    # 3. independence of the four outputs on the noise branches (orthogonal tones)
    if rho_abs < 0.05 and min(np.count_nonzero(is_tone[0]), np.count_nonzero(is_tone[1])) >= 20:
        checks.append(_iq_check(idle, n_tests))
    return checks


def _gaussianity_check(idle, sig, n_tests: int) -> ModelCheck:
    """D'Agostino-Pearson test (``scipy.stats.normaltest``) of the idle branches' I and Q, each over its sigma."""
    noise = np.concatenate([idle[0].real / sig[0], idle[0].imag / sig[0],
                            idle[1].real / sig[1], idle[1].imag / sig[1]])
    k2, p = _normal_test(noise)
    return _check("noise-branch Gaussianity", k2, min(1.0, p * n_tests),
                  "non-Gaussian noise on the idle branch: impulsive noise, an interferer near "
                  "a tone, or clipping")


def _normal_test(x: np.ndarray) -> tuple[float, float]:
    """``scipy.stats.normaltest(x)``: ``K^2`` and its p-value; ``nan`` for fewer than 8 samples or a constant one.

    A sample whose variance is below the rounding of its mean is taken as
    constant (scipy warns there and, before 1.12, refuses fewer than 8 samples).

    References
    ----------
    .. [1] R. B. D'Agostino, A. J. Belanger and R. B. D'Agostino Jr., "A
       suggestion for using powerful and informative tests of normality",
       *The American Statistician*, 1990 -- from memory; ``scipy.stats.normaltest``.
    """
    from scipy import stats             # imported where needed: a heavy module

    x = np.asarray(x, float)
    if x.size < 8 or not float(np.var(x)) > (np.finfo(float).eps * float(np.mean(x))) ** 2:
        return float("nan"), float("nan")
    res = stats.normaltest(x)
    return float(res.statistic), float(res.pvalue)


def _envelope_checks(on: list, off: list, g, sig, rho_abs: float, n_tests: int) -> list[ModelCheck]:
    """KS tests of the sent envelopes against Rice and of the idle ones against Rayleigh (Rice with leakage).

    ``on[i]`` holds branch i's envelopes on the symbols that sent tone i,
    ``off[i]`` those on the symbols that sent the other tone.  Each family's
    p-value is the smallest of its branches' times ``2 n_tests`` (Bonferroni).
    """
    r_on, nu_on, s_on, r_off, nu_off, s_off = [], [], [], [], [], []
    for i in (0, 1):
        if on[i].size >= 10 and g[i] > 0:
            r_on.append(on[i])
            nu_on.append(g[i])
            s_on.append(sig[i])
        if off[i].size >= 10:
            leak = rho_abs * g[1 - i]
            r_off.append(off[i])
            nu_off.append(leak if leak > 1e-3 * sig[i] else 0.0)
            s_off.append(sig[i])
    u_all = _envelope_cdfs(r_on + r_off, nu_on + nu_off, s_on + s_off)
    dist = _ks_statistics(u_all)                           # the KS distance of each sample
    d_on, d_off = dist[:len(r_on)], dist[len(r_on):]
    checks = []
    if not (d_on or d_off):
        return checks
    # both families in one evaluation of the KS law
    p_on, p_off = _ks_family_pvalues(d_on + d_off, [u.size for u in u_all], [2 * n_tests, 2 * n_tests],
                                     [0] * len(d_on) + [1] * len(d_off))
    if d_on:
        checks.append(_check("Rician fit, tone sent", max(d_on), p_on,
                             "the sent tone's envelope spreads more than Gaussian noise explains: "
                             "fading, amplitude or phase noise within the symbol, or timing jitter"))
    if d_off:
        checks.append(_check("Rayleigh fit, tone not sent", max(d_off), p_off,
                             "the idle branch holds more than noise: an interferer, leakage from "
                             "non-orthogonal tones, or intersymbol interference from timing error"))
    return checks


def _iq_check(idle, n_tests: int) -> ModelCheck:
    """Fisher-z test that I and Q of each idle branch are uncorrelated (the larger of the two, Bonferroni)."""
    a, b = idle            # branch 0 on the symbols that sent tone 1, branch 1 on those that sent 0
    r_iq = [_pearson(a.real, a.imag), _pearson(b.real, b.imag)]
    n_min = min(a.size, b.size)
    zstat = max(abs(np.arctanh(r)) for r in r_iq) * np.sqrt(n_min - 3)
    p = min(1.0, 2 * _norm_sf(zstat) * 2 * n_tests)
    return _check("I/Q independence", zstat, p,
                  "I and Q of an idle branch are correlated: an I/Q imbalance in the "
                  "receiver or a narrowband interferer")


@dataclass(frozen=True)
class Trend:
    """Eb/N0 per block along a burst and the test of a constant level."""

    block_ebn0_db: np.ndarray
    slope_db_per_block: float
    p_value: float
    flagged: bool
    meaning: str


def ebn0_trend(z: np.ndarray, sent: np.ndarray, energy_scale: float, blocks: int = 8) -> Trend:
    """Eb/N0 in consecutive blocks and an F test that it is constant.

    The per-symbol signal energy ``|z_sent|^2 - |z_idle|^2`` is compared across
    blocks with a one-way analysis of variance (``scipy.stats.f_oneway``); the slope is the least-squares line
    through the finite block values (as ``numpy.polyfit`` of degree 1).

    References
    ----------
    .. [1] ``scipy.stats.f_oneway``.
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
        p = _f_oneway_pvalue(np.split(p_on - p_off, edges[1:-1]))
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


def _f_oneway_pvalue(groups: list) -> float:
    """p-value of ``scipy.stats.f_oneway(*groups)``: 0 when every group is constant, ``nan`` when all are equal.

    Those two cases draw scipy's warning for constant input, which is not for the terminal.
    """
    from scipy import stats             # imported where needed: a heavy module

    with warnings.catch_warnings(), np.errstate(divide="ignore", invalid="ignore"):
        warnings.simplefilter("ignore", RuntimeWarning)
        return float(stats.f_oneway(*groups).pvalue)


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
