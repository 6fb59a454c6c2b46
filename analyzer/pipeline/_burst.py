"""One burst, as a sequence of named steps over small frozen states.

:func:`analyse_burst` runs, in order: start -> time -> correlate -> sync
(-> track the tones decision-directed and sync again, when no pattern synced)
-> settle (tones from the known symbols, retime, correlate, count) -> edges ->
known symbols -> fit -> likelihood decisions -> theory -> warnings -> diagnose.
Each step is a plain function that returns new state and changes nothing it is given.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from .. import acquire, branches, diagnostics, errorcount, estimate, theory
from ._checks import GRID_FIT_MIN_EBN0_DB, HINT_CHECK_BER, check_blind_rate, check_grid_fit, check_hints_fit
from ._edges import refine_edges
from ._reference import ber_count, ber_reason, count_bits, frame_count, is_synced, resolve_reference
from ._results import AnalysisOptions, BerCount, BurstResult

__all__ = ["SETTLED_TONE_SHIFT", "DD_PASSES", "analyse_burst"]

#: The decision-directed loop of timing and tones stops once a pass moves
#: both tones by less than this fraction of the symbol rate (the tone
#: estimate's own spread at 8 dB and 1000 symbols is about 0.5%).
SETTLED_TONE_SHIFT = 0.01
#: Most passes of that loop (a blind start from a spectral peak may sit a quarter
#: of the spacing off the tone; each pass closes most of the distance).
DD_PASSES = 4


@dataclass(frozen=True)
class _Samples:
    """The samples the burst lies in: ``x`` from capture sample ``x_start``, at ``fs``."""

    x: np.ndarray
    x_start: int
    fs: float


@dataclass(frozen=True)
class _Track:
    """Grid, tones and decisions as the steps refine them."""

    grid: branches.SymbolGrid
    tones: tuple[float, float]
    energy: branches.EnergyTrace | None             # window energies kept for the next retiming
    timing: acquire.TimingEstimate | None = None
    continuous: bool = False                        # keyed with continuous phase
    out: branches.BranchOutputs | None = None
    dec: np.ndarray | None = None


@dataclass(frozen=True)
class _Sync:
    """The reference and the last error count against it.

    ``key`` (with ``ref``) names the decisions of the last count, so that
    decisions that survived a step unchanged are not counted again;
    ``hint`` is the alignment the last synced count of ``hint_ref`` began
    with, where a new count of that reference starts from.
    """

    ref: errorcount.Reference | None = None
    ec: errorcount.ErrorCount | None = None
    low_one: bool = False
    key: bytes | None = None
    hint_ref: errorcount.Reference | None = None
    hint: int | None = None


@dataclass(frozen=True)
class _Known:
    """The symbols the statistics use, and the counts against the reference."""

    sent: np.ndarray
    mask: np.ndarray | None
    data_aided: bool
    ber: BerCount | None
    frames: errorcount.FrameCount | None


@dataclass(frozen=True)
class _Fit:
    """The burst's fitted statistics, with the template correlation and the symbols' samples."""

    fit: estimate.BurstFit
    rho: complex
    scale: float                 # samples per symbol over the window
    rows: np.ndarray


def _tones_moved(tones, before) -> float:
    """The larger move of the two tones, Hz."""
    return max(abs(a - b) for a, b in zip(tones, before))


def _start(grid0: branches.SymbolGrid, first: int, stop: int, start_tones,
           span: acquire.SpanTiming | None) -> _Track:
    """The burst's symbols ``first:stop`` of its span's grid, at the starting tones."""
    grid = branches.symbol_grid(grid0.starts[first], grid0.samples_per_symbol, stop - first)
    return _Track(grid=grid, tones=tuple(float(f) for f in start_tones),
                  energy=span.energy if span is not None else None)


def _time(s: _Samples, tr: _Track, rate_hint: float, span: acquire.SpanTiming | None) -> _Track:
    """Timing and rate on this burst alone (see :func:`acquire.burst_timing`)."""
    tm, grid = acquire.burst_timing(s.x, s.x_start, s.fs, tr.grid, tr.tones, rate_hint, span)
    return replace(tr, timing=tm, grid=grid)


def _retime(s: _Samples, tr: _Track, grid: branches.SymbolGrid | None = None) -> _Track:
    """:func:`acquire.retime_burst` from ``grid`` (default the current one) with the current keying."""
    g, energy = acquire.retime_burst(s.x, s.x_start, tr.grid if grid is None else grid, tr.tones, s.fs,
                                     tr.continuous, tr.energy)
    return replace(tr, grid=g, energy=energy)


def _correlate(s: _Samples, tr: _Track, span: acquire.SpanTiming | None, first: int, stop: int) -> _Track:
    """Keying, timing for it, branch outputs and square-law decisions.

    The keying is judged on outputs after the energy-metric timing, which a
    phase-discontinuous burst keeps; a continuous-phase one is timed again from
    the tone transitions, starting from the line's grid.  The span's own
    outputs are used when they cover these symbols on this grid.
    """
    out = branches.outputs_on_grid(span.outputs if span is not None else None, tr.grid, first, stop, tr.tones)
    if out is not None:
        dec = branches.square_law(out.z)
        tr = _retime(s, replace(tr, continuous=estimate.is_continuous_phase(estimate.phase_continuity(out.z, dec))))
        out = branches.correlate_again(s.x, s.x_start, tr.grid, tr.tones, s.fs, out)
    else:
        line_grid = tr.grid
        tr = _retime(s, tr)
        out = branches.correlate(s.x, s.x_start, tr.grid, tr.tones, s.fs)
        dec = branches.square_law(out.z)
        tr = replace(tr, continuous=estimate.is_continuous_phase(estimate.phase_continuity(out.z, dec)))
        if tr.continuous:
            tr = _retime(s, tr, line_grid)
            out = branches.correlate_again(s.x, s.x_start, tr.grid, tr.tones, s.fs, out)
    return replace(tr, out=out, dec=branches.square_law(out.z))


def _count(sy: _Sync, dec: np.ndarray, ref) -> _Sync:
    """The count of ``dec`` against ``ref`` (:func:`count_bits`), made once per distinct decisions
    and reference; a new count of the reference starts from its last synced alignment."""
    key = dec.tobytes()
    if sy.key is not None and sy.ref is ref and sy.key == key:
        return sy
    ec, low_one = count_bits(dec, ref, sy.hint if sy.hint_ref is ref else None)
    hint_ref, hint = (ref, ec.alignment) if ec is not None and ec.synced else (sy.hint_ref, sy.hint)
    return _Sync(ref=ref, ec=ec, low_one=low_one, key=key, hint_ref=hint_ref, hint=hint)


def _sync(tr: _Track, sy: _Sync, opts: AnalysisOptions, bits_text: str | None) -> _Sync:
    """Look for the reference in the current decisions and count errors against it."""
    return _count(sy, tr.dec, resolve_reference(opts, tr.dec, bits_text))


def _track_tones(s: _Samples, tr: _Track) -> _Track:
    """No pattern yet: alternate tones and timing from the symbols that carried them
    (decision-directed) while the tones still move (at most :data:`DD_PASSES` passes)."""
    out, dec = tr.out, tr.dec
    for _ in range(DD_PASSES):
        before = tr.tones
        tones = acquire.refine_tones(branches.symbol_rows(s.x, s.x_start, tr.grid), dec, s.fs, tr.tones)
        tr = _retime(s, replace(tr, tones=tones))
        out = branches.correlate_again(s.x, s.x_start, tr.grid, tr.tones, s.fs, out)
        dec = branches.square_law(out.z)
        if _tones_moved(tr.tones, before) < SETTLED_TONE_SHIFT * s.fs / tr.grid.samples_per_symbol:
            break
    return replace(tr, out=out, dec=dec)


def _settle(s: _Samples, tr: _Track, sy: _Sync, opts: AnalysisOptions,
            bits_text: str | None) -> tuple[_Track, _Sync]:
    """Final tones and timing, then outputs, decisions and the count on them.

    With the pattern known, the tones are estimated once more from the symbols
    that truly carried them (wrong decisions would pull both inwards), and the
    timing is found again when they moved; without it the burst is retimed on
    its decisions and the reference looked for again with the final tones and timing.
    """
    synced = is_synced(sy.ec)
    if synced:
        ec = sy.ec
        known = np.where(ec.counted, ec.expected, tr.dec).astype(np.uint8)
        if tr.continuous:
            tr = _retime(s, tr)
        before = tr.tones
        tones = acquire.refine_tones(branches.symbol_rows(s.x, s.x_start, tr.grid), known, s.fs, tr.tones,
                                     weights=ec.counted)
        tr = replace(tr, tones=tones)
        if not tr.continuous and _tones_moved(tones, before) >= SETTLED_TONE_SHIFT * s.fs / tr.grid.samples_per_symbol:
            tr = _retime(s, tr)     # the timing was found with tones that were well off
    else:
        tr = _retime(s, tr)
    out = branches.correlate(s.x, s.x_start, tr.grid, tr.tones, s.fs)
    tr = replace(tr, out=out, dec=branches.square_law(out.z))
    ref = sy.ref if synced else resolve_reference(opts, tr.dec, bits_text)
    return tr, _count(sy, tr.dec, ref)


def _edges(s: _Samples, tr: _Track, sy: _Sync) -> tuple[_Track, _Sync]:
    """Burst edges to the symbol (:func:`refine_edges`), with outputs, decisions and count on them."""
    edged = refine_edges(s.x, s.x_start, tr.grid, tr.tones, s.fs, tr.out, tr.dec, sy.ec, sy.ref)
    if edged is None:
        return tr, sy
    grid, z_known, on_samples = edged
    if grid.window == tr.out.grid.window and np.array_equal(on_samples, grid.first_samples):
        out = branches.BranchOutputs(z=z_known, tones_hz=tr.out.tones_hz, grid=grid)
    else:
        out = branches.correlate(s.x, s.x_start, grid, tr.tones, s.fs)
    tr = replace(tr, grid=grid, out=out, dec=branches.square_law(out.z))
    return tr, _count(sy, tr.dec, sy.ref)


def _known(tr: _Track, sy: _Sync, opts: AnalysisOptions) -> _Known:
    """The symbols known from the reference: a synced pattern's bits, else the valid HDLC
    frames' symbols when they are the reference, else the decisions themselves."""
    if is_synced(sy.ec):
        ec = sy.ec
        sent = np.where(ec.counted, ec.expected, tr.dec).astype(np.uint8)
        return _Known(sent, ec.counted, True, ber_count(ec, sy.low_one), None)
    fc = frame_count(opts, tr.dec)
    if fc is not None and fc.known_symbols > 0:
        # the valid frames are the reference: their symbols are known
        return _Known(fc.expected, fc.known, True, None, fc)
    return _Known(tr.dec, None, False, None, fc)


def _fit(s: _Samples, tr: _Track, kn: _Known) -> _Fit:
    """Branch statistics and physical Eb/N0 on the known (or decided) symbols."""
    grid = tr.grid
    rho = branches.template_correlation(tr.tones, s.fs, grid.window)
    scale = grid.samples_per_symbol / grid.window
    rows = branches.symbol_rows(s.x, s.x_start, grid)
    fit = estimate.fit_burst(tr.out.z, kn.sent, kn.mask, rows, tr.tones, s.fs, not np.any(s.x.imag), scale,
                             abs(rho), kn.data_aided)
    return _Fit(fit, rho, scale, rows)


def _likelihood(tr: _Track, sy: _Sync, kn: _Known, f: _Fit,
                opts: AnalysisOptions) -> tuple[_Track, _Sync, _Known]:
    """With ``--decision likelihood``, decisions by the unequal-energy rule and the counts on them."""
    stats = f.fit.stats
    if opts.decision != "likelihood" or not np.all(stats.gain_sq > 0):
        return tr, sy, kn
    s2 = float(np.mean(stats.noise_var_complex))
    tr = replace(tr, dec=branches.likelihood_ratio(tr.out.z, tuple(stats.signal_gain), s2))
    sy = _count(sy, tr.dec, sy.ref)
    ber = ber_count(sy.ec, sy.low_one) if is_synced(sy.ec) else kn.ber
    frames = errorcount.count_frames(tr.dec) if kn.frames is not None else None
    return tr, sy, replace(kn, ber=ber, frames=frames)


def _theory(f: _Fit, kn: _Known) -> tuple[theory.BurstTheory, errorcount.FrameTheory | None]:
    """Expected BER, implementation loss and the frames' theory at the measured Eb/N0."""
    st = f.fit.stats
    th = theory.burst_theory(st.ebn0, st.ebn0_db, st.ebn0_db_ci95, st.imbalance_db, abs(f.rho),
                             None if kn.ber is None else (kn.ber.errors, kn.ber.bits))
    fth = None
    if kn.frames is not None:
        fth = errorcount.frame_theory(st.ebn0, th.model, kn.frames, st.ebn0_db, st.ebn0_db_ci95)
    return th, fth


def _warn(s: _Samples, tr: _Track, kn: _Known, f: _Fit, opts: AnalysisOptions) -> None:
    """The per-burst warnings: grid fit, hints at the edge of their reach, a better blind rate."""
    line = float(tr.timing.line_snr)
    if f.fit.stats.ebn0_db >= GRID_FIT_MIN_EBN0_DB:
        check_grid_fit(s.x, s.x_start, s.fs, tr.grid, tr.tones, tr.dec)
    check_hints_fit(opts, tr.grid, tr.tones, s.fs, line)
    if opts.symbol_rate_hz is not None and (kn.ber is None or kn.ber.rate > HINT_CHECK_BER or kn.ber.slips > 0):
        check_blind_rate(s.x, s.x_start, s.fs, tr.grid, tr.tones, line)


def _result(index: int, s: _Samples, tr: _Track, sy: _Sync, kn: _Known, f: _Fit, th: theory.BurstTheory,
            fth, opts: AnalysisOptions, full_scale: float) -> BurstResult:
    """The diagnostics, and everything measured gathered into the burst's result."""
    stats, rows = f.fit.stats, f.rows
    p = float(np.vdot(rows, rows).real) / max(rows.size, 1) / full_scale
    continuity = float(estimate.phase_continuity(tr.out.z, kn.sent))
    nominal_loss = None
    if opts.tones_hz is not None:
        nominal_loss = theory.nominal_template_loss_db((float(tr.tones[0]), float(tr.tones[1])), opts.tones_hz, s.fs,
                                                      tr.grid.window)
    rate = acquire.burst_rate(s.x, s.x_start, tr.grid, tr.tones, s.fs, tr.continuous, tr.energy)
    diag = diagnostics.diagnose_burst(s.x, s.x_start, s.fs, tr.grid, tr.tones, tr.out, kn.sent, stats,
                                      f.fit.moments, f.rho, th.model, kn.ber, th.loss, f.scale, rows)
    return BurstResult(
        index=index, grid=tr.grid, tones_hz=(float(tr.tones[0]), float(tr.tones[1])),
        symbol_rate_hz=float(s.fs / tr.grid.samples_per_symbol) if rate is None else float(rate.symbol_rate_hz),
        symbol_rate_ci95_hz=None if rate is None else (float(rate.ci95_hz[0]), float(rate.ci95_hz[1])),
        timing_quality=float(tr.timing.line_snr),
        outputs=tr.out, decisions=tr.dec, sent=kn.sent, stats=stats, moments=f.fit.moments, rho=f.rho, ber=kn.ber,
        ber_theory=th.ber, theory_model=th.model, loss=th.loss,
        power_dbfs=float(10 * np.log10(p)) if p > 0 else float("-inf"),
        nominal_tones_hz=opts.tones_hz, phase_continuity=continuity, keying=estimate.keying_name(continuity),
        nominal_template_loss_db=nominal_loss,
        energy=f.fit.energy, frames=kn.frames, frame_theory=fth, ber_reason=ber_reason(opts, tr.dec, sy.ref, kn.ber),
        **diag.as_fields())


def analyse_burst(index: int, x: np.ndarray, x_start: int, fs: float, grid0: branches.SymbolGrid,
                  first: int, stop: int, opts: AnalysisOptions, bits_text: str | None,
                  full_scale: float, start_tones, start_rate: float,
                  span: acquire.SpanTiming | None = None) -> BurstResult:
    """Everything measured on the burst of symbols ``first:stop`` of its span's grid ``grid0``.

    ``x`` holds the region from capture sample ``x_start`` at ``fs``; the
    burst starts from ``start_tones`` and ``start_rate``; ``span`` is what the
    span's timing search left (see :func:`acquire.bursts_in_span`).
    """
    s = _Samples(x, x_start, fs)
    tr = _time(s, _start(grid0, first, stop, start_tones, span), float(start_rate), span)
    tr = _correlate(s, tr, span, first, stop)
    sy = _sync(tr, _Sync(), opts, bits_text)      # pattern sync on the decisions with the starting tones
    if not is_synced(sy.ec):
        tr = _track_tones(s, tr)
        sy = _sync(tr, sy, opts, bits_text)
    tr, sy = _settle(s, tr, sy, opts, bits_text)
    tr, sy = _edges(s, tr, sy)
    kn = _known(tr, sy, opts)
    f = _fit(s, tr, kn)
    tr, sy, kn = _likelihood(tr, sy, kn, f, opts)
    th, fth = _theory(f, kn)
    _warn(s, tr, kn, f, opts)
    return _result(index, s, tr, sy, kn, f, th, fth, opts, full_scale)
