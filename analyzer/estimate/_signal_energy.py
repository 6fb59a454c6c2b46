"""Eb/N0 as the physical quantity at the capture: signal energy per bit over N0.

The branch fit of :mod:`analyzer.estimate` reads the signal from the sent
tone's correlator and the noise from the other one.  That is exact for
rectangular keying timed to the symbol, but a shaped frequency pulse
(Gaussian, raised cosine), receiver filters or tones that are not orthogonal
put part of every symbol's energy outside the sent template and part of it
into the other branch.  That part is signal, not noise: read as noise it
caps the measured Eb/N0 (a 2400 Bd Gaussian BT 0.5 burst at 30 dB read
about 14 dB).

Model
-----
Each symbol window (``L`` samples, real representation ``y_k``: the I and Q
parts for complex baseband, the samples themselves for real audio) is
projected on an orthonormal basis of the band the burst occupies (tones at
``f_i + m fs/L``, ``|m| <= 2``: complex exponentials for I/Q, cosines and sines
for audio).  With the symbol aligned to its window, the signal in window k is

    ``s_k = a_k cos(phi_k) u_c + a_k sin(phi_k) v_c``

where the waveform pair ``(u_c, v_c)`` depends only on the context ``c`` of
the symbol (the tones of symbols ``k - r .. k + r``: the frequency pulse, the
filters and the tone values are the same for every symbol of one context)
and ``phi_k`` is the carrier phase, so within a context the signal spans a
fixed two-dimensional real subspace.  It is estimated per context as the two
leading principal directions of the windows; what lies outside it is noise.

* Noise at tone ``i``: the residual (window minus its projection on its
  context's subspace) projected on tone i's template pair, divided by the
  dimensions of that template the residual keeps
  (``2 - ||P T_i||_F^2``).  ``N0 = sigma_0^2 + sigma_1^2`` (per real dimension, averaged
  over the two tones, times two): the noise density where the receiver
  looks, white or not.
* Signal energy: the energy in the context subspace less the noise it holds
  (``2 sigma^2`` of the sent tone).  Energy in a subspace fitted on the same
  symbols is too high by about as much as energy in one fitted on the other
  half (``N/2`` symbols) is too low, twice as much (first order in ``1/N``,
  the spiked-covariance result), so ``(2 in + cross) / 3`` is used -- for the
  noise too, whose in-sample residual lacks the noise the fit took and whose
  cross-fitted residual holds the signal the other half's subspace missed.  ``Es`` is scaled by ``sps / L`` for the samples a
  symbol has beyond its window.
* ``Eb/N0 = Es / N0`` (one bit per symbol).

The estimate is a function of the sums of seven per-symbol figures; those
sums and their second moments (:class:`EnergySums`) pool exactly across
bursts, and the 95% interval is the delta method on ``ln(Eb/N0)`` with the
sample covariance of the per-symbol figures.

References
----------
.. [1] I. M. Johnstone, "On the distribution of the largest eigenvalue in
   principal components analysis," Ann. Statist. 29(2), 2001, and D. Paul,
   "Asymptotics of sample eigenstructure for a large dimensional spiked
   covariance model," Statistica Sinica 17, 2007: the in-sample bias of the
   leading eigenvalues (from memory).
.. [2] G. Casella and R. L. Berger, *Statistical Inference*, 2nd ed., 2002, the
   delta method (from memory).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["EnergySums", "band_basis", "symbol_contexts", "energy_sums", "pool_energy", "physical_ebn0",
           "PhysicalEbN0"]

Z95 = 1.959963984540054  # standard normal 97.5% quantile (scipy.stats.norm.ppf(0.975))

#: Bins either side of each tone (in units of fs / L) that the band basis spans.
BAND_BINS = 2
#: Fewest symbols a context needs to be fitted; symbols of thinner contexts are left out.
MIN_CONTEXT_SYMBOLS = 8
#: Symbols per context (on average) a context shape needs to be tried.
WIDE_CONTEXT_SYMBOLS = 40

# columns of the per-symbol figures
_E, _Q0, _D0, _Q1, _D1, _ONE, _TONE1 = range(7)


@dataclass(frozen=True)
class EnergySums:
    """Sufficient sums of the per-symbol figures of :func:`energy_sums` (pool by adding).

    Attributes
    ----------
    s : numpy.ndarray
        (7,) sums over symbols of ``(e, q0, d0, q1, d1, 1, [tone 1 sent])``:
        signal-subspace energy, noise energy on each tone's template pair and
        the template dimensions that noise had, a count and the symbols of tone 1.
    m : numpy.ndarray
        (7, 7) sums of the products of those figures.
    scale : float
        ``sps / L``: symbol energy over window energy.
    """

    s: np.ndarray
    m: np.ndarray
    scale: float

    @property
    def n(self) -> int:
        return int(round(self.s[_ONE]))


@dataclass(frozen=True)
class PhysicalEbN0:
    """Eb/N0 from signal energy and noise density (see module docstring).

    Attributes
    ----------
    ebn0 : float
        Linear; ``nan`` when not measurable.
    ebn0_db : float
    ebn0_db_ci95 : (float, float)
    symbol_energy : float
        ``Es`` in the units of the correlator input (per symbol).
    noise_var_complex : numpy.ndarray
        (2,) noise density at each tone, as the variance of a complex unit-energy branch.
    n_symbols : int
        Symbols that entered the fit.
    """

    ebn0: float
    ebn0_db: float
    ebn0_db_ci95: tuple[float, float]
    symbol_energy: float
    noise_var_complex: np.ndarray
    n_symbols: int


def _orthonormal(a: np.ndarray) -> np.ndarray:
    """Orthonormal basis of the column space of ``a`` (SVD; near-dependent columns dropped)."""
    u, s, _ = np.linalg.svd(a, full_matrices=False)
    return u[:, s > 1e-6 * s[0]] if s.size and s[0] > 0 else u[:, :0]


def _real_columns(v: np.ndarray, real: bool) -> np.ndarray:
    """Real representation of complex waveforms ``v`` (L, m): I/Q -> the I and Q parts of
    ``v`` and ``j v`` stacked (2L, 2m); audio -> their real and imaginary parts (L, 2m)."""
    if real:
        return np.concatenate([v.real, v.imag], axis=1)
    return np.concatenate([np.vstack([v.real, v.imag]), np.vstack([-v.imag, v.real])], axis=1)


def band_basis(tones_hz, sample_rate_hz: float, window: int, real: bool, bins: int = BAND_BINS) -> np.ndarray:
    """Orthonormal real basis of the band around the two tones, shape ``(2L or L, D)``.

    Complex exponentials (I/Q) or cosines and sines (audio) at ``f_i + m fs/L``
    for ``|m| <= bins``; columns that depend on others (tones a whole number of
    bins apart, 0 Hz for audio) are dropped.
    """
    n = np.arange(int(window))
    step = sample_rate_hz / window
    freqs = np.array([f + m * step for f in tones_hz for m in range(-bins, bins + 1)])
    v = np.exp(2j * np.pi * np.outer(n, freqs) / sample_rate_hz)
    return _orthonormal(_real_columns(v, real))


def template_pairs(tones_hz, sample_rate_hz: float, window: int, real: bool, basis: np.ndarray) -> list:
    """Each tone's template as an orthonormal pair in the coordinates of ``basis`` (D, 2)."""
    n = np.arange(int(window))
    out = []
    for f in tones_hz:
        w = np.exp(2j * np.pi * f * n / sample_rate_hz)[:, None]
        out.append(_orthonormal(basis.T @ _real_columns(w, real)))
    return out


def symbol_contexts(tone_index: np.ndarray, back: int, ahead: int) -> np.ndarray:
    """Context code of each symbol: the tones of symbols ``k - back .. k + ahead`` as a
    binary number; -1 where the context runs past either end."""
    b = np.asarray(tone_index).astype(np.int64)
    n = len(b)
    code = np.full(n, -1, np.int64)
    span = back + ahead
    if n <= span:
        return code
    c = np.zeros(n - span, np.int64)
    for j in range(span + 1):
        c = 2 * c + b[j:n - span + j]
    code[back:n - ahead] = c
    return code


def _leading_pairs(grams: np.ndarray) -> np.ndarray:
    """The two leading eigenvectors (k, D, 2) of each of the Gram matrices ``grams`` (k, D, D):
    the two leading principal directions, about zero, of the rows they were formed from."""
    _, vec = np.linalg.eigh(grams)
    return np.ascontiguousarray(vec[..., -2:])


def _subspace_figures(c: np.ndarray, yt: list, ut: list, dims: np.ndarray) -> np.ndarray:
    """Per-symbol figures (n, 5) of rows ``y`` from their coordinates ``c = y u`` (n, 2) in
    each row's signal subspace ``u``: the energy in it, and the residual ``y - c u^T`` on each
    tone's template pair ``t``, as ``y t - c (u^T t)`` from ``yt`` (n, 2) and ``ut`` (n, 2, 2)
    per tone, with the template dimensions ``dims`` (n, 2) the residual keeps (the same
    figures as projecting the residual itself, to rounding)."""
    out = np.empty((len(c), 5))
    c0, c1 = c[:, :1], c[:, 1:]
    out[:, 0] = (c0 * c0 + c1 * c1)[:, 0]
    for i, (yt_i, ut_i) in enumerate(zip(yt, ut)):
        p = yt_i - c0 * ut_i[:, 0] - c1 * ut_i[:, 1]
        out[:, 1 + 2 * i] = np.sum(p * p, axis=1)
        out[:, 2 + 2 * i] = dims[:, i]
    return out


#: Weights of the in-sample and the cross-fitted figures: to first order in
#: 1/N the subspace fitted on all N symbols of a context is too close to them
#: by half as much as the one fitted on the other N/2 is too far, so
#: (2 in + cross) / 3 has no first-order bias (see module docstring).
_IN_WEIGHT, _CROSS_WEIGHT = 2.0 / 3.0, 1.0 / 3.0


def _context_figures(ys: list[np.ndarray], pairs: list) -> np.ndarray:
    """Per-symbol figures (n, 5): e, q0, d0, q1, d1 (see module docstring) of the contexts'
    rows ``ys``, one array per context, in that order.

    Each context's subspace is fitted on all its rows (in-sample) and on each
    half (even and odd positions), the figures of a half taken with the other
    half's (cross-fitted); the eigenproblems of all contexts are solved in one
    call, and each context's rows are projected on its three fits and the
    templates in one product.
    """
    grams = []
    for y in ys:
        even, odd = y[0::2], y[1::2]
        grams += [y.T @ y, odd.T @ odd, even.T @ even]
    vec = _leading_pairs(np.stack(grams))                     # (3 contexts, D, 2): all, odd, even
    ut = [np.matmul(vec.transpose(0, 2, 1), t) for t in pairs]  # (3 contexts, 2, 2) per tone
    dims = np.stack([t.shape[1] - np.sum(a ** 2, axis=(1, 2)) for t, a in zip(pairs, ut)], axis=1)
    t_all = np.concatenate(pairs, axis=1)
    # per row: coordinates in its context's fits (all, odd half, even half), then on the templates
    proj = np.concatenate([y @ np.concatenate([vec[3 * j], vec[3 * j + 1], vec[3 * j + 2], t_all], axis=1)
                           for j, y in enumerate(ys)])
    sizes = [len(y) for y in ys]
    ctx = np.repeat(3 * np.arange(len(ys)), sizes)
    odd_row = (np.concatenate([np.arange(n) for n in sizes]) % 2).astype(bool)
    cross = ctx + 1 + odd_row                                  # even rows: the odd half's fit, and back
    edges = 6 + np.cumsum([0] + [t.shape[1] for t in pairs])
    yt = [proj[:, a:b] for a, b in zip(edges[:-1], edges[1:])]
    c_cross = np.where(odd_row[:, None], proj[:, 4:6], proj[:, 2:4])
    out = _IN_WEIGHT * _subspace_figures(proj[:, 0:2], yt, [a[ctx] for a in ut], dims[ctx])
    out += _CROSS_WEIGHT * _subspace_figures(c_cross, yt, [a[cross] for a in ut], dims[cross])
    return out


def energy_sums(rows: np.ndarray, tone_index: np.ndarray, tones_hz, sample_rate_hz: float,
                real: bool, scale: float, mask: np.ndarray | None = None) -> EnergySums | None:
    """The per-symbol figures of a burst, summed (see module docstring).

    Parameters
    ----------
    rows : numpy.ndarray
        (n, L) complex samples of each symbol window (real-valued for audio).
    tone_index : numpy.ndarray
        Tone sent per symbol (known from the pattern, or decided).
    tones_hz : (float, float)
        Tones of the correlator templates.
    sample_rate_hz : float
    real : bool
        The correlator input is real audio.
    scale : float
        ``sps / L``.
    mask : numpy.ndarray, optional
        Symbols whose tone is known (the others leave the fit and make their
        neighbours' contexts unknown).

    Returns
    -------
    EnergySums or None
        None when no context has enough symbols.
    """
    rows = np.asarray(rows)
    n, L = rows.shape
    if n < 2 * MIN_CONTEXT_SYMBOLS or L < 2:
        return None
    b = np.asarray(tone_index).astype(np.int64)
    known = None if mask is None else np.asarray(mask, bool)
    basis = band_basis(tones_hz, sample_rate_hz, L, real, BAND_BINS)
    pairs = template_pairs(tones_hz, sample_rate_hz, L, real, basis)
    y = (rows.real if real else np.concatenate([rows.real, rows.imag], axis=1)) @ basis
    best = None
    for back, ahead in CONTEXT_SHAPES:
        if n < 2 ** (back + ahead + 1) * WIDE_CONTEXT_SYMBOLS and (back, ahead) != CONTEXT_SHAPES[0]:
            continue
        if best is not None and not _ratio(best.s, best.scale)[0] >= WIDER_CONTEXT_MIN_ESN0:
            break
        got = _sums_for_contexts(y, b, known, back, ahead, pairs, scale)
        if got is None:
            continue
        # a wider context must lower the noise left outside the signal by a margin:
        # what it explains beyond the narrower one is intersymbol interference
        if best is None or _noise_density(got) < (1.0 - WIDER_CONTEXT_GAIN) * _noise_density(best):
            best = got
    return best


#: Context shapes tried (symbols before, after): the immediate neighbours; two
#: either side (Gaussian BT 0.3, raised-cosine transitions); three before and
#: one after, and four before (causal receiver filters ring on after a change).
CONTEXT_SHAPES = ((1, 1), (2, 2), (3, 1), (4, 1))
#: A wider context is kept when it lowers the noise estimate by this fraction or more.
WIDER_CONTEXT_GAIN = 0.01
#: Wider contexts are tried only above this Es/N0 (linear; 15 dB): interference
#: from beyond the immediate neighbours is 30 dB or more below the signal for
#: the pulses and filters radios use, so below this it is a few per cent of the
#: noise, less than what fitting four times as many contexts costs in
#: second-order bias.
WIDER_CONTEXT_MIN_ESN0 = 10 ** 1.5


def _noise_density(s: EnergySums) -> float:
    return float(s.s[_Q0] / s.s[_D0] + s.s[_Q1] / s.s[_D1])


def _sums_for_contexts(y: np.ndarray, b: np.ndarray, known, back: int, ahead: int, pairs: list,
                       scale: float) -> EnergySums | None:
    """:class:`EnergySums` of band coordinates ``y`` with contexts of ``back`` and ``ahead`` symbols."""
    code = symbol_contexts(b, back, ahead)
    if known is not None:
        unknown = np.flatnonzero(~known)
        for j in range(-ahead, back + 1):          # symbol k is unusable if any of k-back..k+ahead is unknown
            idx = unknown + j
            code[idx[(idx >= 0) & (idx < len(code))]] = -1
    groups = [idx for c in np.unique(code[code >= 0])
              if (idx := np.flatnonzero(code == c)).size >= MIN_CONTEXT_SYMBOLS]
    if not groups:
        return None
    idx = np.concatenate(groups)
    v = np.column_stack([_context_figures([y[g] for g in groups], pairs), np.ones(idx.size),
                         b[idx].astype(float)])
    if v[:, _D0].sum() <= 0 or v[:, _D1].sum() <= 0:
        return None
    return EnergySums(s=v.sum(axis=0), m=v.T @ v, scale=float(scale))


def pool_energy(parts: list[EnergySums]) -> EnergySums | None:
    """Sums of several bursts as one (exact); None for none."""
    parts = [p for p in parts if p is not None]
    if not parts:
        return None
    n = sum(p.n for p in parts)
    scale = sum(p.scale * p.n for p in parts) / max(n, 1)
    return EnergySums(s=sum(p.s for p in parts), m=sum(p.m for p in parts), scale=float(scale))


def _ratio(s: np.ndarray, scale: float) -> tuple[float, float, np.ndarray]:
    """Eb/N0, Es and the two noise variances (per real dimension) from the sums."""
    n = s[_ONE]
    n1 = s[_TONE1]
    var = np.array([s[_Q0] / s[_D0], s[_Q1] / s[_D1]])
    es = (s[_E] - 2.0 * ((n - n1) * var[0] + n1 * var[1])) / n * scale
    n0 = var[0] + var[1]
    return es / n0, es, var


def _db(x: float) -> float:
    return float(10.0 * np.log10(x)) if x > 0 and np.isfinite(x) else float("nan")


def physical_ebn0(sums: EnergySums | None) -> PhysicalEbN0 | None:
    """Eb/N0, its 95% interval and the noise density at each tone from :class:`EnergySums`."""
    if sums is None:
        return None
    s = np.asarray(sums.s, float)
    n = s[_ONE]
    if n < 2 or s[_D0] <= 0 or s[_D1] <= 0:
        return None
    ratio, es, var = _ratio(s, sums.scale)
    lo = hi = float("nan")
    if ratio > 0 and np.isfinite(ratio):
        # gradient of ln(ratio) in the sums, by central differences
        grad = np.zeros(7)
        for k in (_E, _Q0, _D0, _Q1, _D1):
            h = 1e-6 * max(abs(s[k]), 1e-12)
            sp, sm = s.copy(), s.copy()
            sp[k] += h
            sm[k] -= h
            rp, rm = _ratio(sp, sums.scale)[0], _ratio(sm, sums.scale)[0]
            grad[k] = (np.log(rp) - np.log(rm)) / (2 * h) if rp > 0 and rm > 0 else np.nan
        cov = sums.m - np.outer(s, s) / n           # scatter of the per-symbol figures = cov of the sums
        v = float(grad @ cov @ grad) * n / max(n - 1, 1)
        if np.isfinite(v) and v >= 0:
            sd_db = 10.0 / np.log(10.0) * np.sqrt(v)
            lo, hi = _db(ratio) - Z95 * sd_db, _db(ratio) + Z95 * sd_db
    return PhysicalEbN0(ebn0=float(ratio) if ratio > 0 else float("nan"), ebn0_db=_db(ratio),
                        ebn0_db_ci95=(float(lo), float(hi)), symbol_energy=float(es),
                        noise_var_complex=2.0 * var, n_symbols=int(n))
