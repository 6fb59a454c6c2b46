"""Closed-form bit error rates, Marcum Q, binomial intervals and implementation loss.

Pure functions on numpy arrays and floats, plus small frozen dataclasses; no I/O.

Conventions
-----------
* Eb/N0 arguments are linear power ratios unless the argument name ends in ``_db``.
* "Eb/N0" of a link is the *average* bit energy over the two tones, over N0.
* Branch model (see the design notes): for each tone ``i`` a complex correlation
  ``z_i`` against a unit-energy template ``w_i``.  The complex tone correlation is
  ``rho = <w_1, w_0>``; with tone ``i`` sent at energy ``E_i`` the other branch
  carries the leakage ``rho * sqrt(E_i)`` (or its conjugate) and the branch noises
  have covariance ``N0 * [[1, rho], [conj(rho), 1]]``.  Only ``|rho|`` enters the
  error rates below.
* Implementation loss is positive when the link does worse than theory:
  measured Eb/N0 (dB) minus the Eb/N0 (dB) the reference model needs for the
  measured BER.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy import special

__all__ = [
    "CORRELATION_NEGLIGIBLE",
    "IMBALANCE_NEGLIGIBLE_DB",
    "BER_LIMIT",
    "LinkModel",
    "LossEstimate",
    "marcum_q1",
    "ber_orthogonal",
    "ber_correlated",
    "ber_square_law",
    "ber_expected",
    "ebn0_required_db",
    "clopper_pearson",
    "binomial_band",
    "implementation_loss_db",
]

#: Tone correlation magnitude below which a link is treated as orthogonal.
CORRELATION_NEGLIGIBLE = 0.02
#: Tone imbalance (dB, magnitude) below which the two tone energies are treated as equal.
IMBALANCE_NEGLIGIBLE_DB = 0.1
#: BER approached by every model as Eb/N0 -> 0 (and reached at |rho| = 1).
BER_LIMIT = 0.5

# Series truncation: stop when the newest term is below this fraction of the sum.
_SERIES_RTOL = 1e-18
_SERIES_MAX_TERMS = 20000


# ---------------------------------------------------------------------------
# Marcum Q
# ---------------------------------------------------------------------------
def _bessel_series(ratio: np.ndarray, x: np.ndarray, k0: int, w0: float) -> np.ndarray:
    """Return ``w0 * ive(0, x) * [k0 == 0] + sum_{k>=max(k0,1)} ratio**k * ive(k, x)``.

    ``ratio`` must lie in [0, 1] and ``x >= 0`` (finite, same shape, 1-D).  The
    terms are non-increasing in ``k`` (``I_k(x)`` decreases with the order for
    ``x > 0`` and ``ratio <= 1``), so summation stops per element once the newest
    term is below ``_SERIES_RTOL`` of the running sum.
    """
    total = w0 * special.ive(0, x) if k0 == 0 else np.zeros_like(x)
    active = np.arange(x.size)
    power = np.ones_like(x)
    for k in range(1, _SERIES_MAX_TERMS):
        if active.size == 0:
            break
        power[active] *= ratio[active]
        term = power[active] * special.ive(k, x[active])
        total[active] += term
        done = term <= _SERIES_RTOL * total[active]
        # A zero sum with zero term (ratio = 0 and w0 = 0) is converged too.
        done |= term == 0.0
        active = active[~done]
    return total


def marcum_q1(a, b):
    """First-order Marcum Q function ``Q1(a, b)``.

    ``Q1(a, b) = integral_b^inf x exp(-(x^2 + a^2)/2) I0(a x) dx``, the probability
    that the envelope of a unit-variance-per-dimension complex Gaussian with mean
    magnitude ``a`` exceeds ``b``.

    Parameters
    ----------
    a, b : array_like of float
        Non-negative arguments; broadcast against each other.  NaN propagates.

    Returns
    -------
    numpy.ndarray or numpy.float64
        ``Q1(a, b)`` with the broadcast shape (a numpy scalar for scalar input).

    Raises
    ------
    ValueError
        If any argument is negative.

    Notes
    -----
    Evaluated with the Neumann series in exponentially scaled Bessel functions
    ``ive(k, x) = exp(-x) I_k(x)``, which keeps every term finite:

    * ``a < b``:  ``Q1 = exp(-(b-a)^2/2) * sum_{k>=0} (a/b)^k ive(k, ab)``
    * ``a >= b``: ``Q1 = 1 - exp(-(a-b)^2/2) * sum_{k>=1} (b/a)^k ive(k, ab)``

    The second form follows from the first and the symmetry relation
    ``Q1(a,b) + Q1(b,a) = 1 + exp(-(a^2+b^2)/2) I0(ab)``.  Both series have
    positive terms with ratio ``<= 1``, and for ``a >= b`` the result is at least
    1/2, so there is no cancellation; near ``a = b`` the terms fall off like
    ``exp(-k^2 / 2ab)`` and about ``9 sqrt(ab)`` terms are summed.  Relative error
    is of the order of 1e-13 for ``a, b`` in [0, 40].  Edge values:
    ``Q1(0, b) = exp(-b^2/2)``, ``Q1(a, 0) = 1``.

    References
    ----------
    .. [1] J. I. Marcum, "A statistical theory of target detection by pulsed
       radar", 1950 (definition and series) -- from memory.
    .. [2] M. K. Simon and M.-S. Alouini, *Digital Communication over Fading
       Channels*, Wiley (Marcum Q series and symmetry relation) -- from memory.
    """
    a_arr, b_arr = np.broadcast_arrays(np.asarray(a, dtype=float), np.asarray(b, dtype=float))
    if np.any(a_arr < 0) or np.any(b_arr < 0):
        raise ValueError("marcum_q1: arguments must be non-negative")
    shape = a_arr.shape
    av = a_arr.ravel()
    bv = b_arr.ravel()
    out = np.full(av.shape, np.nan)

    finite = np.isfinite(av) & np.isfinite(bv)
    out[np.isinf(bv) & np.isfinite(av)] = 0.0
    out[np.isinf(av) & np.isfinite(bv)] = 1.0

    lower = finite & (av < bv)
    upper = finite & (av >= bv)
    if np.any(lower):
        al, bl = av[lower], bv[lower]
        s = _bessel_series(al / bl, al * bl, 0, 1.0)
        out[lower] = np.exp(-0.5 * (bl - al) ** 2) * s
    if np.any(upper):
        au, bu = av[upper], bv[upper]
        ratio = np.divide(bu, au, out=np.zeros_like(au), where=au > 0)
        s = _bessel_series(ratio, au * bu, 1, 0.0)
        out[upper] = 1.0 - np.exp(-0.5 * (au - bu) ** 2) * s
    return out.reshape(shape)[()]


# ---------------------------------------------------------------------------
# Closed-form bit error rates
# ---------------------------------------------------------------------------
def ber_orthogonal(ebn0):
    """BER of noncoherent orthogonal binary FSK with square-law detection.

    Parameters
    ----------
    ebn0 : array_like of float
        Eb/N0, linear, non-negative.

    Returns
    -------
    numpy.ndarray or numpy.float64
        ``Pb = 1/2 * exp(-Eb / (2 N0))``.

    References
    ----------
    .. [1] J. G. Proakis and M. Salehi, *Digital Communications*, McGraw-Hill,
       noncoherent detection of binary orthogonal signals -- from memory.
    .. [2] B. Sklar, *Digital Communications*, Prentice Hall, noncoherent
       FSK -- from memory.
    """
    x = np.asarray(ebn0, dtype=float)
    if np.any(x < 0):
        raise ValueError("ber_orthogonal: Eb/N0 must be non-negative")
    return (0.5 * np.exp(-0.5 * x))[()]


def _check_rho(rho) -> np.ndarray:
    r = np.abs(np.asarray(rho))
    r = r.astype(float, copy=False)
    if np.any(r > 1.0 + 1e-12):
        raise ValueError("tone correlation magnitude must not exceed 1")
    return np.minimum(r, 1.0)


def ber_correlated(ebn0, rho):
    """BER of noncoherent (square-law) detection of two equal-energy correlated tones.

    Parameters
    ----------
    ebn0 : array_like of float
        Eb/N0 (energy of the sent tone over N0), linear, non-negative.
    rho : array_like of float or complex
        Complex correlation of the two tones; only ``|rho|`` (<= 1) is used.
        Broadcast against ``ebn0``.

    Returns
    -------
    numpy.ndarray or numpy.float64
        ``Pb = Q1(a, b) - 1/2 exp(-(a^2 + b^2)/2) I0(ab)`` with
        ``a, b = sqrt(Eb/2N0 * (1 -/+ sqrt(1 - |rho|^2)))``.

    Notes
    -----
    Reduces to ``1/2 exp(-Eb/2N0)`` at ``rho = 0`` and to 1/2 at ``|rho| = 1``.
    Since ``a <= b`` the expression is evaluated in the cancellation-free form
    ``Pb = exp(-(b-a)^2/2) [ive(0, ab)/2 + sum_{k>=1} (a/b)^k ive(k, ab)]``
    (the Marcum series of :func:`marcum_q1` with the ``I0`` term halved), so very
    small error rates keep full relative accuracy.  ``1 - sqrt(1 - |rho|^2)`` is
    computed as ``|rho|^2 / (1 + sqrt(1 - |rho|^2))``.

    References
    ----------
    .. [1] J. G. Proakis and M. Salehi, *Digital Communications*, McGraw-Hill,
       noncoherent detection of binary equal-energy correlated signals
       (Marcum Q form) -- from memory.
    """
    x = np.asarray(ebn0, dtype=float)
    if np.any(x < 0):
        raise ValueError("ber_correlated: Eb/N0 must be non-negative")
    r = _check_rho(rho)
    x, r = np.broadcast_arrays(x, r)
    shape = x.shape
    xv = x.ravel()
    rv = r.ravel()
    root = np.sqrt(1.0 - rv**2)
    a = np.sqrt(0.5 * xv * rv**2 / (1.0 + root))
    b = np.sqrt(0.5 * xv * (1.0 + root))
    out = np.full(xv.shape, np.nan)
    ok = np.isfinite(a) & np.isfinite(b)
    zero_b = ok & (b == 0.0)          # Eb/N0 = 0: a = b = 0
    out[zero_b] = 0.5
    go = ok & (b > 0.0)
    if np.any(go):
        ag, bg = a[go], b[go]
        s = _bessel_series(ag / bg, ag * bg, 0, 0.5)
        out[go] = np.exp(-0.5 * (bg - ag) ** 2) * s
    return out.reshape(shape)[()]


def ber_square_law(e0n0, e1n0, rho=0.0):
    """BER of the square-law decision ``|z1|^2 > |z0|^2`` with unequal tone energies.

    Parameters
    ----------
    e0n0, e1n0 : array_like of float
        Energy of tone 0 and of tone 1 over N0, linear, non-negative.
    rho : array_like of float or complex, optional
        Complex tone correlation; only ``|rho|`` is used.  Default 0 (orthogonal).

    Returns
    -------
    numpy.ndarray or numpy.float64
        ``Pb = 1/2 [Pc(E0/N0, |rho|) + Pc(E1/N0, |rho|)]`` for equiprobable bits,
        with ``Pc`` = :func:`ber_correlated`.

    Notes
    -----
    When tone ``i`` is sent, both branch outputs scale with ``sqrt(E_i)`` only
    (the other branch sees the leakage ``rho sqrt(E_i)``), so the conditional error
    probability is the equal-energy correlated result at ``E_i/N0``.  For
    ``rho = 0`` this is ``1/2 sum_i 1/2 exp(-E_i / 2N0)``.  The square-law rule is
    not the likelihood-ratio rule when ``E0 != E1``; this is the error rate of the
    square-law receiver.

    References
    ----------
    .. [1] J. G. Proakis and M. Salehi, *Digital Communications*, McGraw-Hill,
       noncoherent binary signalling -- from memory.
    """
    return (0.5 * (np.asarray(ber_correlated(e0n0, rho)) + np.asarray(ber_correlated(e1n0, rho))))[()]


# ---------------------------------------------------------------------------
# Link model
# ---------------------------------------------------------------------------
@dataclass(frozen=True)
class LinkModel:
    """Tone properties that the expected BER depends on.

    Attributes
    ----------
    tone_correlation : float
        Magnitude of the complex tone correlation ``|rho|``, in [0, 1].
    imbalance_db : float
        Tone energy ratio ``E_high / E_low`` in dB (the sign is ignored).

    Notes
    -----
    :attr:`closed_form` names the closed form :func:`ber_expected` evaluates:

    ========================== ===========================================================
    ``"orthogonal"``            ``|rho| < 0.02`` and ``|imbalance| < 0.1 dB``
    ``"correlated"``            ``|rho| >= 0.02``, ``|imbalance| < 0.1 dB``
    ``"unequal-energy"``        ``|rho| < 0.02``, ``|imbalance| >= 0.1 dB``
    ``"unequal-energy correlated"`` ``|rho| >= 0.02`` and ``|imbalance| >= 0.1 dB``
    ========================== ===========================================================

    Below a threshold the quantity is set to zero in the formula.  Just at the
    thresholds (``|rho| = 0.02``, 0.1 dB) dropping them changes the required
    Eb/N0 by about 0.01 dB or less for BER 1e-3 ... 1e-6, well inside any
    measurement interval.
    """

    tone_correlation: float = 0.0
    imbalance_db: float = 0.0

    def __post_init__(self):
        rho = float(self.tone_correlation)
        imb = float(self.imbalance_db)
        if not (0.0 <= rho <= 1.0):
            raise ValueError("LinkModel.tone_correlation must be in [0, 1]")
        if not math.isfinite(imb):
            raise ValueError("LinkModel.imbalance_db must be finite")

    @property
    def correlated(self) -> bool:
        """True when ``|rho| >= CORRELATION_NEGLIGIBLE``."""
        return self.tone_correlation >= CORRELATION_NEGLIGIBLE

    @property
    def unequal(self) -> bool:
        """True when ``|imbalance_db| >= IMBALANCE_NEGLIGIBLE_DB``."""
        return abs(self.imbalance_db) >= IMBALANCE_NEGLIGIBLE_DB

    @property
    def closed_form(self) -> str:
        """Name of the closed form used for this model (see class notes)."""
        if self.correlated and self.unequal:
            return "unequal-energy correlated"
        if self.correlated:
            return "correlated"
        if self.unequal:
            return "unequal-energy"
        return "orthogonal"


def _tone_energies(ebn0, imbalance_db):
    """Split average Eb/N0 into (E_low/N0, E_high/N0) for ``E_high/E_low = imbalance``."""
    ratio = 10.0 ** (abs(float(imbalance_db)) / 10.0)
    x = np.asarray(ebn0, dtype=float)
    return 2.0 * x / (1.0 + ratio), 2.0 * x * ratio / (1.0 + ratio)


def ber_expected(ebn0, model: LinkModel = LinkModel()):
    """Expected BER of the square-law receiver for a link model.

    Parameters
    ----------
    ebn0 : array_like of float
        Average Eb/N0 (mean of the two tone energies over N0), linear.
    model : LinkModel, optional
        Tone correlation and imbalance; default ideal orthogonal equal-energy tones.

    Returns
    -------
    numpy.ndarray or numpy.float64
        Expected BER, by the closed form named by ``model.closed_form``:
        :func:`ber_orthogonal`, :func:`ber_correlated`, or :func:`ber_square_law`
        with ``E_low = 2 Eb / (1 + r)``, ``E_high = 2 Eb r / (1 + r)``,
        ``r = 10^(|imbalance_db| / 10)``.

    References
    ----------
    .. [1] J. G. Proakis and M. Salehi, *Digital Communications*, McGraw-Hill,
       noncoherent binary signalling -- from memory.
    """
    form = model.closed_form
    if form == "orthogonal":
        return ber_orthogonal(ebn0)
    if form == "correlated":
        return ber_correlated(ebn0, model.tone_correlation)
    e_lo, e_hi = _tone_energies(ebn0, model.imbalance_db)
    rho = model.tone_correlation if model.correlated else 0.0
    return ber_square_law(e_lo, e_hi, rho)


def _required_db_scalar(ber: float, model: LinkModel) -> float:
    if math.isnan(ber):
        return math.nan
    if ber >= BER_LIMIT:
        return math.nan
    if ber <= 0.0:
        return math.inf
    if model.tone_correlation >= 1.0:
        return math.inf          # BER is 1/2 at every Eb/N0
    tiny = np.finfo(float).tiny
    form = model.closed_form
    if ber >= tiny:
        # ideal orthogonal tones: Pb = 1/2 exp(-x/2) inverts to x = -2 ln(2 Pb)
        x_orth = -2.0 * math.log(2.0 * ber)
        if form == "orthogonal":
            return 10.0 * math.log10(x_orth)
    log_target = math.log(ber)
    from scipy import optimize          # imported where needed: a heavy module


    def f(x_db: float) -> float:
        p = float(ber_expected(10.0 ** (x_db / 10.0), model))
        return math.log(max(p, tiny)) - log_target

    if ber >= tiny:
        # Bracket from the closed forms: the orthogonal equal-energy link needs the
        # least Eb/N0; with rho and the energy ratio r >= 1, Pb <= 1/2 exp(-x (1-|rho|) / (1+r))
        # (the Marcum series of ber_correlated with every (a/b)^k replaced by 1), so
        # x_orth (1+r) / (2 (1-|rho|)) is enough.  A small margin keeps the signs strict.
        rho = model.tone_correlation if model.correlated else 0.0
        r = 10.0 ** (abs(model.imbalance_db) / 10.0) if model.unequal else 1.0
        lo = 10.0 * math.log10(x_orth) - 1e-3
        hi = 10.0 * math.log10(x_orth * (1.0 + r) / (2.0 * (1.0 - rho))) + 1e-3
        if f(lo) > 0.0 and f(hi) < 0.0:
            return optimize.brentq(f, lo, hi, xtol=1e-12, rtol=4 * np.finfo(float).eps, maxiter=200)
    lo, hi = -10.0, 20.0
    while f(lo) <= 0.0:
        lo -= 20.0
        if lo < -400.0:
            return -math.inf
    while f(hi) >= 0.0:
        lo, hi = hi, hi + 10.0
        if hi > 400.0:
            return math.inf
    return optimize.brentq(f, lo, hi, xtol=1e-12, rtol=4 * np.finfo(float).eps, maxiter=200)


def ebn0_required_db(ber, model: LinkModel = LinkModel()):
    """Average Eb/N0 (dB) at which ``ber_expected`` equals a given BER.

    Parameters
    ----------
    ber : array_like of float
        Target bit error rate(s).
    model : LinkModel, optional
        Link model; default ideal orthogonal equal-energy tones.

    Returns
    -------
    numpy.ndarray or numpy.float64
        Required Eb/N0 in dB, decreasing in ``ber``.  Conventions:

        * ``ber >= 0.5`` (the model's limit, approached only as Eb/N0 -> 0):
          ``nan`` -- no finite Eb/N0 gives it;
        * ``ber <= 0``: ``+inf``;
        * ``nan``: ``nan``;
        * ``model.tone_correlation == 1`` (BER is 1/2 everywhere) and
          ``0 < ber < 0.5``: ``+inf``.

    Notes
    -----
    For the ``"orthogonal"`` closed form the inverse is exact:
    ``Eb/N0 = -2 ln(2 Pb)``.  Otherwise ``ber_expected`` decreases strictly with
    Eb/N0 for ``|rho| < 1``; the root of ``log ber_expected(10^(x/10)) = log ber``
    is found with Brent's method to about 1e-12 dB, bracketed below by the
    orthogonal solution ``x_o`` and above by ``x_o (1 + r) / (2 (1 - |rho|))``
    (``r`` the tone energy ratio), where ``Pb <= 1/2 exp(-x (1 - |rho|) / (1 + r))``;
    if that bracket fails (underflow) it is found by stepping in dB.

    References
    ----------
    .. [1] R. P. Brent, *Algorithms for Minimization without Derivatives*,
       Prentice Hall, 1973 (root finder) -- from memory.
    .. [2] J. G. Proakis and M. Salehi, *Digital Communications*, McGraw-Hill,
       noncoherent orthogonal BFSK, ``Pb = 1/2 exp(-Eb/2N0)`` -- from memory.
    """
    arr = np.asarray(ber, dtype=float)
    if arr.ndim == 0:
        return np.float64(_required_db_scalar(float(arr), model))
    vec = np.vectorize(lambda p: _required_db_scalar(float(p), model), otypes=[float])
    return vec(arr)[()]


# ---------------------------------------------------------------------------
# Binomial statistics
# ---------------------------------------------------------------------------
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


# ---------------------------------------------------------------------------
# Implementation loss
# ---------------------------------------------------------------------------
@dataclass(frozen=True)
class LossEstimate:
    """Implementation loss and its approximate 95 % interval.

    Attributes
    ----------
    value : float
        Measured Eb/N0 minus required Eb/N0, dB (positive = worse than theory);
        ``nan`` when there were no errors (or the BER is at/above 0.5).
    ci95 : tuple of float
        ``(lo, hi)`` in dB; ``nan`` for an end that is not bounded by the data
        (``lo`` with zero errors), ``+inf`` for ``hi`` when the BER interval
        reaches 0.5.
    ber_used : float
        The measured BER ``errors / bits`` used for ``value``.
    """

    value: float
    ci95: tuple[float, float]
    ber_used: float


def implementation_loss_db(ebn0_db, ebn0_ci95_db, errors, bits,
                           reference_model: LinkModel = LinkModel()) -> LossEstimate:
    """Implementation loss of a measured link against a reference model.

    Parameters
    ----------
    ebn0_db : float
        Measured average Eb/N0, dB.
    ebn0_ci95_db : (float, float)
        95 % interval of the measured Eb/N0, dB.
    errors, bits : int
        Bit errors and bits compared.
    reference_model : LinkModel, optional
        Model the link is compared with; default ideal orthogonal BFSK.

    Returns
    -------
    LossEstimate
        ``value = ebn0_db - ebn0_required_db(errors/bits, reference_model)``.

    Notes
    -----
    Let ``R(p) = ebn0_required_db(p)`` (decreasing in ``p``), ``[pL, pH]`` the
    Clopper--Pearson 95 % interval of the BER and ``[E_lo, E_hi]`` the Eb/N0
    interval.  With ``R = R(p_hat)``::

        lo = value - sqrt((ebn0_db - E_lo)^2 + (R(pL) - R)^2)
        hi = value + sqrt((E_hi - ebn0_db)^2 + (R - R(pH))^2)

    i.e. the half-widths of the two intervals are added in quadrature on each
    side.  This is an approximation that treats the Eb/N0 and BER estimates as
    independent and each interval as a one-sigma-like scale; it is not an exact
    coverage statement.  If ``pH >= 0.5`` the upper end is ``+inf``.

    With zero errors there is no point estimate (``value = nan``) and only an
    upper bound, taken conservatively from the two interval ends together:
    ``ci95 = (nan, E_hi - R(pH))``.

    References
    ----------
    .. [1] C. J. Clopper and E. S. Pearson, *Biometrika*, 1934 (BER interval)
       -- from memory.
    """
    e = float(ebn0_db)
    e_lo, e_hi = (float(v) for v in ebn0_ci95_db)
    k = int(errors)
    n = int(bits)
    ber = k / n
    p_lo, p_hi = (float(v) for v in clopper_pearson(k, n, 0.95))

    def req(p: float) -> float:
        # At or above the limit theory needs no Eb/N0 at all: treat as -inf dB,
        # which sends the corresponding loss bound to +inf.
        if p >= BER_LIMIT:
            return -math.inf
        return float(ebn0_required_db(p, reference_model))

    r_at_hi = req(p_hi)
    if k == 0:
        return LossEstimate(math.nan, (math.nan, e_hi - r_at_hi), ber)

    if ber >= BER_LIMIT:
        r_at_lo = req(p_lo)
        # No point estimate; the loss is at least (E_lo - R(pL)).
        return LossEstimate(math.nan, (e_lo - r_at_lo, math.inf), ber)

    r = req(ber)
    r_at_lo = req(p_lo)
    value = e - r
    lo = value - math.hypot(e - e_lo, r_at_lo - r)
    hi = value + math.hypot(e_hi - e, r - r_at_hi) if math.isfinite(r_at_hi) else math.inf
    return LossEstimate(value, (lo, hi), ber)
