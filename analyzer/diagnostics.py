"""Receiver-model diagnostics: does each branch output look as theory says?

Under the model of DESIGN.md, on the branch pair of the tone *not* sent the I
and Q outputs are zero-mean Gaussian (plus a known leakage for correlated
tones), the four outputs are uncorrelated for orthogonal tones, the envelope
of the sent tone is Rician and that of the other Rayleigh, and Eb/N0 is the
same all along the burst.  Each check gives a statistic, a p-value and a plain
sentence saying what a failure usually means.  It also splits the
implementation loss into named parts.

All checks use general-purpose tests from ``scipy.stats``.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import stats

from . import theory

__all__ = ["ModelCheck", "model_checks", "ebn0_trend", "blind_ber", "LossParts", "loss_parts"]

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
    .. [1] Kolmogorov-Smirnov one-sample test, ``scipy.stats.kstest``.
    .. [2] D'Agostino-Pearson normality test, ``scipy.stats.normaltest``.
    """
    z = np.asarray(z)
    sent = np.asarray(sent).astype(int)
    sig = np.sqrt(np.clip(np.asarray(noise_var, float), 1e-300, None))
    g = np.asarray(gains, float)
    checks = []
    # 1. noise branch Gaussianity (orthogonal tones: I and Q of the unsent branch, scaled)
    parts = []
    for i in (0, 1):
        off = z[sent != i, i] / sig[i]
        parts.append(np.concatenate([off.real, off.imag]))
    noise = np.concatenate(parts)
    if rho_abs < 0.05 and noise.size >= 20:
        k2, p = stats.normaltest(noise)
        checks.append(_check("noise-branch Gaussianity", k2, min(1.0, p * n_tests),
                             "non-Gaussian noise on the idle branch: impulsive noise, an interferer near "
                             "a tone, or clipping"))
    # 2. envelopes against Rice (sent) and Rayleigh/Rice-with-leakage (not sent)
    env = np.abs(z)
    ks_on, p_on, ks_off, p_off = [], [], [], []
    for i in (0, 1):
        j = 1 - i
        on = env[sent == i, i]
        off = env[sent == j, i]
        if on.size >= 10 and g[i] > 0:
            r = stats.kstest(on, stats.rice(g[i] / sig[i], scale=sig[i]).cdf)
            ks_on.append(r.statistic)
            p_on.append(r.pvalue)
        if off.size >= 10:
            leak = rho_abs * g[j]
            law = stats.rice(leak / sig[i], scale=sig[i]) if leak > 1e-3 * sig[i] else stats.rayleigh(scale=sig[i])
            r = stats.kstest(off, law.cdf)
            ks_off.append(r.statistic)
            p_off.append(r.pvalue)
    if p_on:
        checks.append(_check("Rician fit, tone sent", max(ks_on), min(1.0, min(p_on) * 2 * n_tests),
                             "the sent tone's envelope spreads more than Gaussian noise explains: "
                             "fading, amplitude or phase noise within the symbol, or timing jitter"))
    if p_off:
        checks.append(_check("Rayleigh fit, tone not sent", max(ks_off), min(1.0, min(p_off) * 2 * n_tests),
                             "the idle branch holds more than noise: an interferer, leakage from "
                             "non-orthogonal tones, or intersymbol interference from timing error"))
    # 3. independence of the four outputs on the noise branches (orthogonal tones)
    if rho_abs < 0.05 and min(np.count_nonzero(sent == 0), np.count_nonzero(sent == 1)) >= 20:
        a = z[sent == 1, 0] / sig[0]   # branch 0 idle
        b = z[sent == 0, 1] / sig[1]   # branch 1 idle
        r_iq = [np.corrcoef(a.real, a.imag)[0, 1], np.corrcoef(b.real, b.imag)[0, 1]]
        n_min = min(a.size, b.size)
        zstat = max(abs(np.arctanh(r)) for r in r_iq) * np.sqrt(n_min - 3)
        p = min(1.0, 2 * stats.norm.sf(zstat) * 2 * n_tests)
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


def ebn0_trend(z: np.ndarray, sent: np.ndarray, energy_scale: float, blocks: int = 8) -> Trend:
    """Eb/N0 in consecutive blocks and a chi-square test that it is constant.

    The per-block signal energy ``|z_sent|^2 - |z_idle|^2`` is compared across
    blocks with a one-way analysis of variance (``scipy.stats.f_oneway``).
    """
    z = np.asarray(z)
    sent = np.asarray(sent).astype(int)
    n = len(z)
    blocks = int(max(1, min(blocks, n // 32)))
    idx = np.arange(n)
    p_on = np.abs(z[idx, sent]) ** 2
    p_off = np.abs(z[idx, 1 - sent]) ** 2
    edges = np.linspace(0, n, blocks + 1).astype(int)
    eb = []
    groups = []
    for a, b in zip(edges[:-1], edges[1:]):
        s = np.mean(p_on[a:b]) - np.mean(p_off[a:b])
        nv = np.mean(p_off[a:b])
        eb.append(10 * np.log10(s / nv * energy_scale) if s > 0 and nv > 0 else np.nan)
        groups.append(p_on[a:b] - p_off[a:b])
    eb = np.array(eb)
    if blocks >= 2:
        p = float(stats.f_oneway(*groups).pvalue)
        ok = np.isfinite(eb)
        slope = float(np.polyfit(np.arange(blocks)[ok], eb[ok], 1)[0]) if ok.sum() >= 2 else float("nan")
    else:
        p, slope = 1.0, 0.0
    return Trend(eb, slope, p, bool(p < FLAG_LEVEL),
                 "the signal level changes along the burst: fading, a power ramp or AGC action, "
                 "or a transmitter that drifts")


def blind_ber(ebn0_db: float, ebn0_ci95_db, model: theory.LinkModel) -> tuple[float, tuple[float, float]]:
    """BER predicted from the fitted branch statistics alone, with an interval.

    The Eb/N0 interval is mapped through the theory of the measured link
    (monotone), so the BER interval is ``[Pb(hi), Pb(lo)]``.
    """
    def pb(x_db):
        return float(theory.ber_expected(10 ** (x_db / 10), model)) if np.isfinite(x_db) else float("nan")
    return pb(ebn0_db), (pb(ebn0_ci95_db[1]), pb(ebn0_ci95_db[0]))


@dataclass(frozen=True)
class LossParts:
    """The implementation loss split into named parts (dB, at the measured BER)."""

    total_db: float
    correlation_db: float
    imbalance_db: float
    rest_db: float


def loss_parts(total_db: float, ber: float, model: theory.LinkModel) -> LossParts:
    """Split ``total_db`` (against ideal orthogonal equal-energy BFSK) into causes.

    ``correlation`` is the extra Eb/N0 equal-energy tones of the measured
    correlation need at the measured BER, ``imbalance`` the further extra the
    measured imbalance costs, and ``rest`` what remains (timing, frequency and
    pulse-shape errors, interference, estimation error).
    """
    if not (np.isfinite(total_db) and 0 < ber < 0.5):
        return LossParts(float(total_db), float("nan"), float("nan"), float("nan"))
    ideal = float(theory.ebn0_required_db(ber))
    corr_only = theory.LinkModel(tone_correlation=model.tone_correlation, imbalance_db=0.0)
    c = float(theory.ebn0_required_db(ber, corr_only)) - ideal
    both = float(theory.ebn0_required_db(ber, model)) - ideal
    return LossParts(float(total_db), c, both - c, float(total_db) - both)
