"""The noncoherent likelihood-ratio rule for tones of unequal energy: its BER and its gain.

When the two tones arrive with different energies, the rule that compares
``ln I0(g_i r_i) - g_i^2 / 2`` instead of the envelopes themselves errs less
often than square-law detection.  Its error rate is an integral over the
Rician envelope of the sent tone (no closed form), evaluated by a composite
Gauss-Legendre rule; :func:`decision_gain` states what it gains in Eb/N0.
Pure functions on floats and arrays; no I/O.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import special

from ._closed_form import IMBALANCE_NEGLIGIBLE_DB, ber_orthogonal, ber_square_law

__all__ = ["ber_likelihood", "DecisionGain", "decision_gain"]

_LN_I0_TABLE: tuple[np.ndarray, np.ndarray] | None = None


def _ln_i0_table() -> tuple[np.ndarray, np.ndarray]:
    """``(ln I0(x), x)`` on ``0 <= x <= 2000`` (made once; ``ln I0`` is increasing)."""
    global _LN_I0_TABLE
    if _LN_I0_TABLE is None:
        x = np.linspace(0.0, 2000.0, 40001)
        _LN_I0_TABLE = (np.log(special.i0e(x)) + x, x)
    return _LN_I0_TABLE


def _ln_i0_inverse(c: np.ndarray) -> np.ndarray:
    """``x >= 0`` with ``ln I0(x) = c`` for ``c >= 0``.

    Start from the series ``x^2 ~ 4c + c^2`` for ``c < 1``, from linear
    interpolation in a fixed table (spacing 0.05) above, and beyond the table
    from ``ln I0(x) ~ x - ln(2 pi x) / 2``; then two Newton steps, each
    squaring the relative error of the start (below 1e-2).
    """
    c = np.asarray(c, float)
    lnv, xs = _ln_i0_table()
    x = np.interp(c, lnv, xs)
    small = c < 1.0                     # ln I0(x) = x^2/4 - x^4/64 + ...: x^2 ~ 4c + c^2
    x[small] = np.sqrt(4.0 * c[small] + c[small] ** 2)
    far = c > lnv[-1]
    if np.any(far):
        cf = c[far]
        x[far] = cf + 0.5 * np.log(2 * np.pi * cf)
    for _ in range(2):
        i0 = special.i0e(x)
        f = np.log(i0) + x - c
        d = special.i1e(x) / i0
        x = np.where(d > 1e-12, np.maximum(x - f / np.where(d > 1e-12, d, 1.0), 0.0), x)
    return x


#: Composite Gauss-Legendre rule of the likelihood-rule integral: each
#: integration range is cut into equal panels of at most ``_LR_PANEL`` noise
#: standard deviations with ``_LR_ORDER`` nodes each.  The integrand is a
#: Rician density (width 1) times a smooth tail, analytic on each side of the
#: point where the tail leaves 1 (a panel edge), so the rule converges
#: geometrically; against adaptive quadrature it agrees to about 1e-14
#: relative (see tests/theory/test_likelihood_rule.py), with about 100 nodes where an
#: equally spaced trapezoid needs thousands for 1e-6.
_LR_ORDER = 16
_LR_PANEL = 3.0
_LR_NODES, _LR_WEIGHTS = np.polynomial.legendre.leggauss(_LR_ORDER)


def _lr_error_given(g_sent, g_other) -> np.ndarray:
    """P(error | tone with amplitude g_sent sent) for the likelihood-ratio rule, sigma = 1 per output.

    Parameters
    ----------
    g_sent, g_other : array_like
        Amplitudes of the sent and the other tone (one real output of unit
        variance), broadcast against each other.

    Returns
    -------
    numpy.ndarray
        One error probability per pair (1-D).

    Notes
    -----
    ``P(e|s) = integral_0^(g_s + 12) f_Rice(r; g_s) T(r) dr`` with the Rayleigh
    tail ``T(r) = exp(-h(r)^2 / 2)`` of the other envelope beyond the
    threshold ``h(r) = lnI0^-1(c(r)) / g_o``, ``c(r) = ln I0(g_s r) - g_s^2/2
    + g_o^2/2``, and ``T = 1`` where ``c <= 0``.  When ``g_s > g_o``, ``c``
    crosses 0 at ``r0 = lnI0^-1((g_s^2 - g_o^2) / 2) / g_s``, where ``T`` has
    a kink; ``[0, r0]`` and ``[r0, g_s + 12]`` are then integrated apart (on
    each, ``h^2`` is analytic in ``r``: ``lnI0^-1(c)^2`` is analytic in ``c``
    near 0 since ``ln I0(x)`` is a series in ``x^2``).  All pairs' nodes are
    evaluated in one pass.

    References
    ----------
    .. [1] J. G. Proakis and M. Salehi, *Digital Communications*, McGraw-Hill,
       noncoherent detection, Rician and Rayleigh envelope laws -- from memory.
    .. [2] P. J. Davis and P. Rabinowitz, *Methods of Numerical Integration*,
       Academic Press (composite Gauss-Legendre rules) -- from memory.
    """
    gs, go = np.broadcast_arrays(np.atleast_1d(np.asarray(g_sent, float)),
                                 np.atleast_1d(np.asarray(g_other, float)))
    gs, go = gs.ravel(), go.ravel()
    bad = ~(np.isfinite(gs) & np.isfinite(go))
    if np.any(bad):                      # no rule for these: nan, the others as usual
        out = np.full(gs.size, np.nan)
        if not np.all(bad):
            out[~bad] = _lr_error_given(gs[~bad], go[~bad])
        return out
    m = gs.size
    hi = gs + 12.0
    c0 = 0.5 * (gs * gs - go * go)
    r0 = np.zeros(m)
    cut = (c0 > 0) & (gs > 0)
    if np.any(cut):
        r0[cut] = np.minimum(_ln_i0_inverse(c0[cut]) / gs[cut], hi[cut])
    # two segments per pair, [0, r0] and [r0, hi] (the first empty without a kink), in equal panels
    seg_lo = np.concatenate([np.zeros(m), r0])
    seg_len = np.concatenate([r0, hi - r0])
    owner = np.concatenate([np.arange(m), np.arange(m)])
    k = np.ceil(seg_len / _LR_PANEL).astype(np.intp)
    seg = np.repeat(np.arange(2 * m), k)
    j = np.arange(seg.size) - np.repeat(np.cumsum(k) - k, k)          # panel number within its segment
    half = 0.5 * seg_len[seg] / k[seg]
    mid = seg_lo[seg] + (2 * j + 1) * half
    r = (mid[:, None] + half[:, None] * _LR_NODES).ravel()
    w = (half[:, None] * _LR_WEIGHTS).ravel()
    who = np.repeat(owner[seg], _LR_ORDER)
    s, o = gs[who], go[who]
    i0s = special.i0e(s * r)
    c = np.log(i0s) + s * r - 0.5 * s * s + 0.5 * o * o             # ln I0(g_s r) - g_s^2/2 + g_o^2/2
    live = (c > 0) & (o > 0)
    with np.errstate(invalid="ignore", divide="ignore"):
        h = _ln_i0_inverse(np.maximum(c, 0.0)) / np.where(o > 0, o, 1.0)
    tail = np.where(c > 0, np.where(live, np.exp(-0.5 * h * h), 0.0), 1.0)   # Rayleigh(1) P(r_o > h)
    # Rice(nu = g_sent, sigma = 1) density, r exp(-(r^2 + nu^2)/2) I0(nu r), as scipy.stats.rice.pdf
    pdf = r * np.exp(-0.5 * (r - s) ** 2) * i0s
    return np.bincount(who, weights=w * pdf * tail, minlength=m)


def ber_likelihood(e0n0: float, e1n0: float) -> float:
    """BER of the noncoherent likelihood-ratio rule for orthogonal tones of unequal energy.

    Parameters
    ----------
    e0n0, e1n0 : float
        Energy of tone 0 and of tone 1 over N0, linear.

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
    ``1/2 exp(-Eb/2N0)``.  The integral is a composite Gauss-Legendre rule
    split where the tail leaves 1 (:func:`_lr_error_given`); it agrees with
    adaptive quadrature to about 1e-14 relative.

    References
    ----------
    .. [1] J. G. Proakis and M. Salehi, *Digital Communications*, McGraw-Hill,
       noncoherent detection, Rician and Rayleigh envelope laws -- from memory.
    """
    g0 = float(np.sqrt(2.0 * max(e0n0, 0.0)))
    g1 = float(np.sqrt(2.0 * max(e1n0, 0.0)))
    p = _lr_error_given([g0, g1], [g1, g0])
    return 0.5 * float(p[0] + p[1])


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


#: Accuracy of the gain (dB): the root lies within this of the returned Eb/N0.
_GAIN_XTOL_DB = 1e-4
#: Half-width (dB) of the first root search around the one-step estimate.
_GAIN_NEAR_DB = 0.05


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

    Notes
    -----
    The Eb/N0 ``y`` (dB) at which the likelihood rule's BER equals the
    square-law BER at ``x`` is the root of ``ln Pb_lr(y) - ln Pb_sq(x)``
    (decreasing in ``y``) in ``[x - 6, x + 0.5]``, found to within
    ``_GAIN_XTOL_DB`` = 1e-4 dB.  The root lies close to ``x`` for the
    imbalances met in practice: one step from ``x`` along the slope of the
    square-law curve (closed form) estimates it, and ``scipy.optimize.brentq``
    searches +-:data:`_GAIN_NEAR_DB` around that estimate, or the whole bracket
    when the root is not there.  The gain is ``nan`` when the bracket holds no
    root.

    References
    ----------
    .. [1] J. G. Proakis and M. Salehi, *Digital Communications*, McGraw-Hill,
       noncoherent binary signalling with unequal energies -- from memory.
    .. [2] R. P. Brent, *Algorithms for Minimization without Derivatives*,
       Prentice Hall, 1973 -- from memory.
    """
    from scipy import optimize          # imported where needed: a heavy module

    if not (np.isfinite(ebn0) and ebn0 > 0 and np.isfinite(imbalance_db)):
        return DecisionGain(float("nan"), float("nan"), float("nan"))
    if abs(imbalance_db) < IMBALANCE_NEGLIGIBLE_DB:
        # equal energies: the likelihood-ratio rule is the square-law rule; the
        # gain grows with the square of the imbalance and is < 0.001 dB here
        p = float(ber_orthogonal(ebn0))
        return DecisionGain(p, p, 0.0)
    r = 10 ** (abs(imbalance_db) / 10)
    p_sq = float(ber_square_law(*_split(ebn0, r)))
    p_lr = ber_likelihood(*_split(ebn0, r))
    if not (0 < p_sq < 0.5) or p_lr <= 0:
        return DecisionGain(p_sq, p_lr, float("nan"))
    x_db = 10 * np.log10(ebn0)
    log_sq = np.log(p_sq)
    lo, hi = x_db - 6.0, x_db + 0.5
    # The root is near x_db (the gain is small): start at x_db, where f is known, with a first step
    # along the slope of ln Pb of the square-law rule (closed form), about that of the likelihood rule.
    d = 0.05
    s = (np.log(float(ber_square_law(*_split(10 ** ((x_db + d) / 10), r))))
         - np.log(float(ber_square_law(*_split(10 ** ((x_db - d) / 10), r))))) / (2 * d)
    f0 = np.log(max(p_lr, 1e-300)) - log_sq
    y1 = x_db - f0 / s if s < 0 else x_db - 0.01
    a, b = max(lo, y1 - _GAIN_NEAR_DB), min(hi, y1 + _GAIN_NEAR_DB)
    if a < b and _gap(a, r, log_sq) > 0 > _gap(b, r, log_sq):       # the gap decreases: the root is near the estimate
        y = optimize.brentq(_gap, a, b, args=(r, log_sq), xtol=_GAIN_XTOL_DB)
    elif _gap(lo, r, log_sq) * _gap(hi, r, log_sq) > 0:
        return DecisionGain(p_sq, p_lr, float("nan"))
    else:
        y = optimize.brentq(_gap, lo, hi, args=(r, log_sq), xtol=_GAIN_XTOL_DB)
    return DecisionGain(p_sq, p_lr, float(x_db - y))


def _split(ebn0, ratio):
    """``(E_low/N0, E_high/N0)`` of an average Eb/N0 (linear) split at ``E_high/E_low = ratio``."""
    return 2 * ebn0 / (1 + ratio), 2 * ebn0 * ratio / (1 + ratio)


def _gap(y_db, ratio, log_target):
    """``ln Pb`` of the likelihood-ratio rule at ``y_db`` dB (floored at 1e-300) minus ``log_target``."""
    return np.log(max(ber_likelihood(*_split(10 ** (y_db / 10), ratio)), 1e-300)) - log_target
