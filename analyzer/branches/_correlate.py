"""The noncoherent quadrature receiver: four correlator outputs per symbol.

For each tone ``f_i`` the receiver correlates every symbol with the unit-energy
rectangular template ``w_i[m] = exp(j 2 pi f_i n_m / fs) / sqrt(L)`` over the
``L`` whole samples that lie inside the symbol.  The in-phase and quadrature
outputs are the real and imaginary parts of ``z_i = <x, w_i>``, giving the four
real branch outputs I0, Q0, I1, Q1 per symbol.

Templates are referred to absolute sample time, so a continuous-phase
transmitter and a phase-discontinuous one are treated alike: the unknown
carrier phase only rotates ``z_i``, which a noncoherent receiver ignores.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property

import numpy as np

__all__ = ["SymbolGrid", "BranchOutputs", "EnergyTrace", "symbol_grid", "oscillator", "phasors", "correlate",
           "correlate_at",
           "window_energy", "energy_trace", "sliding_sums", "template_correlation"]

#: Block length of :func:`oscillator` (a power of two).
_OSC_BLOCK = 256


def _block_phasors(cycles_per_sample: np.ndarray, first: int, n_blocks: int) -> tuple[np.ndarray, np.ndarray]:
    """Phasor tables for ``n = first + B q + r``: ``coarse[q]`` and ``fine[r]``, one column per frequency.

    ``B`` is :data:`_OSC_BLOCK`; phases are reduced modulo one cycle before the
    exponential, so the error is that of the float64 phase itself (about 1e-16
    of the cycle count).
    """
    cyc = np.atleast_1d(np.asarray(cycles_per_sample, dtype=float))
    blocks = int(first) + _OSC_BLOCK * np.arange(n_blocks, dtype=np.float64)
    coarse = np.exp(-2j * np.pi * np.mod(np.outer(blocks, cyc), 1.0))
    fine = np.exp(-2j * np.pi * np.mod(np.outer(np.arange(_OSC_BLOCK, dtype=np.float64), cyc), 1.0))
    return coarse, fine


def oscillator(freq_hz: float, sample_rate_hz: float, first: int, count: int) -> np.ndarray:
    """``exp(-j 2 pi f n / fs)`` for ``n = first .. first + count - 1``.

    Formed as the outer product of a coarse phasor (one per block of
    :data:`_OSC_BLOCK` samples) and a fine one (within the block), so each
    sample costs one complex multiply instead of a complex exponential (see
    :func:`_block_phasors` for the precision).
    """
    count = int(count)
    if count <= 0:
        return np.empty(0, complex)
    coarse, fine = _block_phasors(float(freq_hz) / float(sample_rate_hz), first, -(-count // _OSC_BLOCK))
    return (coarse[:, 0][:, None] * fine[:, 0][None, :]).ravel()[:count]


def phasors(freqs_hz, sample_rate_hz: float, n: np.ndarray) -> np.ndarray:
    """``exp(-j 2 pi f_i n_k / fs)`` for integer sample indices ``n`` (any order), shape ``(len(n), len(f))``.

    Each index is split as ``n = n_min + B q + r`` (:func:`_block_phasors`):
    one complex exponential per block ``q`` and per offset ``r``, and one
    complex multiply per entry -- instead of a complex exponential per entry.
    """
    f = np.atleast_1d(np.asarray(freqs_hz, dtype=float))
    n = np.asarray(n, dtype=np.int64)
    if n.size == 0:
        return np.empty((0, f.size), complex)
    n0 = int(n.min())
    q, r = np.divmod(n - n0, _OSC_BLOCK)
    coarse, fine = _block_phasors(f / float(sample_rate_hz), n0, int(q.max()) + 1)
    return np.take(coarse, q, axis=0) * np.take(fine, r, axis=0)


def _read_only(a: np.ndarray) -> np.ndarray:
    a.flags.writeable = False
    return a


@dataclass(frozen=True)
class SymbolGrid:
    """Where the symbols of a burst lie, in capture samples.

    Attributes
    ----------
    first_start : float
        Fractional sample at which symbol 0 begins.
    samples_per_symbol : float
        Measured symbol period in samples (fs / measured symbol rate).
    n_symbols : int
        Number of symbols.
    window : int
        Whole samples used per symbol, ``L = floor(samples_per_symbol)``.
    """

    first_start: float
    samples_per_symbol: float
    n_symbols: int
    window: int

    @cached_property
    def starts(self) -> np.ndarray:
        """Fractional start sample of every symbol (read-only; computed once per grid)."""
        return _read_only(self.first_start + np.arange(self.n_symbols) * self.samples_per_symbol)

    @cached_property
    def first_samples(self) -> np.ndarray:
        """First whole sample used by each symbol (``ceil`` of its start; read-only, computed once)."""
        return _read_only(np.ceil(self.starts - 1e-9).astype(np.int64))

    def __getstate__(self):
        # the cached positions are not pickled (a grid sent between processes is recomputed on demand)
        return {k: v for k, v in self.__dict__.items() if k not in ("starts", "first_samples")}

    @property
    def stop(self) -> float:
        """Fractional sample just after the last symbol."""
        return self.first_start + self.n_symbols * self.samples_per_symbol


def symbol_grid(first_start: float, samples_per_symbol: float, n_symbols: int) -> SymbolGrid:
    """Build a :class:`SymbolGrid` with the largest window that fits inside each symbol.

    The window is ``floor(sps + 0.02)``: a measured period a hair under a
    whole number of samples (a rate error of a few ppm) must not cost a whole
    sample of every symbol.
    """
    window = int(np.floor(samples_per_symbol + 0.02))
    if window < 2:
        raise ValueError("fewer than two samples per symbol")
    return SymbolGrid(float(first_start), float(samples_per_symbol), int(n_symbols), window)


@dataclass(frozen=True)
class BranchOutputs:
    """Correlator outputs of one burst.

    Attributes
    ----------
    z : numpy.ndarray
        complex128, shape (n_symbols, 2): ``z[:, i] = I_i + j Q_i`` for tone i.
    tones_hz : tuple of float
        Template frequencies (f0, f1).
    grid : SymbolGrid
        Symbol positions used.
    """

    z: np.ndarray
    tones_hz: tuple[float, float]
    grid: SymbolGrid

    @property
    def iq(self) -> np.ndarray:
        """The four real outputs per symbol as columns I0, Q0, I1, Q1."""
        return np.column_stack([self.z[:, 0].real, self.z[:, 0].imag,
                                self.z[:, 1].real, self.z[:, 1].imag])

    @property
    def envelopes(self) -> np.ndarray:
        """|z0|, |z1| per symbol, shape (n_symbols, 2)."""
        return np.abs(self.z)


def symbol_rows(x: np.ndarray, x_start: int, grid: SymbolGrid) -> np.ndarray:
    """Gather the samples of every symbol into a matrix.

    Parameters
    ----------
    x : numpy.ndarray
        Complex samples; ``x[0]`` is capture sample ``x_start``.
    x_start : int
        Capture index of ``x[0]``.
    grid : SymbolGrid
        Symbol positions (capture samples).

    Returns
    -------
    numpy.ndarray
        shape (n_symbols, L): row ``k`` holds the ``L`` samples of symbol
        ``k`` from its first whole sample ``grid.first_samples[k]``.
    """
    return _windows(x, grid.first_samples - x_start, grid.window)


def _windows(x: np.ndarray, local_first: np.ndarray, window: int) -> np.ndarray:
    """Rows ``x[s : s + window]`` for each ``s`` of ``local_first`` (a copy, one row at a time)."""
    if local_first.size and (local_first.min() < 0 or local_first.max() + window > len(x)):
        raise ValueError("symbol grid runs outside the samples given")
    if len(x) < window:
        return np.empty((0, window), x.dtype)
    return np.lib.stride_tricks.sliding_window_view(x, window)[local_first]


def correlate(x: np.ndarray, x_start: int, grid: SymbolGrid, tones_hz, sample_rate_hz: float,
              chunk: int = 1 << 15) -> BranchOutputs:
    """Correlate every symbol with the two unit-energy tone templates.

    Parameters
    ----------
    x : numpy.ndarray
        Complex samples covering the burst; ``x[0]`` is capture sample ``x_start``.
    x_start : int
        Capture index of ``x[0]``.
    grid : SymbolGrid
        Symbol positions.
    tones_hz : sequence of two floats
        Template frequencies f0 < f1 (Hz).
    sample_rate_hz : float
        Sample rate.
    chunk : int
        Symbols processed per vectorised step (bounds memory on long bursts).

    Returns
    -------
    BranchOutputs
    """
    f = np.asarray(tones_hz, dtype=float)
    z = correlate_at(x, x_start, grid.first_samples, grid.window, f, sample_rate_hz, chunk)
    return BranchOutputs(z=z, tones_hz=(float(f[0]), float(f[1])), grid=grid)


def correlate_at(x: np.ndarray, x_start: int, first_samples: np.ndarray, window: int, tones_hz,
                 sample_rate_hz: float, chunk: int = 1 << 15) -> np.ndarray:
    """The ``z`` of :func:`correlate` for windows of ``window`` samples starting at the
    capture samples ``first_samples`` (any order; shape ``(len(first_samples), 2)``)."""
    f = np.asarray(tones_hz, dtype=float)
    L = int(window)
    firsts = np.asarray(first_samples, dtype=np.int64)
    z = np.empty((firsts.size, f.size), dtype=complex)
    m = np.arange(L)
    # w_i[n] = exp(j 2 pi f_i n / fs)/sqrt(L) written as exp(j 2 pi f_i n0/fs) * exp(j 2 pi f_i m/fs)
    base = np.exp(-2j * np.pi * np.outer(m, f) / sample_rate_hz) / np.sqrt(L)   # (L, 2), conj template
    for lo in range(0, firsts.size, chunk):
        hi = min(lo + chunk, firsts.size)
        n0 = firsts[lo:hi]
        z[lo:hi] = _window_products(x, n0 - x_start, L, base) * phasors(f, sample_rate_hz, n0)
    return z


#: Runs of back-to-back windows taken as views (no copy) when there are at most this many.
_MAX_RUNS = 32


def _window_products(x: np.ndarray, local_first: np.ndarray, window: int, base: np.ndarray) -> np.ndarray:
    """``rows @ base`` for the rows ``x[s : s + window]``, ``s`` in ``local_first``.

    Windows that follow each other back to back (the usual case: a symbol
    period a hair over a whole number of samples) are a reshaped view of
    ``x``; only when the starts break into many runs are the rows copied out.
    """
    n = local_first.size
    if n == 0:
        return np.zeros((0, base.shape[1]), dtype=np.result_type(x, base))
    if local_first.min() < 0 or local_first.max() + window > len(x):
        raise ValueError("symbol grid runs outside the samples given")
    cuts = np.flatnonzero(np.diff(local_first) != window) + 1
    if cuts.size >= _MAX_RUNS:
        return _windows(x, local_first, window) @ base
    out = np.empty((n, base.shape[1]), dtype=np.result_type(x, base))
    for a, b in zip(np.r_[0, cuts], np.r_[cuts, n]):
        s0 = int(local_first[a])
        out[a:b] = x[s0:s0 + (b - a) * window].reshape(b - a, window) @ base
    return out


def window_energy(x: np.ndarray, x_start: int, first: int, stop: int, window: int, tones_hz,
                  sample_rate_hz: float, metric: str = "energy") -> np.ndarray:
    """Total correlator energy ``|z0|^2 + |z1|^2`` of a window starting at every sample.

    Parameters
    ----------
    x : numpy.ndarray
        Complex samples; ``x[0]`` is capture sample ``x_start``.
    x_start : int
        Capture index of ``x[0]``.
    first, stop : int
        Capture indices of the first and one past the last window start.
    window : int
        Samples per window (the grid's ``window``).
    tones_hz : sequence of two floats
        Template frequencies (Hz).
    sample_rate_hz : float
        Sample rate.
    metric : {"energy", "contrast"}
        ``"energy"``: ``|z0|^2 + |z1|^2``.  ``"contrast"``: ``||z1|^2 - |z0|^2|``,
        the energy of the stronger branch less that of the weaker one -- with
        square-law decisions, the sent branch's energy less the other's.  A
        window that straddles a change of tone loses energy on the sent branch
        *and* leaks it into the other, so the contrast falls off on both sides
        of the symbol boundary for any keying; the total energy of a
        continuous-phase burst falls off much more slowly.
    Returns
    -------
    numpy.ndarray
        ``e[n - first]`` for ``first <= n < stop``: the energy
        :func:`correlate` gives a symbol whose first sample is ``n`` (the
        phase rotation it applies has unit magnitude), computed once for
        every start so that many shifted grids can share it.
    """
    lo, hi = first - x_start, stop - x_start
    if lo < 0 or hi + window - 1 > len(x):
        raise ValueError("windows run outside the samples given")
    s = sliding_sums(x[lo:hi + window - 1], tones_hz, sample_rate_hz, window)
    if metric == "contrast":
        p1 = s[1].real ** 2 + s[1].imag ** 2
        p1 -= s[0].real ** 2
        p1 -= s[0].imag ** 2
        return np.abs(p1, out=p1) / window
    if metric != "energy":
        raise ValueError(f"unknown window metric {metric!r}")
    e = np.zeros(s.shape[1])
    for row in s:                 # |S|^2 summed over the tones, without a temporary per tone
        e += row.real ** 2
        e += row.imag ** 2
    return e / window


@dataclass(frozen=True)
class EnergyTrace:
    """Correlator energy ``|z0|^2 + |z1|^2`` of a window starting at every sample of a stretch.

    Timing searches try many shifted grids on the same samples; each picks its
    symbols' energies from one trace instead of correlating again.

    Attributes
    ----------
    first : int
        Capture index of the first window start.
    window : int
        Samples per window.
    tones_hz : tuple of float
        Template frequencies the trace was made with.
    values : numpy.ndarray
        ``values[n - first]``: energy of the window starting at capture sample n.
    """

    first: int
    window: int
    tones_hz: tuple[float, float]
    values: np.ndarray

    def between(self, lo: int, hi: int) -> np.ndarray | None:
        """Energies of the windows starting at ``lo .. hi - 1``, or None if not all covered."""
        a, b = int(lo) - self.first, int(hi) - self.first
        if a < 0 or b > len(self.values) or b < a:
            return None
        return self.values[a:b]


def energy_trace(x: np.ndarray, x_start: int, window: int, tones_hz, sample_rate_hz: float) -> EnergyTrace:
    """The :class:`EnergyTrace` of every window that fits in ``x`` (see :func:`window_energy`)."""
    n = max(len(x) - window + 1, 0)
    values = window_energy(x, x_start, x_start, x_start + n, window, tones_hz, sample_rate_hz) if n else np.zeros(0)
    return EnergyTrace(int(x_start), int(window), (float(tones_hz[0]), float(tones_hz[1])), values)


def sliding_sums(x: np.ndarray, tones_hz, sample_rate_hz: float, window: int) -> np.ndarray:
    """``S_i[n] = sum_{m<window} x[n+m] exp(-j 2 pi f_i (n+m) / fs)`` for each tone, every start n.

    Running sums of the mixed-down samples (O(N) per tone).  The phase is
    referred to ``x[0]``; magnitudes do not depend on that.  Shape
    ``(n_tones, len(x) - window + 1)``.
    """
    f = np.atleast_1d(np.asarray(tones_hz, dtype=float))
    out = np.empty((f.size, max(len(x) - window + 1, 0)), dtype=complex)
    if out.shape[1] == 0:
        return out
    c = np.empty(len(x) + 1, dtype=complex)       # running sums, c[0] = 0
    c[0] = 0.0
    for i, fi in enumerate(f):
        np.cumsum(x * oscillator(fi, sample_rate_hz, 0, len(x)), out=c[1:])
        np.subtract(c[window:], c[:-window], out=out[i])
    return out


def template_correlation(tones_hz, sample_rate_hz: float, window: int) -> complex:
    """Complex correlation ``<w1, w0>`` of the two unit-energy templates.

    For L samples and spacing ``df`` this is the Dirichlet kernel
    ``exp(j pi df (L-1)/fs) sin(pi df L/fs) / (L sin(pi df/fs))``, which tends to
    ``sinc(df T)`` for many samples per symbol.  Its magnitude is the tone
    correlation |rho|; the tones are orthogonal for noncoherent detection when
    ``df`` is a whole multiple of the symbol rate (common practice).
    """
    f0, f1 = (float(v) for v in tones_hz)
    m = np.arange(window)
    return complex(np.mean(np.exp(2j * np.pi * (f1 - f0) * m / sample_rate_hz)))
