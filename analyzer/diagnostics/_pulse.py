"""The measured pulse of each tone, what the rectangular template loses of it, and the leakage.

The symbols of each tone, derotated and phase-aligned, average into the
received pulse; its mismatch with the rectangular template is a loss the
correlators pay, and the energy a symbol leaves outside its pulse an
independent noise level.  The leakage is the signal measured on the branch of
the tone not sent.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["PulseShape", "measured_pulse", "Leakage", "leakage"]


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
    f = np.asarray(tones_hz, float)
    sym = _symbols(rows, sample_index, f, sample_rate_hz)
    mine = (sent == 0, sent == 1)
    counts = np.array([np.count_nonzero(m_) for m_ in mine])
    sums = _phase_aligned_sums(sym, sent, counts, f, sample_rate_hz)
    pulse, used, loss, mean = _mean_pulses(sym, sums, counts, np.asarray(noise_var_complex, float))
    npsd = _residual_noise(sym, pulse, mine, counts)
    return PulseShape(pulse, used, loss, float(mean), npsd)


# Symbol k of tone i derotated is x_k = a_k * rows[k] * q_n with the per-symbol phasor
# a_k = exp(-j 2 pi f_i n_k0 / fs) and the per-sample one q_n = exp(-j 2 pi f_i n / fs) (whole-
# sample windows; otherwise rows are derotated entry by entry and a = q = 1).  Every sum over a
# symbol's samples is then a product of the symbol matrix with a vector of length L, and every
# sum over symbols one with a vector of length n, so no (n, L) derotated copy is formed:
# * the phase of the even / odd samples, arg(a_k S_k) with S = rows @ (q on that parity);
# * exp(-j arg(a_k S_k)) a_k = conj(S_k) / |S_k|: a_k cancels from the mean pulse;
# * |x_k|^2 = |rows[k]|^2 and |<x_k, u>| = |rows[k] @ (q conj(u))| for the residual noise.
@dataclass(frozen=True)
class _Symbols:
    """The symbols of :func:`measured_pulse` and the phasors that derotate them (see the comment above)."""

    rows: np.ndarray        # (n, L) complex128 samples of every symbol
    mats: tuple             # per tone, the matrix the products take: rows, or rows derotated entry by entry
    q: np.ndarray           # (2, L) per-sample phasors q_n (ones when derotated entry by entry)
    first: np.ndarray       # (n,) capture index of each symbol's first sample
    contiguous: bool        # every row holds L consecutive samples


def _symbols(rows: np.ndarray, sample_index, f: np.ndarray, sample_rate_hz: float) -> _Symbols:
    """:class:`_Symbols` of ``rows`` with the sample index of every entry (n, L) or of each first one (n,)."""
    n, L = rows.shape
    idx = np.asarray(sample_index)
    if idx.ndim == 1:
        first, contiguous = idx, True
    else:
        first = idx[:, 0] if L > 0 else np.zeros(n)
        contiguous = bool(idx.size and np.all(idx[:, 1:] - idx[:, :-1] == 1)) if L > 1 else True
    if contiguous:
        q = np.exp(-2j * np.pi * np.outer(f / sample_rate_hz, np.arange(L)))        # (2, L)
        mats = (rows, rows)
    else:
        q = np.ones((2, L), complex)
        mats = tuple(rows * np.exp(-2j * np.pi * f[i] * idx / sample_rate_hz) for i in (0, 1))
    return _Symbols(rows, mats, q, first, contiguous)


def _right(sym: _Symbols, v: np.ndarray) -> np.ndarray:
    """``sym.mats[i] @ v[i]`` for both tones; ``v`` is (2, L, c), the result (n, 2, c)."""
    n, L = sym.rows.shape
    if sym.contiguous:
        c = v.shape[2]
        return _rows_times(sym.rows, v.transpose(1, 0, 2).reshape(L, 2 * c)).reshape(n, 2, c)
    return np.stack([_rows_times(sym.mats[i], v[i]) for i in (0, 1)], axis=1)


def _left(sym: _Symbols, w: np.ndarray) -> np.ndarray:
    """``w[i] @ sym.mats[i]`` for both tones; ``w`` is (2, c, n), the result (2, c, L)."""
    n, L = sym.rows.shape
    if sym.contiguous:
        return _times_rows(w.reshape(-1, n), sym.rows).reshape(2, w.shape[1], L)
    return np.stack([_times_rows(w[i], sym.mats[i]) for i in (0, 1)])


def _phase_aligned_sums(sym: _Symbols, sent: np.ndarray, counts: np.ndarray, f: np.ndarray,
                        sample_rate_hz: float) -> np.ndarray:
    """(2, 2, L): per tone, the sums over its symbols of the even and of the odd samples, phase-aligned.

    Each symbol's phase comes from the samples of the other parity, so that
    the noise of a sample never steers its own derotation (no bias towards
    the template); all symbols at once, each with the sums of the tone it
    sent (tones with fewer than 4 symbols are left out).
    """
    n, L = sym.rows.shape
    even = (np.arange(L) % 2 == 0)
    parity = np.stack([np.where(even, sym.q, 0), np.where(even, 0, sym.q)], axis=2)   # (2, L, 2)
    s_par = _right(sym, parity)                                                        # (n, 2, 2)
    k = np.flatnonzero(((sent == 0) & (counts[0] >= 4)) | ((sent == 1) & (counts[1] >= 4)))
    tone = sent[k]
    w = np.conj(np.take(s_par.reshape(2 * n, 2), 2 * k + tone, axis=0))               # (m, 2)
    mag = np.abs(w)
    with np.errstate(invalid="ignore", divide="ignore"):
        w *= 1.0 / mag                           # conj(S) / |S| (numpy divides by |S| + 0j so)
    zero = mag == 0
    if np.any(zero):                             # arg(0) = 0: the symbol keeps its own phasor a_k
        kz = np.nonzero(zero)[0]
        w[zero] = np.exp(-2j * np.pi * np.mod(f[tone[kz]] / sample_rate_hz * sym.first[k[kz]], 1.0)) \
            if sym.contiguous else 1.0
    weights = np.zeros((2, 2, n), complex)
    flat = weights.reshape(-1)
    flat[tone * (2 * n) + k] = w[:, 1]           # even samples take the odd samples' phase, and back
    flat[tone * (2 * n) + n + k] = w[:, 0]
    return _left(sym, weights)                                                          # (2, 2, L)


def _mean_pulses(sym: _Symbols, sums: np.ndarray, counts: np.ndarray, nv: np.ndarray):
    """Mean pulse per tone, symbols used, template loss per tone (dB) and of both together."""
    L = sym.rows.shape[1]
    even = (np.arange(L) % 2 == 0)
    pulse = np.zeros((2, L), complex)
    used = np.zeros(2, int)
    loss = np.full(2, np.nan)
    coll = np.zeros(2)
    tot = np.zeros(2)
    for i in (0, 1):
        if counts[i] < 4:
            continue
        m = sym.q[i] * np.where(even, sums[i, 0], sums[i, 1]) / counts[i]
        pulse[i] = m
        used[i] = counts[i]
        noise = L * max(float(nv[i]), 0.0) / counts[i]      # noise energy left in the mean (and in its sum)
        c = max(abs(m.sum()) ** 2 - noise, 0.0) / L
        e = max(float(np.sum(m.real ** 2 + m.imag ** 2)) - noise, c)
        coll[i], tot[i] = c, e
        loss[i] = max(0.0, -10 * np.log10(c / e)) if e > 0 and c > 0 else np.nan
    mean = max(0.0, -10 * np.log10(coll.sum() / tot.sum())) if tot.sum() > 0 and coll.sum() > 0 else float("nan")
    return pulse, used, loss, mean


def _residual_noise(sym: _Symbols, pulse: np.ndarray, mine, counts: np.ndarray) -> float:
    """Noise per sample: each symbol minus its projection on its tone's measured pulse, per degree of freedom."""
    n, L = sym.rows.shape
    nm = np.sqrt(np.sum(pulse.real ** 2 + pulse.imag ** 2, axis=1))
    fit = nm > 0
    if not (np.any(fit) and L > 1):
        return float("nan")
    u = np.where(fit[:, None], pulse, 0) / np.where(fit, nm, 1.0)[:, None]
    proj = _right(sym, (sym.q * np.conj(u))[:, :, None])[:, :, 0]                       # (n, 2)
    p2 = proj.real ** 2 + proj.imag ** 2
    if sym.contiguous and np.all(fit) and counts.sum() == n:
        v = sym.rows.reshape(-1).view(np.float64)
        energy_sum = float(np.dot(v, v))       # every symbol is fitted: one sum over all samples
    else:
        energy_sum = 0.0
        for i in np.flatnonzero(fit):
            v = sym.mats[i].view(np.float64)
            energy_sum += float(np.sum(np.einsum("ij,ij->i", v, v), where=mine[i]))
    p2 = np.ascontiguousarray(p2.T)
    proj_sum = sum(float(np.sum(p2[i], where=mine[i])) for i in np.flatnonzero(fit))
    return float((energy_sum - proj_sum) / counts[fit].sum() / (L - 1))


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
