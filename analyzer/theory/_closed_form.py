"""Closed-form bit error rates of noncoherent binary FSK and the Eb/N0 a BER needs.

Pure functions on numpy arrays and floats, plus a small frozen dataclass; no I/O.

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
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ._marcum import _bessel_series

__all__ = ["CORRELATION_NEGLIGIBLE", "IMBALANCE_NEGLIGIBLE_DB", "BER_LIMIT", "LinkModel",
           "ber_orthogonal", "ber_correlated", "ber_square_law", "ber_expected", "ebn0_required_db",
           "blind_ber"]

#: Tone correlation magnitude below which a link is treated as orthogonal.
CORRELATION_NEGLIGIBLE = 0.02
#: Tone imbalance (dB, magnitude) below which the two tone energies are treated as equal.
IMBALANCE_NEGLIGIBLE_DB = 0.1
#: BER approached by every model as Eb/N0 -> 0 (and reached at |rho| = 1).
BER_LIMIT = 0.5



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

    if ber >= tiny:
        # Bracket from the closed forms: the orthogonal equal-energy link needs the
        # least Eb/N0; with rho and the energy ratio r >= 1, Pb <= 1/2 exp(-x (1-|rho|) / (1+r))
        # (the Marcum series of ber_correlated with every (a/b)^k replaced by 1), so
        # x_orth (1+r) / (2 (1-|rho|)) is enough.  A small margin keeps the signs strict.
        rho = model.tone_correlation if model.correlated else 0.0
        r = 10.0 ** (abs(model.imbalance_db) / 10.0) if model.unequal else 1.0
        lo = 10.0 * math.log10(x_orth) - 1e-3
        hi = 10.0 * math.log10(x_orth * (1.0 + r) / (2.0 * (1.0 - rho))) + 1e-3
        if _log_ber_gap(lo, model, log_target) > 0.0 and _log_ber_gap(hi, model, log_target) < 0.0:
            return optimize.brentq(_log_ber_gap, lo, hi, args=(model, log_target), xtol=1e-12,
                                   rtol=4 * np.finfo(float).eps, maxiter=200)
    lo, hi = -10.0, 20.0
    while _log_ber_gap(lo, model, log_target) <= 0.0:
        lo -= 20.0
        if lo < -400.0:
            return -math.inf
    while _log_ber_gap(hi, model, log_target) >= 0.0:
        lo, hi = hi, hi + 10.0
        if hi > 400.0:
            return math.inf
    return optimize.brentq(_log_ber_gap, lo, hi, args=(model, log_target), xtol=1e-12,
                           rtol=4 * np.finfo(float).eps, maxiter=200)


def _log_ber_gap(x_db: float, model: LinkModel, log_target: float) -> float:
    """``ln ber_expected`` at ``x_db`` dB (floored at the smallest normal float) minus ``log_target``."""
    p = float(ber_expected(10.0 ** (x_db / 10.0), model))
    return math.log(max(p, np.finfo(float).tiny)) - log_target


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



def blind_ber(ebn0_db: float, ebn0_ci95_db, model: LinkModel) -> tuple[float, tuple[float, float]]:
    """BER predicted from the fitted branch statistics alone, with an interval.

    The Eb/N0 interval is mapped through the theory of the measured link
    (monotone), so the BER interval is ``[Pb(hi), Pb(lo)]``.
    """
    return (_ber_at_db(ebn0_db, model),
            (_ber_at_db(ebn0_ci95_db[1], model), _ber_at_db(ebn0_ci95_db[0], model)))


def _ber_at_db(x_db: float, model: LinkModel) -> float:
    """:func:`ber_expected` at ``x_db`` dB (``nan`` when ``x_db`` is not finite)."""
    return float(ber_expected(10 ** (x_db / 10), model)) if np.isfinite(x_db) else float("nan")
