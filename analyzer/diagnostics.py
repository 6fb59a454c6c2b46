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
from scipy import optimize, special, stats

from . import branches, theory

__all__ = ["ModelCheck", "model_checks", "envelope_cdf", "ks_test", "ebn0_trend", "blind_ber", "LossParts", "loss_parts",
           "output_correlations", "cross_branch_check", "ber_likelihood", "DecisionGain",
           "decision_gain", "PulseShape", "measured_pulse", "Leakage", "leakage",
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
#: before linear interpolation: the error is at most h^2/8 max|F''| with
#: h = sigma/128 and |F''| <= 0.61/sigma^2, below 1e-5 -- far under the KS
#: statistic's own spread.
_CDF_POINTS_PER_SIGMA = 128


def envelope_cdf(r: np.ndarray, nu: float, sigma: float) -> np.ndarray:
    """CDF of a Rician envelope (Rayleigh when ``nu = 0``) at ``r``.

    ``(R / sigma)^2`` is noncentral chi-square with two degrees of freedom and
    noncentrality ``(nu / sigma)^2``, evaluated with ``scipy.special.chndtr``
    on a grid of :data:`_CDF_POINTS_PER_SIGMA` points per ``sigma`` over the
    range of ``r`` and interpolated linearly (the CDF is smooth; one exact
    evaluation per sample would cost far more).  The Rayleigh case is the
    closed form ``1 - exp(-r^2 / 2 sigma^2)``.

    References
    ----------
    .. [1] ``scipy.stats.rice`` and ``scipy.stats.ncx2`` (the same law).
    """
    r = np.asarray(r, float)
    if nu <= 0:
        return -np.expm1(-0.5 * (r / sigma) ** 2)
    if r.size == 0:
        return np.zeros(0)
    lo, hi = float(np.min(r)), float(np.max(r))
    k = int(np.clip(np.ceil((hi - lo) / sigma * _CDF_POINTS_PER_SIGMA), 2, 1 << 14)) + 1
    grid = np.linspace(lo, hi, k)
    return np.interp(r, grid, special.chndtr((grid / sigma) ** 2, 2, (nu / sigma) ** 2))


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
    u = np.sort(np.asarray(cdf_values, float))
    n = u.size
    i = np.arange(1, n + 1)
    d = float(max(np.max(i / n - u), np.max(u - (i - 1) / n)))
    p = stats.kstwo.sf(d, n) if n <= 10000 else stats.kstwobign.sf(d * np.sqrt(n))
    return d, float(np.clip(p, 0.0, 1.0))


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
            d, p = ks_test(envelope_cdf(on, g[i], sig[i]))
            ks_on.append(d)
            p_on.append(p)
        if off.size >= 10:
            leak = rho_abs * g[j]
            d, p = ks_test(envelope_cdf(off, leak if leak > 1e-3 * sig[i] else 0.0, sig[i]))
            ks_off.append(d)
            p_off.append(p)
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
    template_db: float = float("nan")


def loss_parts(total_db: float, ber: float, model: theory.LinkModel,
               template_db: float = float("nan")) -> LossParts:
    """Split ``total_db`` (against ideal orthogonal equal-energy BFSK) into causes.

    ``correlation`` is the extra Eb/N0 equal-energy tones of the measured
    correlation need at the measured BER, ``imbalance`` the further extra the
    measured imbalance costs, and ``rest`` what remains (timing, frequency and
    pulse-shape errors, interference, estimation error).

    ``template_db`` (optional, from :func:`measured_pulse`) is the energy the
    rectangular template fails to collect from the measured pulse.  It is *not*
    part of ``total_db``: the measured Eb/N0 is the energy the receiver's
    templates collect, so a pulse mismatch lowers the measured Eb/N0 rather than
    raising the loss against theory.  It is the further gain a template matched
    to the measured pulse would have, and is reported beside the split.
    """
    t = float(template_db)
    if not (np.isfinite(total_db) and 0 < ber < 0.5):
        return LossParts(float(total_db), float("nan"), float("nan"), float("nan"), t)
    ideal = float(theory.ebn0_required_db(ber))
    corr_only = theory.LinkModel(tone_correlation=model.tone_correlation, imbalance_db=0.0)
    c = float(theory.ebn0_required_db(ber, corr_only)) - ideal
    both = float(theory.ebn0_required_db(ber, model)) - ideal
    return LossParts(float(total_db), c, both - c, float(total_db) - both, t)


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

    References
    ----------
    .. [1] Pearson product-moment correlation, ``numpy.corrcoef``.
    """
    z = np.asarray(z)
    sent = np.asarray(sent).astype(int)
    iq = np.column_stack([z[:, 0].real, z[:, 0].imag, z[:, 1].real, z[:, 1].imag])
    out = np.full((2, 4, 4), np.nan)
    for j in (0, 1):
        g = iq[sent == j]
        if len(g) >= 3:
            out[j] = np.corrcoef(g, rowvar=False)
    return out


def cross_branch_check(z: np.ndarray, sent: np.ndarray, n_tests: int = 5) -> ModelCheck | None:
    """Test that the tone-0 outputs are uncorrelated with the tone-1 outputs.

    The eight cross entries (I0, Q0 against I1, Q1, in both groups) of
    :func:`output_correlations` are each asymptotically normal with variance
    ``1/n`` when the two pairs are independent, whatever their distributions.
    The largest ``|r| sqrt(n)`` is referred to the normal law with a
    Bonferroni factor of 8 (and ``n_tests`` for the family).  Only meaningful
    for orthogonal tones.

    References
    ----------
    .. [1] Asymptotic variance of the sample correlation of independent
       variables, ``1/n`` (standard result, from memory); ``scipy.stats.norm``.
    """
    c = output_correlations(z, sent)
    sent = np.asarray(sent).astype(int)
    zs = []
    for j in (0, 1):
        n = int(np.count_nonzero(sent == j))
        if n < 20 or not np.all(np.isfinite(c[j])):
            return None
        zs.append(np.abs(c[j][:2, 2:]).max() * np.sqrt(n))
    stat = float(max(zs))
    p = min(1.0, 2 * stats.norm.sf(stat) * 8 * n_tests)
    return _check("tone 0 / tone 1 independence", stat, p,
                  "the two tones' outputs move together: tones not orthogonal (spacing or frequency "
                  "error), noise coloured by a filter, or interference spanning both tones")


# --------------------------------------------------------------------------- likelihood-ratio gain
def _ln_i0_inverse(c: np.ndarray) -> np.ndarray:
    """``x >= 0`` with ``ln I0(x) = c`` for ``c >= 0`` (vectorised Newton from an interpolated start)."""
    c = np.asarray(c, float)
    top = float(np.max(c, initial=0.0)) + 20.0
    grid = np.linspace(0.0, 2.0 * top + 10.0, 4001)
    x = np.interp(c, np.log(special.i0e(grid)) + grid, grid)
    for _ in range(4):
        f = np.log(special.i0e(x)) + x - c
        d = special.i1e(x) / special.i0e(x)
        x = np.where(d > 1e-12, np.maximum(x - f / np.where(d > 1e-12, d, 1.0), 0.0), x)
    return x


def _lr_error_given(g_sent: float, g_other: float, n_grid: int) -> float:
    """P(error | tone with amplitude g_sent sent) for the likelihood-ratio rule, sigma = 1 per output."""
    hi = g_sent + 12.0
    r = np.linspace(0.0, hi, n_grid)
    lam = special.log1p(special.i0e(g_sent * r) - 1.0) + g_sent * r - 0.5 * g_sent ** 2   # ln I0(g r) - g^2/2
    c = lam + 0.5 * g_other ** 2
    if g_other > 0:
        h = _ln_i0_inverse(np.maximum(c, 0.0)) / g_other
        tail = np.where(c > 0, np.exp(-0.5 * h ** 2), 1.0)   # Rayleigh(1) tail P(r_other > h)
    else:
        tail = np.where(c > 0, 0.0, 1.0)
    pdf = stats.rice.pdf(r, g_sent)
    return float(np.trapezoid(pdf * tail, r))


def ber_likelihood(e0n0: float, e1n0: float, n_grid: int = 6001) -> float:
    """BER of the noncoherent likelihood-ratio rule for orthogonal tones of unequal energy.

    Parameters
    ----------
    e0n0, e1n0 : float
        Energy of tone 0 and of tone 1 over N0, linear.
    n_grid : int
        Points of the trapezoidal integration over the sent envelope.

    Returns
    -------
    float
        ``Pb = 1/2 [P(e|0) + P(e|1)]``.  With one real output of unit variance
        the sent envelope ``r_s`` is Rician (``nu = g_s = sqrt(2 E_s/N0)``) and
        the other ``r_o`` Rayleigh; the rule errs when
        ``ln I0(g_o r_o) - g_o^2/2 > ln I0(g_s r_s) - g_s^2/2``, i.e. when
        ``r_o > h(r_s)`` (``ln I0`` is increasing), so
        ``P(e|s) = integral f_Rice(r_s) exp(-h(r_s)^2/2) dr_s`` with the tail
        set to 1 where no ``r_o >= 0`` can win.

    Notes
    -----
    For equal energies the rule is the square-law rule and this equals
    ``1/2 exp(-Eb/2N0)``.  Accuracy about 1e-6 relative for error rates down
    to 1e-8 with the default grid.

    References
    ----------
    .. [1] J. G. Proakis and M. Salehi, *Digital Communications*, McGraw-Hill,
       noncoherent detection, Rician and Rayleigh envelope laws -- from memory.
    """
    g0 = float(np.sqrt(2.0 * max(e0n0, 0.0)))
    g1 = float(np.sqrt(2.0 * max(e1n0, 0.0)))
    return 0.5 * (_lr_error_given(g0, g1, n_grid) + _lr_error_given(g1, g0, n_grid))


@dataclass(frozen=True)
class DecisionGain:
    """What the likelihood-ratio rule gains over square-law at the measured imbalance.

    Attributes
    ----------
    ber_square_law, ber_likelihood : float
        Theoretical BER of each rule at the measured Eb/N0 and imbalance
        (orthogonal tones).
    gain_db : float
        Eb/N0 (dB) square-law needs for its BER minus what the likelihood-ratio
        rule needs for the same BER; positive = the likelihood rule is better.
    """

    ber_square_law: float
    ber_likelihood: float
    gain_db: float


def decision_gain(ebn0: float, imbalance_db: float) -> DecisionGain:
    """Gain of the likelihood-ratio rule over square-law at equal BER.

    Parameters
    ----------
    ebn0 : float
        Average Eb/N0, linear.
    imbalance_db : float
        ``E_high / E_low`` in dB.

    Returns
    -------
    DecisionGain

    References
    ----------
    .. [1] J. G. Proakis and M. Salehi, *Digital Communications*, McGraw-Hill,
       noncoherent binary signalling with unequal energies -- from memory.
    """
    if not (np.isfinite(ebn0) and ebn0 > 0 and np.isfinite(imbalance_db)):
        return DecisionGain(float("nan"), float("nan"), float("nan"))
    if abs(imbalance_db) < theory.IMBALANCE_NEGLIGIBLE_DB:
        # equal energies: the likelihood-ratio rule is the square-law rule; the
        # gain grows with the square of the imbalance and is < 0.001 dB here
        p = float(theory.ber_orthogonal(ebn0))
        return DecisionGain(p, p, 0.0)
    r = 10 ** (abs(imbalance_db) / 10)

    def split(x):
        return 2 * x / (1 + r), 2 * x * r / (1 + r)

    p_sq = float(theory.ber_square_law(*split(ebn0)))
    p_lr = ber_likelihood(*split(ebn0))
    if not (0 < p_sq < 0.5) or p_lr <= 0:
        return DecisionGain(p_sq, p_lr, float("nan"))
    x_db = 10 * np.log10(ebn0)

    def f(y_db):
        return np.log(max(ber_likelihood(*split(10 ** (y_db / 10))), 1e-300)) - np.log(p_sq)

    lo, hi = x_db - 6.0, x_db + 0.5
    if f(lo) * f(hi) > 0:
        return DecisionGain(p_sq, p_lr, float("nan"))
    y = optimize.brentq(f, lo, hi, xtol=1e-4)
    return DecisionGain(p_sq, p_lr, float(x_db - y))


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


def measured_pulse(rows: np.ndarray, sample_index: np.ndarray, sent: np.ndarray,
                   tones_hz, sample_rate_hz: float, noise_var_complex,
                   ) -> PulseShape:
    """Average the symbols of each tone into a measured pulse.

    Parameters
    ----------
    rows : numpy.ndarray
        (n, L) samples of every symbol.
    sample_index : numpy.ndarray
        (n, L) capture sample index of every entry of ``rows``.
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
    sent = np.asarray(sent).astype(int)
    n, L = rows.shape
    f = np.asarray(tones_hz, float)
    nv = np.asarray(noise_var_complex, float)
    even = (np.arange(L) % 2 == 0)
    idx = np.asarray(sample_index)
    contiguous = bool(idx.size and np.all(idx[:, 1:] - idx[:, :-1] == 1)) if L > 1 else True

    def derotated(i: int, k: np.ndarray) -> np.ndarray:
        """``rows[k] * exp(-j 2 pi f_i n / fs)``; for whole-sample windows the phasor is an
        outer product of a per-symbol and a per-sample factor (no exponential per entry)."""
        if contiguous:
            per_symbol = np.exp(-2j * np.pi * np.mod(f[i] / sample_rate_hz * idx[k, 0], 1.0))
            per_sample = np.exp(-2j * np.pi * f[i] / sample_rate_hz * np.arange(L))
            return rows[k] * (per_symbol[:, None] * per_sample[None, :])
        return rows[k] * np.exp(-2j * np.pi * f[i] * idx[k] / sample_rate_hz)

    pulse = np.zeros((2, L), complex)
    used = np.zeros(2, int)
    loss = np.full(2, np.nan)
    coll = np.zeros(2)
    tot = np.zeros(2)
    derot: list = [None, None]
    for i in (0, 1):
        k = np.flatnonzero(sent == i)
        if k.size < 4:
            continue
        xk = derotated(i, k)
        derot[i] = xk
        # phase of each symbol from the samples of the other parity, so that the noise of a sample
        # never steers its own derotation (no bias towards the template)
        ph_even = np.exp(-1j * np.angle(xk[:, even].sum(axis=1)))
        ph_odd = np.exp(-1j * np.angle(xk[:, ~even].sum(axis=1)))
        y = xk * np.where(even[None, :], ph_odd[:, None], ph_even[:, None])
        m = y.mean(axis=0)
        pulse[i] = m
        used[i] = k.size
        noise = L * max(float(nv[i]), 0.0) / k.size      # noise energy left in the mean (and in its sum)
        c = max(np.abs(m.sum()) ** 2 - noise, 0.0) / L
        e = max(float(np.sum(np.abs(m) ** 2)) - noise, c)
        coll[i], tot[i] = c, e
        loss[i] = max(0.0, -10 * np.log10(c / e)) if e > 0 and c > 0 else np.nan
    mean = max(0.0, -10 * np.log10(coll.sum() / tot.sum())) if tot.sum() > 0 and coll.sum() > 0 else float("nan")
    # noise per sample: each symbol minus its projection on its tone's measured pulse
    res = []
    for i in (0, 1):
        k = np.flatnonzero(sent == i)
        nm = np.sqrt(np.sum(np.abs(pulse[i]) ** 2))
        if k.size == 0 or nm == 0:
            continue
        u = pulse[i] / nm
        xk = derot[i] if derot[i] is not None else derotated(i, k)
        proj = np.abs(xk @ np.conj(u)) ** 2
        res.append(np.sum(np.abs(xk) ** 2, axis=1) - proj)
    npsd = float(np.mean(np.concatenate(res)) / (L - 1)) if res and L > 1 else float("nan")
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
    den = np.sqrt(np.sum(np.abs(a) ** 2) * np.sum(np.abs(b) ** 2))
    r = complex(np.sum(a * np.conj(b)) / den) if den > 0 else complex("nan")
    rho = complex(rho)
    sd = (1 - min(abs(rho) ** 2, 1.0)) / np.sqrt(n)
    d = abs(r - rho) / max(sd, 1e-12)
    # |r - rho|^2 / (sd^2 / 2) is chi-square with 2 degrees of freedom under the null
    p = float(stats.chi2.sf(2 * d * d, 2)) if np.isfinite(d) else float("nan")
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
        (n, 2) complex outputs (n may be 0).
    """
    L = grid.window
    sps = grid.samples_per_symbol
    out = []
    before_end = int(np.floor(grid.first_start - guard_symbols * sps)) - x_start
    n_before = max(before_end, 0) // L
    if n_before > 0:
        g = branches.SymbolGrid(float(x_start + before_end - n_before * L), float(L), int(n_before), L)
        out.append(window_referenced(branches.correlate(x, x_start, g, tones_hz, sample_rate_hz), sample_rate_hz))
    after_start = int(np.ceil(grid.stop + guard_symbols * sps)) - x_start
    n_after = max(len(x) - after_start, 0) // L
    if n_after > 0:
        g = branches.SymbolGrid(float(x_start + after_start), float(L), int(n_after), L)
        out.append(window_referenced(branches.correlate(x, x_start, g, tones_hz, sample_rate_hz), sample_rate_hz))
    return np.concatenate(out) if out else np.zeros((0, 2), complex)


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
       (chi-square with two degrees of freedom) -- from memory; ``scipy.stats.norm``.
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
    p = min(1.0, 2 * stats.norm.sf(stat) * 2 * n_tests)
    return _check("idle-branch power", stat, p,
                  "the idle branch holds more than noise and the expected tone leakage: the pulse is "
                  "not rectangular (shaping, filtering), timing or frequency error, or an interferer; "
                  "the fitted noise and Eb/N0 are then biased")
