"""Branch statistics: signal gain and noise variance per tone, Eb/N0 and its interval.

Model (see DESIGN.md): when tone j is sent, ``z_j = g_j e^{j phi} + n_j`` and the
other branch ``z_i = rho g_j e^{j phi'} + n_i`` (leakage ``rho`` is zero for
orthogonal tones).  The noise ``n_i`` is circular complex Gaussian with
``E|n_i|^2 = s_i^2`` (``s_i^2 / 2`` on each real output, ``N0/2`` for a
unit-energy template).

Moment estimates
----------------
With ``S_j`` the mean of ``|z_j|^2`` over the symbols that sent tone j and
``U_i`` the mean of ``|z_i|^2`` over the symbols that sent the other tone, and
``r = |rho|^2``::

    S_0 = g_0^2 + s_0^2        U_1 = r g_0^2 + s_1^2
    S_1 = g_1^2 + s_1^2        U_0 = r g_1^2 + s_0^2

a linear system solved exactly for the four unknowns.  These are unbiased
moment estimates (the mean of a noncentral chi-square).

Eb/N0
-----
The correlator sees ``L`` of the ``sps`` samples of each symbol, so the
symbol energy is ``g^2 sps / L`` and::

    Eb/N0 = (g_0^2 + g_1^2) / (s_0^2 + s_1^2) * sps / L

(average bit energy of equiprobable bits over the mean noise density), which
for one tone is DESIGN.md's ``g_i^2 / (2 sigma_i^2)`` with ``sigma_i^2`` the
variance of a real output.

Interval: delta method on ``ln(Eb/N0)`` with the sample covariance of the
per-symbol powers in each group (the two groups are independent).
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

__all__ = ["GroupMoments", "BranchStats", "group_moments", "pool_moments", "branch_stats", "with_physical_ebn0"]

Z95 = 1.959963984540054  # standard normal 97.5% quantile (scipy.stats.norm.ppf(0.975))


@dataclass(frozen=True)
class GroupMoments:
    """Sufficient moments of the branch powers, grouped by the tone sent.

    Attributes
    ----------
    n : numpy.ndarray
        (2,) number of symbols that sent tone 0 and tone 1.
    mean : numpy.ndarray
        (2, 2): ``mean[j, i]`` = mean of ``|z_i|^2`` over symbols that sent tone j.
    cov : numpy.ndarray
        (2, 2, 2): ``cov[j]`` = sample covariance of ``(|z_0|^2, |z_1|^2)`` in group j.
    """

    n: np.ndarray
    mean: np.ndarray
    cov: np.ndarray


def group_moments(z: np.ndarray, sent: np.ndarray, mask: np.ndarray | None = None) -> GroupMoments:
    """Moments of ``|z_i|^2`` grouped by the tone sent (vectorised).

    The covariance is the unbiased sample covariance about the group means, as
    ``numpy.cov`` computes it.
    """
    z = np.asarray(z)
    power = np.empty((2, len(z)))                       # branch-major: one contiguous row per branch
    for i in (0, 1):
        power[i] = z[:, i].real ** 2 + z[:, i].imag ** 2
    sent = np.asarray(sent).astype(np.int64)
    use = None if mask is None else np.asarray(mask, bool)
    n = np.zeros(2)
    mean = np.zeros((2, 2))
    cov = np.zeros((2, 2, 2))
    for j in (0, 1):
        sel = sent == j if use is None else use & (sent == j)
        pj = np.compress(sel, power, axis=1)
        k = pj.shape[1]
        n[j] = k
        if k >= 2:
            mean[j] = pj.mean(axis=1)
            d = pj - mean[j][:, None]
            cov[j] = (d @ d.T) / (k - 1)
        elif k == 1:
            mean[j] = pj[:, 0]
    return GroupMoments(n=n, mean=mean, cov=cov)


def pool_moments(parts: list[GroupMoments]) -> GroupMoments:
    """Combine the moments of several bursts as if they were one (exact pooling)."""
    n = np.sum([g.n for g in parts], axis=0)
    mean = np.zeros((2, 2))
    cov = np.zeros((2, 2, 2))
    for j in (0, 1):
        if n[j] == 0:
            continue
        mean[j] = sum(g.n[j] * g.mean[j] for g in parts) / n[j]
        if n[j] >= 2:
            scatter = sum((g.n[j] - 1) * g.cov[j] + g.n[j] * np.outer(g.mean[j] - mean[j], g.mean[j] - mean[j])
                          for g in parts if g.n[j] > 0)
            cov[j] = scatter / (n[j] - 1)
    return GroupMoments(n=n, mean=mean, cov=cov)


def _solve(m: np.ndarray, r: float) -> tuple[np.ndarray, np.ndarray]:
    """Gains squared and noise variances from the group means (see module docstring)."""
    s0, u1 = m[0, 0], m[0, 1]
    u0, s1 = m[1, 0], m[1, 1]
    den = 1.0 - r * r
    g0 = ((s0 - u0) + r * (s1 - u1)) / den
    g1 = ((s1 - u1) + r * (s0 - u0)) / den
    n0 = u0 - r * g1
    n1 = u1 - r * g0
    return np.array([g0, g1]), np.array([n0, n1])


@dataclass(frozen=True)
class BranchStats:
    """Fitted branch statistics of a burst (or of several, pooled).

    Attributes
    ----------
    gain_sq : numpy.ndarray
        (2,) ``g_i^2``: signal energy seen by each correlator (sample units).
    noise_var_complex : numpy.ndarray
        (2,) ``E|n_i|^2`` per complex branch.
    n_symbols : numpy.ndarray
        (2,) symbols used per tone.
    ebn0 : float
        Eb/N0 (linear); ``nan`` when the signal energy estimate is not positive.
    ebn0_db : float
    ebn0_db_ci95 : (float, float)
    ebn0_tone_db : numpy.ndarray
        (2,) Eb/N0 of each tone alone (as the correlators see it).
    imbalance_db : float
        ``10 log10(g_1^2 / g_0^2)``: energy of the high tone over the low tone.
    data_aided : bool
        True when the tone sent was known from the reference pattern.
    correlator_ebn0_db : float
        Eb/N0 as the branch fit alone reads it (the energy the sent tone's
        template collects over the noise on the other), when ``ebn0`` is the
        physical figure of :func:`with_physical_ebn0`; the two agree for
        rectangular keying timed to the symbol, and their difference is what
        pulse shaping and intersymbol interference cost the correlators.
    """

    gain_sq: np.ndarray
    noise_var_complex: np.ndarray
    n_symbols: np.ndarray
    ebn0: float
    ebn0_db: float
    ebn0_db_ci95: tuple[float, float]
    ebn0_tone_db: np.ndarray
    imbalance_db: float
    data_aided: bool
    correlator_ebn0_db: float = float("nan")

    @property
    def signal_gain(self) -> np.ndarray:
        """``g_i`` (amplitude on the branch of the sent tone)."""
        return np.sqrt(np.clip(self.gain_sq, 0.0, None))

    @property
    def noise_var(self) -> np.ndarray:
        """Noise variance of each real output (I or Q) per tone: ``E|n_i|^2 / 2``."""
        return self.noise_var_complex / 2.0


def _db(x: float) -> float:
    return float(10.0 * np.log10(x)) if x > 0 and np.isfinite(x) else float("nan")


def branch_stats(moments: GroupMoments, rho_abs: float, energy_scale: float,
                 data_aided: bool) -> BranchStats:
    """Solve the moment equations and attach Eb/N0 with a 95% interval.

    Parameters
    ----------
    moments : GroupMoments
        From :func:`group_moments` (or pooled).
    rho_abs : float
        Tone correlation |rho| of the templates.
    energy_scale : float
        ``sps / L``: symbol energy over the energy the correlator collects.
    data_aided : bool
        Recorded in the result.

    Returns
    -------
    BranchStats

    References
    ----------
    .. [1] G. Casella and R. L. Berger, *Statistical Inference*, 2nd ed., 2002,
       the delta method (from memory).
    """
    r = float(rho_abs) ** 2
    m = moments.mean
    g2, s2 = _solve(m, r)

    def ratio(mm: np.ndarray) -> float:
        gg, ss = _solve(mm.reshape(2, 2), r)
        return (gg[0] + gg[1]) / (ss[0] + ss[1]) * energy_scale

    ebn0 = ratio(m.ravel())
    lo = hi = float("nan")
    if ebn0 > 0 and np.all(moments.n >= 2):
        # gradient of ln(ratio) with respect to the four means, by central differences
        x0 = m.ravel().astype(float)
        grad = np.zeros(4)
        for k in range(4):
            h = 1e-6 * max(abs(x0[k]), 1e-12)
            xp, xm = x0.copy(), x0.copy()
            xp[k] += h
            xm[k] -= h
            fp, fm = ratio(xp), ratio(xm)
            grad[k] = (np.log(fp) - np.log(fm)) / (2 * h) if fp > 0 and fm > 0 else np.nan
        cov = np.zeros((4, 4))
        cov[0:2, 0:2] = moments.cov[0] / moments.n[0]
        cov[2:4, 2:4] = moments.cov[1] / moments.n[1]
        var = float(grad @ cov @ grad)
        if np.isfinite(var) and var >= 0:
            sd_db = 10.0 / np.log(10.0) * np.sqrt(var)
            lo, hi = _db(ebn0) - Z95 * sd_db, _db(ebn0) + Z95 * sd_db
    tone = np.array([_db(g2[i] / s2[i] * energy_scale) if s2[i] > 0 else np.nan for i in (0, 1)])
    imb = _db(g2[1] / g2[0]) if g2[0] > 0 and g2[1] > 0 else float("nan")
    return BranchStats(
        gain_sq=g2, noise_var_complex=s2, n_symbols=moments.n.copy(),
        ebn0=float(ebn0) if ebn0 > 0 else float("nan"), ebn0_db=_db(ebn0),
        ebn0_db_ci95=(float(lo), float(hi)), ebn0_tone_db=tone, imbalance_db=imb,
        data_aided=bool(data_aided))


def with_physical_ebn0(stats: BranchStats, physical) -> BranchStats:
    """``stats`` with Eb/N0 and its interval taken from the physical estimate.

    ``physical`` is a :class:`analyzer.signal_energy.PhysicalEbN0` (or None, which
    leaves ``stats`` as it is): signal energy per bit over the noise density at
    the tones, whatever the pulse.  The branch fit's own figure moves to
    ``correlator_ebn0_db``.
    """
    if physical is None or not np.isfinite(physical.ebn0_db):
        return stats
    return replace(stats, ebn0=physical.ebn0, ebn0_db=physical.ebn0_db, ebn0_db_ci95=physical.ebn0_db_ci95,
                   correlator_ebn0_db=stats.ebn0_db)


def phase_continuity(z: np.ndarray, tone_index: np.ndarray) -> float:
    """How much the carrier phase carries over between symbols (0 = none, 1 = fully).

    With templates referred to absolute sample time, a continuous-phase
    transmitter gives the same phase to ``z`` of consecutive symbols that send
    the same tone; a transmitter with a new phase per symbol gives unrelated
    phases.  The statistic is ``|sum z_k conj(z_{k-1})| / sum |z_k z_{k-1}|``
    over such pairs, on the branch of the tone sent: near 1 for
    continuous-phase keying, about ``1/sqrt(pairs)`` otherwise.
    """
    z = np.asarray(z)
    b = np.asarray(tone_index).astype(np.int64)
    if len(b) < 3:
        return float("nan")
    same = np.flatnonzero(b[1:] == b[:-1]) + 1
    if same.size < 4:
        return float("nan")
    zs = z[np.arange(len(b)), b]                 # the branch of the tone sent, per symbol
    zz = zs[same] * np.conj(zs[same - 1])        # same tone in both symbols of each pair
    den = np.sum(np.abs(zz))
    return float(np.abs(np.sum(zz)) / den) if den > 0 else float("nan")
