"""Run the stages on one capture: the body of ``analyzer.analyze``.

capture -> acquire -> branches -> decide -> prbs -> estimate -> theory.
The report stage (JSON, HTML, PDF, terminal) reads the :class:`AnalysisResult`.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Callable

import numpy as np

from .. import acquire, branches, diagnostics, estimate, errorcount, survey, theory
from ..capture import Capture, open_capture, verify_sha512
from ..errors import CaptureWarning, InputError, warn
from ..parallel import keep_freed_memory
from ..parallel import fork_map, fork_workers

__all__ = ["AnalysisOptions", "BurstResult", "Summary", "AnalysisResult", "analyze", "analyze_capture"]

MIN_SYMBOLS = 16             # shortest burst analysed

#: Samples read per block in the passes over the capture (rounded up to a
#: multiple of :data:`QUANTUM` and of every frame length used).  The results do
#: not depend on it: every sum is formed per quantum, frames never straddle a
#: block, and the per-quantum sums are added up in one go at the end.  A block
#: of 2 MB (complex64) keeps a block's temporaries in cache for two workers at
#: once; much smaller blocks pay a fixed cost per block.
BLOCK_SAMPLES = 1 << 18
#: Samples per partial sum (see :mod:`analyzer.survey`).
QUANTUM = survey.QUANTUM
#: Longest stretch of the capture read at once for burst analysis.  A region
#: of the power trace longer than this is analysed in consecutive pieces of at
#: most this many samples, cut where the trace is quietest (and, inside one
#: unbroken burst, at a piece edge: such a burst is then reported as several
#: consecutive bursts).  8 Msamples is 128 MB as complex128.
MAX_REGION_SAMPLES = 1 << 23


@dataclass(frozen=True)
class AnalysisOptions:
    """What the user told us about the link.

    Attributes
    ----------
    tones_hz : (float, float) or None
        Nominal tones (hints), Hz.
    symbol_rate_hz : float or None
        Nominal symbol rate (hint), Hz.
    reference : str
        ``"auto"``, ``"none"``, ``"frames"`` (HDLC frames with a valid FCS), an O.150
        name (``"PN9"``...) or ``"bits:FILE"``.
    decision : str
        ``"square-law"`` (default) or ``"likelihood"`` (unequal-energy rule).
    """

    tones_hz: tuple[float, float] | None = None
    symbol_rate_hz: float | None = None
    reference: str = "auto"
    decision: str = "square-law"


@dataclass(frozen=True)
class BerCount:
    """Bit errors against the reference, with the Clopper-Pearson 95% interval."""

    reference: str
    bits: int
    errors: int
    rate: float
    ci95: tuple[float, float]
    slips: int
    tone_for_one: str          # "high" or "low": which tone carries a ONE of the pattern


@dataclass(frozen=True)
class BurstResult:
    """Everything measured on one burst."""

    index: int
    grid: branches.SymbolGrid
    tones_hz: tuple[float, float]
    symbol_rate_hz: float
    timing_quality: float
    outputs: branches.BranchOutputs
    decisions: np.ndarray
    sent: np.ndarray                 # tone index used for the statistics (known or decided)
    stats: estimate.BranchStats
    moments: estimate.GroupMoments
    rho: complex
    ber: BerCount | None
    ber_theory: float
    theory_model: theory.LinkModel
    loss: theory.LossEstimate | None
    power_dbfs: float
    nominal_tones_hz: tuple[float, float] | None
    checks: tuple[diagnostics.ModelCheck, ...] = ()
    trend: diagnostics.Trend | None = None
    loss_parts: theory.LossParts | None = None
    blind_ber: tuple[float, tuple[float, float]] | None = None
    phase_continuity: float = float("nan")
    decision_gain: theory.DecisionGain | None = None
    pulse: diagnostics.PulseShape | None = None
    leakage: diagnostics.Leakage | None = None
    noise_correlation: diagnostics.NoiseCorrelation | None = None
    output_correlation: np.ndarray | None = None      # (2, 4, 4), see diagnostics.output_correlations
    energy: estimate.EnergySums | None = None    # sums behind the physical Eb/N0 (pooled in the summary)
    frames: errorcount.FrameCount | None = None           # HDLC frames, when they are the reference
    frame_theory: errorcount.FrameTheory | None = None
    ber_reason: str | None = None                     # why no bit errors were counted (None when they were)

    @property
    def n_symbols(self) -> int:
        return self.grid.n_symbols

    @property
    def centre_offset_hz(self) -> float:
        """Mean of the two measured tones minus the nominal centre (0 when no hints)."""
        mid = 0.5 * (self.tones_hz[0] + self.tones_hz[1])
        if self.nominal_tones_hz is None:
            return float(mid)
        return float(mid - 0.5 * (self.nominal_tones_hz[0] + self.nominal_tones_hz[1]))

    @property
    def deviation_hz(self) -> float:
        """Half the measured tone spacing."""
        return 0.5 * (self.tones_hz[1] - self.tones_hz[0])


@dataclass(frozen=True)
class Summary:
    """All bursts pooled."""

    stats: estimate.BranchStats | None
    ber: BerCount | None
    ber_theory: float
    loss: theory.LossEstimate | None
    frames: errorcount.FrameCount | None = None
    frame_theory: errorcount.FrameTheory | None = None
    ber_reason: str | None = None      # why no bit errors were counted in any burst


@dataclass(frozen=True)
class AnalysisResult:
    """The outcome of analysing one capture."""

    capture: Capture
    options: AnalysisOptions
    bursts: tuple[BurstResult, ...]
    summary: Summary
    noise_floor_dbfs: float
    spectrum_hz: np.ndarray
    spectrum_db: np.ndarray
    warnings: tuple[str, ...] = field(default_factory=tuple)
    spectrogram: np.ndarray | None = None      # (frames, cells) power, thinned for figures
    spectrogram_frame: int = 1024              # samples per spectrogram frame before thinning
    band_hz: tuple[float, float] | None = None
    dc_offset: complex = 0j               # mean of the samples, removed before analysis (full scale)
    clipped_fraction: float | None = None  # share of samples at the converter limit (integer formats)

    @property
    def dc_offset_dbfs(self) -> float:
        """Power of the removed DC offset, dB relative to full scale."""
        p = abs(self.dc_offset) ** 2
        return float(10 * np.log10(p)) if p > 0 else float("-inf")


# --------------------------------------------------------------------------- helpers
def _check_hints(cap: Capture, opts: AnalysisOptions) -> None:
    fs = cap.sample_rate_hz
    if opts.symbol_rate_hz is not None:
        rs = opts.symbol_rate_hz
        if rs <= 0 or rs > fs / 2:
            raise InputError(f"symbol rate {rs:g} Hz is not between 0 and half the sample rate "
                             f"({fs / 2:g} Hz)", cap.path, "check --baud")
    if opts.tones_hz is None:
        return
    f0, f1 = opts.tones_hz
    rs = opts.symbol_rate_hz
    if not f0 < f1:
        raise InputError(f"--tones must be F0,F1 with F0 < F1, got {f0:g},{f1:g}", cap.path)
    lo, hi = (0.0, fs / 2) if cap.kind == "audio" else (-fs / 2, fs / 2)
    if f0 < lo or f1 > hi or (cap.kind == "audio" and (f0 <= lo or f1 >= hi)):
        what = "above 0 and below half the sample rate for audio" if cap.kind == "audio" else "in the sample band"
        raise InputError(f"tones {f0:g},{f1:g} Hz lie outside the sample band "
                         f"[{lo:g}, {hi:g}] Hz", cap.path, f"check --tones: they must lie {what}")
    if rs is not None and f1 - f0 < 0.25 * rs:
        raise InputError(f"tones {f0:g},{f1:g} Hz are closer than a quarter of the symbol rate",
                         cap.path, "check --tones and --baud")


def _noise_bands(cap: Capture, band: tuple[float, float], guard: float) -> list[tuple[float, float]]:
    fs = cap.sample_rate_hz
    lo_edge = guard if cap.kind == "audio" else -fs / 2
    out = []
    if band[0] - guard > lo_edge:
        out.append((lo_edge, band[0] - guard))
    if band[1] + guard < fs / 2:
        out.append((band[1] + guard, fs / 2))
    return out


def _reader(cap: Capture, dc: complex) -> Callable[[int, int], np.ndarray]:
    """``read(start, count)`` on the capture with the DC offset removed."""
    if dc == 0:
        return cap.read
    d = np.complex64(dc)

    def read(start: int, count: int) -> np.ndarray:
        # a new array: the capture's own buffer (a view, for in-memory sources) is never changed
        return cap.read(start, count) - d

    return read


def _trace_frame(cap: Capture, band: tuple[float, float], rs: float | None) -> tuple[int, list]:
    """Power-trace frame and noise bands for ``band`` (frame from the symbol rate when known)."""
    fs = cap.sample_rate_hz
    if rs is not None:
        frame = survey.frame_length(fs, rs)
        guard_hz = rs
    else:
        bw = band[1] - band[0]
        frame = int(2 ** np.ceil(np.log2(max(16.0, 16.0 * fs / bw))))
        guard_hz = 0.25 * bw
    return frame, _noise_bands(cap, band, guard_hz)


def _block_size(block: int | None, *frames: int) -> int:
    return survey.block_size(block, BLOCK_SAMPLES, *frames)


def _split_region(a: int, b: int, power: np.ndarray, frame: int, limit: int) -> list[tuple[int, int]]:
    """Cut ``[a, b)`` into pieces of at most ``limit`` samples at the quietest frame edges."""
    out = []
    while b - a > limit:
        lo_f = (a + limit // 2) // frame
        hi_f = (a + limit) // frame
        seg = power[lo_f:hi_f]
        cut = (lo_f + int(np.argmin(seg))) * frame if seg.size else a + limit
        cut = min(max(cut, a + 1), a + limit)
        out.append((a, cut))
        a = cut
    out.append((a, b))
    return out


def _merge_spans(spans, gap: int, margin: int, n_samples: int) -> list[tuple[int, int]]:
    out: list[list[int]] = []
    for s in spans:
        a, b = max(0, s.start - margin), min(n_samples, s.stop + margin)
        if out and a - out[-1][1] < gap:
            out[-1][1] = max(out[-1][1], b)
        else:
            out.append([a, b])
    return [(a, b) for a, b in out]


def _resolve_reference(opts: AnalysisOptions, bits: np.ndarray, bits_file_text: str | None):
    """The reference to count errors against, or None (with the tone mapping found)."""
    ref = opts.reference
    if ref in ("none", "frames"):
        return None
    if ref == "auto":
        det = errorcount.detect_pattern(bits)
        if det is None:
            return None
        return errorcount.Reference.prbs(det.name, inverted=det.inverted)
    if ref.startswith("bits:"):
        pattern = errorcount.parse_bits_text(bits_file_text or "", ref[5:])
        return errorcount.Reference.pattern(pattern, ref)
    # a named pattern: find the polarity (tone mapping) from the data
    det = errorcount.detect_pattern(bits, candidates=[ref])
    inverted = bool(det.inverted) if det is not None else False
    return errorcount.Reference.prbs(ref, inverted=inverted)


def _count(bits: np.ndarray, ref, hint: int | None = None) -> tuple[errorcount.ErrorCount | None, bool]:
    """Count errors; return the count and whether a ONE rides on the low tone.

    For a PRBS the polarity found by detection already fixes the mapping: bits
    (tone index, 1 = high tone) that follow the complement of the O.150 pattern
    are that pattern with a ONE on the low tone, so the count is labelled with
    the pattern as O.150 defines it and the mapping says "low" (the same
    received bits could be called "the inverted pattern, ONE on the high tone";
    one name is given, never both flips at once).  For an explicit pattern
    both mappings are tried and the better kept.
    ``expected`` in the returned count is always in tone-index space.
    ``hint`` is a PRBS alignment from an earlier count of nearly these bits
    (see :func:`errorcount.count_errors`).
    """
    if ref is None:
        return None, False
    if ref.is_prbs:
        ec = errorcount.count_errors(bits, ref, alignment_hint=hint)
        return replace(ec, reference=ref.name), bool(ref.inverted)
    direct = errorcount.count_errors(bits, ref)
    swapped = errorcount.count_errors(bits ^ np.uint8(1), ref)
    if swapped.synced and (not direct.synced or swapped.errors < direct.errors):
        return replace(swapped, expected=swapped.expected ^ np.uint8(1)), True
    return direct, False


def _ber_reason(opts: AnalysisOptions, bits: np.ndarray, ref, ber) -> str | None:
    """Why no bit errors were counted on a burst's decisions ``bits`` (None when they were)."""
    if ber is not None:
        return None
    asked = opts.reference
    if asked == "none":
        return "not asked for (reference none)"
    if asked == "frames":
        return "the HDLC frames are the reference"
    if ref is None and asked == "auto":
        return "no O.150 pattern found in the decisions"
    if ref is None:
        ref = errorcount.Reference.prbs(asked)
    name = ref.name if asked == "auto" else asked
    need = errorcount.sync_bits_needed(ref)
    if bits.size < need:
        return f"{name}: the burst is too short to sync ({bits.size} bits; {name} needs at least {need})"
    if ref.is_prbs:
        other = errorcount.detect_pattern(bits)
        if other is not None and other.name != ref.name:
            return f"{name} not found; the bits follow {other.name}"
    return f"{name} not found in the decisions"


def _ber_count(ec: errorcount.ErrorCount, low_is_one: bool) -> BerCount:
    lo, hi = theory.clopper_pearson(ec.errors, ec.bits)
    return BerCount(reference=ec.reference, bits=int(ec.bits), errors=int(ec.errors),
                    rate=float(ec.errors / ec.bits) if ec.bits else float("nan"),
                    ci95=(float(lo), float(hi)), slips=int(ec.slips),
                    tone_for_one="low" if low_is_one else "high")


# --------------------------------------------------------------------------- one burst
def _acquire_bursts_in_span(x: np.ndarray, x_start: int, fs: float, tones, rs: float,
                            noise_var: float, min_symbols: int = MIN_SYMBOLS):
    """Timing on the span, then symbol-level segmentation into bursts."""
    tones = tuple(float(f) for f in tones)
    rs = float(rs)
    et = branches.energy_trace(x, x_start, int(np.floor(fs / rs)), tones, fs)
    tm = acquire.symbol_timing(x, x_start, fs, tones, rs, energy=et)
    grid = acquire.grid_for_span(tm.phase_sample, tm.symbol_rate_hz, fs, x_start, x_start + len(x) - 1)
    if grid.n_symbols < 1:
        return []
    # each branch's energy, so that a run of the weaker of two unequal tones is not taken for a gap
    out = branches.correlate(x, x_start, grid, tones, fs)
    branch_energy = out.z.real ** 2 + out.z.imag ** 2
    segs = acquire.segment_symbols(branch_energy.sum(axis=1), 2.0 * noise_var, min_symbols=min_symbols,
                                   branch_energies=branch_energy)
    span = _Span(tm, et, len(segs) == 1, out)
    return [(grid, f, s, span) for f, s in segs]


@dataclass(frozen=True)
class _Span:
    """What the timing search of a span leaves for its bursts to reuse."""

    timing: acquire.TimingEstimate
    energy: branches.EnergyTrace
    single: bool              # the span holds one burst only
    outputs: branches.BranchOutputs | None = None     # on the span's grid, with the span's tones


#: Tones that moved by less than this fraction of the symbol rate keep the
#: window energies computed before the move: a tone error scales the energy
#: of every window alike (by about 1 - (pi * 0.01)^2 / 3, 3e-4 at most), so
#: the timing metric's peak does not move.
ENERGY_REUSE_TONE_SHIFT = 0.01
#: The decision-directed loop of timing and tones stops once a pass moves
#: both tones by less than this fraction of the symbol rate (the tone
#: estimate's own spread at 8 dB and 1000 symbols is about 0.5%).
SETTLED_TONE_SHIFT = 0.01
#: Most passes of that loop (a blind start from a spectral peak may sit a quarter
#: of the spacing off the tone; each pass closes most of the distance).
DD_PASSES = 4


def _analyse_burst(index: int, x: np.ndarray, x_start: int, fs: float, grid0: branches.SymbolGrid,
                   first: int, stop: int, opts: AnalysisOptions, bits_text: str | None,
                   full_scale: float, start_tones, start_rate: float, span: _Span | None = None) -> BurstResult:
    rs_hint = float(start_rate)
    sps = grid0.samples_per_symbol
    grid = branches.symbol_grid(grid0.starts[first], sps, stop - first)
    tones = tuple(float(f) for f in start_tones)
    energy = span.energy if span is not None else None

    def energy_for(tn, g):
        """Window energies for tones ``tn`` and grid ``g``: the last ones while the tones stay put."""
        nonlocal energy
        if (energy is None or energy.window != g.window
                or max(abs(a - b) for a, b in zip(tn, energy.tones_hz)) > ENERGY_REUSE_TONE_SHIFT * fs / g.samples_per_symbol):
            energy = branches.energy_trace(x, x_start, g.window, tn, fs)
        return energy

    # timing and rate on this burst alone (the span may have held several)
    lo = max(0, int(np.floor(grid.first_start)) - x_start - int(sps))
    hi = min(len(x), int(np.ceil(grid.stop)) - x_start + int(sps))
    if span is not None and span.single:
        tm = span.timing
    else:
        tm = acquire.symbol_timing(x[lo:hi], x_start + lo, fs, tones, rs_hint, energy=energy)
    sps2 = fs / tm.symbol_rate_hz
    k = np.round((grid.first_start - tm.phase_sample) / sps2)
    cand = branches.symbol_grid(tm.phase_sample + k * sps2, sps2, grid.n_symbols)
    if cand.first_samples[0] >= x_start and cand.first_samples[-1] + cand.window <= x_start + len(x):
        grid = cand
    # Keying: a continuous-phase transmitter keeps the phase across symbols.
    # Its timing comes from the instants the tone changes (a whole-symbol
    # energy metric flattens there); with a new phase per symbol the
    # receiver's own energy metric is the sharper one.
    out = None
    if span is not None and span.outputs is not None and span.outputs.tones_hz == tones:
        # the span's own correlation already covers these symbols when they lie on its grid
        g0 = span.outputs.grid
        idx = np.arange(first, stop)
        if stop <= g0.n_symbols and grid.window == g0.window and np.array_equal(
                grid.first_samples, g0.first_samples[first:stop]):
            out = branches.BranchOutputs(z=span.outputs.z[idx], tones_hz=tones, grid=grid)
    continuous = False

    def retime(g, tn, bits):
        if continuous:
            return acquire.refine_timing(x, x_start, g, tn, fs, metric="contrast")
        return acquire.refine_timing(x, x_start, g, tn, fs, energy=energy_for(tn, g))

    def keying(z, bits) -> bool:
        c = estimate.phase_continuity(z, bits)
        return bool(np.isfinite(c) and c > 0.5)

    if out is not None:
        dec = branches.square_law(out.z)
        continuous = keying(out.z, dec)
        grid = retime(grid, tones, dec)
        out = _correlate_again(x, x_start, grid, tones, fs, out)
    else:
        # the keying is judged on outputs after the energy-metric timing, which
        # a phase-discontinuous burst keeps; a continuous-phase one is timed
        # again from the tone transitions, starting from the line's grid
        line_grid = grid
        grid = retime(grid, tones, None)
        out = branches.correlate(x, x_start, grid, tones, fs)
        dec = branches.square_law(out.z)
        continuous = keying(out.z, dec)
        if continuous:
            grid = retime(line_grid, tones, dec)
            out = _correlate_again(x, x_start, grid, tones, fs, out)
    dec = branches.square_law(out.z)

    counted: dict = {}
    aligned: dict = {}        # reference -> the alignment its last synced count began with

    def count(bits, reference):
        """``_count``, once per distinct (decisions, reference): decisions often survive a pass
        unchanged; a new count of the same reference starts from the last one's alignment."""
        key = (id(reference), bits.tobytes())
        if key not in counted:
            counted.clear()
            got = _count(bits, reference, aligned.get(id(reference)))
            counted[key] = (reference, got)
            if got[0] is not None and got[0].synced:
                aligned[id(reference)] = got[0].alignment
        return counted[key][1]

    # pattern sync on the decisions made with the starting tones
    ref = _resolve_reference(opts, dec, bits_text)
    ec, low_one = count(dec, ref)
    synced = ec is not None and ec.synced and ec.bits > 0
    if not synced:
        # no pattern yet: alternate tones and timing from the symbols that carried
        # them (decision-directed) while the tones still move, then look again
        for _ in range(DD_PASSES):
            before = tones
            tones = acquire.refine_tones(branches.symbol_rows(x, x_start, grid), dec, fs, tones)
            grid = retime(grid, tones, dec)
            out = _correlate_again(x, x_start, grid, tones, fs, out)
            dec = branches.square_law(out.z)
            if max(abs(a - b) for a, b in zip(tones, before)) < SETTLED_TONE_SHIFT * fs / grid.samples_per_symbol:
                break
        ref = _resolve_reference(opts, dec, bits_text)
        ec, low_one = count(dec, ref)
        synced = ec is not None and ec.synced and ec.bits > 0
    if synced:
        # with the pattern known, estimate the tones once more from the symbols
        # that truly carried them (wrong decisions would pull both inwards)
        known = np.where(ec.counted, ec.expected, dec).astype(np.uint8)
        if continuous:
            grid = retime(grid, tones, known)
        before = tones
        tones = acquire.refine_tones(branches.symbol_rows(x, x_start, grid), known, fs, tones, weights=ec.counted)
        if not continuous and max(abs(a - b) for a, b in zip(tones, before)) >= \
                SETTLED_TONE_SHIFT * fs / grid.samples_per_symbol:
            grid = retime(grid, tones, known)     # the timing was found with tones that were well off
    else:
        grid = retime(grid, tones, dec)
    out = branches.correlate(x, x_start, grid, tones, fs)
    dec = branches.square_law(out.z)
    rho = branches.template_correlation(tones, fs, grid.window)
    scale = grid.samples_per_symbol / grid.window
    if not synced:
        ref = _resolve_reference(opts, dec, bits_text)   # look again with the final tones and timing
    ec, low_one = count(dec, ref)
    # burst edges to the symbol: extend or trim by the presence likelihood of each edge symbol
    edged = _refine_edges(x, x_start, grid, tones, fs, out, dec, ec, ref)
    if edged is not None:
        grid, z_known, on_samples = edged
        if grid.window == out.grid.window and np.array_equal(on_samples, grid.first_samples):
            out = branches.BranchOutputs(z=z_known, tones_hz=out.tones_hz, grid=grid)
        else:
            out = branches.correlate(x, x_start, grid, tones, fs)
        dec = branches.square_law(out.z)
        ec, low_one = count(dec, ref)
    prbs_synced = ec is not None and ec.synced and ec.bits > 0
    fc = _frame_count(opts, dec) if not prbs_synced else None
    if prbs_synced:
        sent = np.where(ec.counted, ec.expected, dec).astype(np.uint8)
        mask = ec.counted
        data_aided = True
        ber = _ber_count(ec, low_one)
    elif fc is not None and fc.known_symbols > 0:
        # the valid frames are the reference: their symbols are known
        sent, mask, data_aided, ber = fc.expected, fc.known, True, None
    else:
        sent, mask, data_aided, ber = dec, None, False, None
    mom = estimate.group_moments(out.z, sent, mask)
    rows = branches.symbol_rows(x, x_start, grid)
    energy = estimate.energy_sums(rows, sent, tones, fs, real=not np.any(x.imag), scale=scale, mask=mask)
    stats = estimate.with_physical_ebn0(estimate.branch_stats(mom, abs(rho), scale, data_aided),
                                        estimate.physical_ebn0(energy))

    if opts.decision == "likelihood" and np.all(stats.gain_sq > 0):
        s2 = float(np.mean(stats.noise_var_complex))
        dec = branches.likelihood_ratio(out.z, tuple(stats.signal_gain), s2)
        ec, low_one = count(dec, ref)
        if ec is not None and ec.synced and ec.bits > 0:
            ber = _ber_count(ec, low_one)
        if fc is not None:
            fc = errorcount.count_frames(dec)

    model = theory.LinkModel(tone_correlation=float(min(abs(rho), 0.999)),
                             imbalance_db=float(stats.imbalance_db) if np.isfinite(stats.imbalance_db) else 0.0)
    ber_th = float(theory.ber_expected(stats.ebn0, model)) if np.isfinite(stats.ebn0) else float("nan")
    loss = None
    if ber is not None and np.isfinite(stats.ebn0_db):
        loss = theory.implementation_loss_db(stats.ebn0_db, stats.ebn0_db_ci95, ber.errors, ber.bits)
    fth = errorcount.frame_theory(stats.ebn0, model, fc, stats.ebn0_db, stats.ebn0_db_ci95) if fc is not None else None
    if stats.ebn0_db >= GRID_FIT_MIN_EBN0_DB:
        _check_grid_fit(x, x_start, fs, grid, tones, dec)
    _check_hints_fit(opts, grid, tones, fs, float(tm.line_snr))
    if opts.symbol_rate_hz is not None and (ber is None or ber.rate > HINT_CHECK_BER or ber.slips > 0):
        _check_blind_rate(x, x_start, fs, grid, tones, float(tm.line_snr))
    p = float(np.vdot(rows, rows).real) / max(rows.size, 1) / full_scale
    diag = _diagnose(x, x_start, fs, grid, tones, out, sent, stats, mom, rho, model, ber, loss, scale, rows)
    return BurstResult(
        index=index, grid=grid, tones_hz=(float(tones[0]), float(tones[1])),
        symbol_rate_hz=float(fs / grid.samples_per_symbol), timing_quality=float(tm.line_snr),
        outputs=out, decisions=dec, sent=sent, stats=stats, moments=mom, rho=rho, ber=ber,
        ber_theory=ber_th, theory_model=model, loss=loss,
        power_dbfs=float(10 * np.log10(p)) if p > 0 else float("-inf"),
        nominal_tones_hz=opts.tones_hz, phase_continuity=float(estimate.phase_continuity(out.z, sent)),
        energy=energy, frames=fc, frame_theory=fth, ber_reason=_ber_reason(opts, dec, ref, ber), **diag)


def _frame_count(opts: AnalysisOptions, dec: np.ndarray) -> errorcount.FrameCount | None:
    """The HDLC frames in a burst's final decisions when they are the reference: always with
    ``--reference frames``, under ``auto`` (no pattern synced) when the burst looks framed."""
    if opts.reference not in ("frames", "auto"):
        return None
    fc = errorcount.count_frames(dec)
    if opts.reference == "auto" and not errorcount.looks_framed(fc):
        return None
    return fc


#: Share of changes of tone near half a symbol off the grid above which a burst's
#: timing is said not to fit one regular grid (a few per cent when it fits, at
#: 10 dB or more, 7% for a Gaussian pulse of BT 0.3 at 10 dB; 50 Bd start-stop characters
#: with 1.5 stop bits timed on a 50 Bd grid put 12% there).
GRID_OFF_SHARE = 0.10
#: The grid fit is judged on bursts of at least this Eb/N0 (the change points scatter below).
GRID_FIT_MIN_EBN0_DB = 10.0
#: Share of runs of an even number of symbols above which the rate may be twice the true one
#: (a third for random data or a PRBS; all of them when every symbol is doubled; about
#: three quarters for start-stop characters with 1.5 stop bits timed at twice their rate).
EVEN_RUN_SHARE = 0.6


#: A measured tone this share of the tone search's reach (0.45 of the smaller of
#: the nominal spacing and the symbol rate) or more from its hint, or a rate this
#: share of the rate search's reach (3000 ppm) or more from its hint, is said to
#: sit at the edge of what the hint allows.
HINT_EDGE_SHARE = 0.5


#: A DC offset this far below the rest of the signal (dB) is not worth a warning, however
#: significant: a nearly noiseless capture makes even a rounding-level mean "significant".
DC_NEGLIGIBLE_DB = -60.0


def _check_hints_fit(opts: AnalysisOptions, grid, tones, fs: float, line_quality: float) -> None:
    """Warn when a measurement sits at the edge of the range its hint allows, or the hinted
    rate shows no symbol-rate line: a hint is a starting point, and a wrong one is obeyed only
    as far as the search around it reaches."""
    where = f"the burst at sample {grid.first_start:.0f}"
    rate = fs / grid.samples_per_symbol
    if opts.tones_hz is not None:
        f0, f1 = (float(v) for v in opts.tones_hz)
        reach = 0.45 * min(abs(f1 - f0), rate)
        moved = max(abs(tones[0] - f0), abs(tones[1] - f1))
        if moved >= HINT_EDGE_SHARE * reach:
            warn(f"{where}: the measured tones {tones[0]:.0f} / {tones[1]:.0f} Hz lie up to {moved:.0f} Hz from "
                 f"--tones {f0:g},{f1:g} (the search around a hint reaches about {reach:.0f} Hz): the hint may be "
                 "wrong; run without --tones to measure the tones blind")
    if opts.symbol_rate_hz is not None:
        ppm = (rate / float(opts.symbol_rate_hz) - 1) * 1e6
        if abs(ppm) >= HINT_EDGE_SHARE * HINT_RATE_SEARCH_PPM:
            warn(f"{where}: the measured symbol rate {rate:.6g} Bd lies {ppm:+.0f} ppm from --baud "
                 f"{float(opts.symbol_rate_hz):g}, at the edge of the +-{HINT_RATE_SEARCH_PPM:g} ppm searched: the "
                 "rate may lie beyond it; run without --baud to measure it blind")
        elif line_quality < acquire.BLIND_MIN_LINE_QUALITY:
            warn(f"{where}: at --baud {float(opts.symbol_rate_hz):g} the burst shows no clear symbol-rate line "
                 f"(quality {line_quality:.1f}, below {acquire.BLIND_MIN_LINE_QUALITY:g}): the hinted rate may be wrong; "
                 "run without --baud to measure it blind")


#: The symbol-rate search around a --baud hint (acquire.symbol_timing's default).
HINT_RATE_SEARCH_PPM = 3000.0
#: A burst analysed at a hinted rate whose error count is above this, slips, or is
#: not counted at all has its rate measured blind as well, to compare.
HINT_CHECK_BER = 0.01


def _check_blind_rate(x, x_start, fs: float, grid, tones, line_quality: float) -> None:
    """Warn when the blind symbol rate of a burst differs from the one measured at the hinted
    rate and shows a clearly stronger timing line (a --baud that is off by more than the search)."""
    lo = max(int(np.floor(grid.first_start)) - x_start, 0)
    hi = min(int(np.ceil(grid.stop)) - x_start, len(x))
    if hi - lo < 32 * grid.window:
        return
    got = acquire.blind_rate(x[lo:hi], fs, tones)
    if got is None:
        return
    blind_rs, quality = got
    rate = fs / grid.samples_per_symbol
    if abs(blind_rs / rate - 1) > 1e-3 and quality > 1.5 * line_quality:
        warn(f"the burst at sample {grid.first_start:.0f}: measured blind, its symbol rate is {blind_rs:.6g} Bd "
             f"with a clearer timing line (quality {quality:.0f} against {line_quality:.0f} at {rate:.6g} Bd "
             "near --baud): the hint may be wrong; run without --baud to measure it blind")


def _check_grid_fit(x, x_start, fs, grid, tones, dec) -> None:
    """Warn when the changes of tone do not fall on one regular symbol grid."""
    m = int(max(1, round(grid.samples_per_symbol / 2)))
    lo = max(int(np.floor(grid.first_start)) - x_start - grid.window, 0)
    hi = min(int(np.ceil(grid.stop)) - x_start + grid.window, len(x))
    if hi - lo < 4 * m:
        return
    d = acquire.tone_difference(x[lo:hi], fs, tones, m)
    off, even = acquire.grid_fit(dec, d, x_start + lo, grid)
    rate = fs / grid.samples_per_symbol
    where = f"the burst at sample {grid.first_start:.0f}"
    if off > GRID_OFF_SHARE:
        warn(f"{where}: {100 * off:.0f}% of its changes of tone lie about half a symbol off one regular "
             f"grid at {rate:.6g} Bd: the timing is not one regular grid (start-stop characters, e.g. with "
             "1.5 stop bits?); symbol-level figures assume it is")
    elif even > EVEN_RUN_SHARE:
        warn(f"{where}: {100 * even:.0f}% of its runs of one tone last an even number of symbols at "
             f"{rate:.6g} Bd: the symbol rate may be {rate / 2:.6g} Bd with half-symbol steps (start-stop "
             "characters with 1.5 stop bits fit a grid of half symbols); give --baud to choose")


def _correlate_again(x, x_start, grid, tones, fs, prev: branches.BranchOutputs | None) -> branches.BranchOutputs:
    """:func:`branches.correlate` on ``grid``, reusing ``prev`` when it was made with the same
    tones on the same whole samples (an output depends on nothing else)."""
    if (prev is not None and prev.tones_hz == tuple(tones) and prev.grid.window == grid.window
            and np.array_equal(prev.grid.first_samples, grid.first_samples)):
        return branches.BranchOutputs(z=prev.z, tones_hz=prev.tones_hz, grid=grid)
    return branches.correlate(x, x_start, grid, tones, fs)


def _diagnose(x, x_start, fs, grid, tones, out, sent, stats, mom, rho, model, ber, loss, scale, rows) -> dict:
    """Receiver-model diagnostics of one burst (the BurstResult fields they fill)."""
    checks = diagnostics.model_checks(out.z, sent, stats.signal_gain, stats.noise_var, abs(rho), n_tests=6)
    corr = diagnostics.output_correlations(out.z, sent)
    if abs(rho) < 0.05:
        checks.append(diagnostics.cross_branch_check(out.z, sent, n_tests=6, correlations=corr))
    trend = diagnostics.ebn0_trend(out.z, sent, scale)
    pulse = diagnostics.measured_pulse(rows, grid.first_samples, sent, tones, fs, stats.noise_var_complex)
    checks.append(diagnostics.idle_power_check(mom, stats.noise_var_complex, pulse.noise_per_sample, abs(rho)))
    checks = [c for c in checks if c is not None]
    leak = diagnostics.leakage(mom, pulse.noise_per_sample)
    ncor = diagnostics.noise_correlation(diagnostics.noise_window_outputs(x, x_start, grid, tones, fs), rho)
    parts = None
    if loss is not None and ber is not None and ber.errors > 0:
        parts = theory.loss_parts(loss.value, ber.rate, model, pulse.template_loss_db_mean,
                                       stats.ebn0_db - stats.correlator_ebn0_db)
    ok = np.isfinite(stats.ebn0_db)
    blind = theory.blind_ber(stats.ebn0_db, stats.ebn0_db_ci95, model) if ok else None
    gain = theory.decision_gain(stats.ebn0, stats.imbalance_db) if ok else None
    return dict(checks=tuple(checks), trend=trend, loss_parts=parts, blind_ber=blind, decision_gain=gain,
                pulse=pulse, leakage=leak, noise_correlation=ncor, output_correlation=corr)


EDGE_SYMBOLS = 4   # symbols examined on each side of each burst edge
# An edge symbol belongs to the burst when its presence log-likelihood ratio
# exceeds this (0: equal prior odds).  At high Es/N0 a noise symbol then passes
# with probability about exp(-Es/N0 / 4) and a burst symbol fails with
# probability Phi(-sqrt(Es/N0 / 2)): about 2% and 0.3% at 12 dB.
EDGE_LLR = 0.0


def _refine_edges(x, x_start, grid, tones, fs, out, dec, ec, ref):
    """Move each burst edge by whole symbols where the edge symbols say so.

    For every symbol within ``EDGE_SYMBOLS`` of an edge (inside and outside),
    the log-likelihood ratio of "the burst's tone is present" against "noise
    only" is ``ln I0(2 g r / s2) - g^2 / s2`` with ``r`` the envelope on the
    branch of the tone that symbol should carry -- the pattern's bit when the
    pattern is known, the decided tone otherwise -- and ``g``, ``s2`` the
    signal amplitude and complex noise variance fitted on the burst.  The
    edge moves outwards over symbols whose ratio exceeds ``EDGE_LLR`` and
    inwards over symbols whose ratio does not.

    Returns the new grid with the outputs already made for its symbols and
    the first whole sample each was made on, or None when nothing changes.
    """
    n = grid.n_symbols
    if n < 4 * EDGE_SYMBOLS:
        return None
    sps = grid.samples_per_symbol
    # extended grid, as far as the samples allow
    pre = EDGE_SYMBOLS
    while pre > 0 and np.ceil(grid.first_start - pre * sps - 1e-9) < x_start:
        pre -= 1
    post = EDGE_SYMBOLS
    while post > 0 and np.ceil(grid.first_start + (n + post - 1) * sps - 1e-9) + grid.window > x_start + len(x):
        post -= 1
    ext = branches.symbol_grid(grid.first_start - pre * sps, sps, n + pre + post)
    # the burst's own outputs are known: correlate only the symbols beyond each edge
    at_pre = branches.symbol_grid(ext.first_start, sps, pre).first_samples if pre else np.empty(0, np.int64)
    at_post = branches.symbol_grid(grid.stop, sps, post).first_samples if post else np.empty(0, np.int64)
    z_edge = branches.correlate_at(x, x_start, np.concatenate((at_pre, at_post)), grid.window, tones, fs)
    z = np.concatenate((z_edge[:pre], out.z, z_edge[pre:]))
    used = (at_pre, grid.first_samples, at_post)
    dec_ext = branches.square_law(z)
    bits = dec_ext
    if ec is not None and ec.synced and ec.bits > 0:
        if ref.is_prbs and ec.slips == 0:
            # one alignment throughout: the pattern carried on over the symbols beyond each edge
            bits = ref.expected(ec.alignment, -pre, n + post).astype(np.int64)
        else:
            ec_ext, _ = _count(dec_ext, ref, ec.alignment - pre)    # bit k of the burst is bit k + pre here
            if ec_ext.synced:
                bits = ec_ext.expected.astype(np.int64)
    # fitted levels from the burst's own symbols (decisions)
    p = np.abs(out.z) ** 2
    on = p[np.arange(n), dec]
    off = p[np.arange(n), 1 - dec]
    s2 = float(np.mean(off))
    # each tone's own level: with unequal tones the weaker one's symbols at an
    # edge would fail a test made for the mean of the two
    g2_tone = np.array([np.mean(on[dec == i]) - s2 if np.any(dec == i) else np.nan for i in (0, 1)])
    g2_tone = np.where(np.isfinite(g2_tone) & (g2_tone > 0), g2_tone, np.mean(on) - s2)
    if not (np.all(g2_tone > 0) and s2 > 0):
        return None
    # the ratio of the symbols within EDGE_SYMBOLS of each edge (the only ones looked at below)
    near = np.r_[0:min(pre + EDGE_SYMBOLS, ext.n_symbols), max(pre + n - EDGE_SYMBOLS, 0):ext.n_symbols]
    b_idx = np.asarray(bits, np.int64)[near] % 2
    g2 = g2_tone[b_idx]
    g = np.sqrt(g2)
    r = np.abs(z[near, b_idx])
    llr = np.full(ext.n_symbols, np.nan)
    llr_near = branches.log_i0(2 * g * r / s2) - g2 / s2
    # correlated tones: the other branch carries the leakage |rho| g when the tone is there
    rho = abs(branches.template_correlation(tones, fs, grid.window))
    if rho > 0.05:
        r_o = np.abs(z[near, 1 - b_idx])
        llr_near = llr_near + branches.log_i0(2 * rho * g * r_o / s2) - (rho * g) ** 2 / s2
    llr[near] = llr_near
    first, stop = pre, pre + n                  # current edges in the extended grid
    tau = EDGE_LLR
    while first > 0 and llr[first - 1] > tau:
        first -= 1
    while first < pre + EDGE_SYMBOLS and first < stop - 1 and llr[first] < tau:
        first += 1
    while stop < ext.n_symbols and llr[stop] > tau:
        stop += 1
    while stop > pre + n - EDGE_SYMBOLS and stop > first + 1 and llr[stop - 1] < tau:
        stop -= 1
    if (first, stop) == (pre, pre + n) or stop - first < MIN_SYMBOLS:
        return None
    new = branches.symbol_grid(ext.starts[first], sps, stop - first)
    # the outputs already made for those symbols, and the whole samples they were made on
    return new, z[first:stop], np.concatenate(used)[first:stop]


def _summary(bursts: list[BurstResult]) -> Summary:
    if not bursts:
        return Summary(None, None, float("nan"), None)
    mom = estimate.pool_moments([b.moments for b in bursts])
    rho = float(np.mean([abs(b.rho) for b in bursts]))
    scale = float(np.mean([b.grid.samples_per_symbol / b.grid.window for b in bursts]))
    stats = estimate.branch_stats(mom, rho, scale, all(b.stats.data_aided for b in bursts))
    stats = estimate.with_physical_ebn0(stats, estimate.physical_ebn0(
        estimate.pool_energy([b.energy for b in bursts])))
    counted = [b.ber for b in bursts if b.ber is not None]
    ber = None
    if counted:
        bits = sum(c.bits for c in counted)
        errors = sum(c.errors for c in counted)
        lo, hi = theory.clopper_pearson(errors, bits)
        names = sorted({c.reference for c in counted})
        maps = sorted({c.tone_for_one for c in counted})
        ber = BerCount(reference=",".join(names), bits=bits, errors=errors,
                       rate=errors / bits if bits else float("nan"), ci95=(float(lo), float(hi)),
                       slips=sum(c.slips for c in counted), tone_for_one=",".join(maps))
    # expected BER of the pooled bits: the bit-weighted mean of each burst's theory
    w = np.array([b.ber.bits if b.ber is not None else b.n_symbols for b in bursts], float)
    th = np.array([b.ber_theory for b in bursts])
    ok = np.isfinite(th)
    ber_th = float(np.sum(w[ok] * th[ok]) / np.sum(w[ok])) if ok.any() else float("nan")
    loss = None
    if ber is not None and np.isfinite(stats.ebn0_db):
        loss = theory.implementation_loss_db(stats.ebn0_db, stats.ebn0_db_ci95, ber.errors, ber.bits)
    counts = [b.frames for b in bursts if b.frames is not None]
    fr = errorcount.pool_counts(counts) if counts else None
    fth = None
    if fr is not None and stats is not None:
        fth = errorcount.pooled_theory(counts, [b.frame_theory for b in bursts if b.frames is not None],
                                   stats.ebn0_db, stats.ebn0_db_ci95)
    reason = None
    if ber is None:
        reasons = list(dict.fromkeys(b.ber_reason for b in bursts if b.ber_reason))
        reason = reasons[0] if len(reasons) == 1 else "; ".join(
            f"burst {b.index}: {b.ber_reason}" for b in bursts if b.ber_reason) or None
    return Summary(stats=stats, ber=ber, ber_theory=ber_th, loss=loss, frames=fr, frame_theory=fth,
                   ber_reason=reason)


# --------------------------------------------------------------------------- entry points
def _thin_spectrogram(sg: np.ndarray, max_frames: int = 600) -> np.ndarray:
    """At most ``max_frames`` rows (block means) for the report figure: fewer rows than the
    figure's axes have pixels, so that drawing them drops none (a short burst would vanish)."""
    if sg.shape[0] <= max_frames:
        return sg
    k = int(np.ceil(sg.shape[0] / max_frames))
    n = sg.shape[0] // k
    return sg[:n * k].reshape(n, k, -1).mean(axis=1)


def _starting_point(x: np.ndarray, fs: float, band, opts: AnalysisOptions, path, start: int,
                    kind: str = "iq"):
    """Tones, symbol rate and its line quality to start a region from: hints, or blind estimates.

    Blind on receiver audio, the tone pairs from the strongest peaks of the
    region's spectrum are tried beside the modes of its instantaneous frequency,
    and among the pairs with a symbol-rate line the one that keys most clearly
    between its two tones (:func:`analyzer.blind.keying_contrast`) is kept: an FM receiver's noise fills the
    voice band, shaped by its filters, and can pull the frequency modes or
    raise a peak of its own.
    """
    if opts.tones_hz is not None:
        pairs = [tuple(opts.tones_hz)]
    else:
        pairs = [acquire.blind_tones(x, fs, band)]
        if kind == "audio":
            pairs += acquire.peak_tone_pairs(x, fs, band)
    found, score = None, -1.0
    for tones in pairs:
        got = acquire.blind_rate(x, fs, tones) if opts.symbol_rate_hz is None else (float(opts.symbol_rate_hz),
                                                                              float("inf"))
        if got is None:
            continue
        # among pairs with a symbol-rate line, the one that keys most clearly between its tones
        clear_line = len(pairs) > 1 and got[1] >= acquire.BLIND_MIN_LINE_QUALITY
        sc = acquire.keying_contrast(x, fs, tones, got[0]) if clear_line else 0.0
        if found is None or sc > score:
            found, score = (tones, *got), sc
    if found is None:
        warn(f"{path}: no symbol rate could be found in the burst near sample {start}; "
             "give --baud to analyse it")
        return None
    tones, rs, quality = found
    if quality < acquire.BLIND_MIN_LINE_QUALITY:
        warn(f"{path}: the candidate burst near sample {start} ({len(x)} samples) shows no symbol-rate "
             f"line (quality {quality:.1f}, below {acquire.BLIND_MIN_LINE_QUALITY:g}): a noise peak or an "
             "unkeyed carrier, not analysed; give --tones and --baud to analyse it anyway")
        return None
    return (float(tones[0]), float(tones[1])), float(rs), float(quality)


def _receiver_input(x: np.ndarray, kind: str) -> np.ndarray:
    """The samples the correlators see.

    For real audio the capture delivers the analytic signal ``x + j H{x}``
    (right for spectra and for finding the tones), but the Hilbert transform
    smears every phase step of a switched-oscillator transmitter over the
    neighbouring samples, which costs a noncoherent correlator about half a dB.
    The correlators therefore take ``2 Re`` of it -- the recording itself,
    scaled so a tone has the analytic amplitude and the noise the analytic
    variance; the image of each tone at the negative frequency that this lets
    through is down by the Dirichlet kernel at twice the tone frequency
    (-22 dB for 2200 Hz at 1200 Bd).
    """
    x = np.asarray(x)
    if kind == "audio":
        return (2.0 * x.real).astype(np.complex128)
    return x.astype(np.complex128)


def _common_rate(starts: list) -> list:
    """Bursts of one capture share a transmitter: a blind rate that is a whole multiple
    (2..6, within 0.5%) of the rate found with the strongest timing line is that
    rate's harmonic, and is replaced by it."""
    found = [s for s in starts if s is not None]
    if len(found) < 2:
        return starts
    ref = max(found, key=lambda s: s[2])[1]
    out = []
    for s in starts:
        if s is None:
            out.append(None)
            continue
        k = round(s[1] / ref)
        if 2 <= k <= 6 and abs(s[1] / ref - k) < 0.005 * k:
            s = (s[0], ref, s[2])
        out.append(s)
    return out


@dataclass(frozen=True)
class _RegionContext:
    """What the analysis of any region needs besides the region itself."""

    read: Callable[[int, int], np.ndarray]
    kind: str
    fs: float
    opts: AnalysisOptions
    bits_text: str | None
    full_scale: float
    path: object = None


def _region_bursts(ctx: _RegionContext, a: int, b: int, start, noise_var: float) -> list[BurstResult]:
    """Every burst in the capture region ``[a, b)`` (indices numbered from 0 within the region)."""
    if start is None:
        return []
    x = _receiver_input(ctx.read(a, b - a), ctx.kind)
    tones0, rs0 = start
    out: list[BurstResult] = []
    for grid0, first, stop, span in _acquire_bursts_in_span(x, a, ctx.fs, tones0, rs0, noise_var):
        out.append(_analyse_burst(len(out), x, a, ctx.fs, grid0, first, stop, ctx.opts, ctx.bits_text,
                                  ctx.full_scale, tones0, rs0, span))
    return out


def _region_start(ctx: _RegionContext, a: int, b: int, band):
    """Blind starting point (tones, rate, line quality) of the region ``[a, b)``, or None."""
    return _starting_point(ctx.read(a, b - a).astype(np.complex128), ctx.fs, band, ctx.opts, ctx.path, a,
                           ctx.kind)


#: Fewest busy regions for which worker processes pay for themselves (forking
#: two workers costs a few tens of milliseconds, a region of a few thousand
#: symbols about as much).
PARALLEL_MIN_REGIONS = 4


def _fork_map(fn, ctx: _RegionContext, tasks: list, workers: int | None, busy: int):
    """``fn(ctx, *task)`` for each task in order, in forked workers once ``busy`` (the tasks
    with real work) reaches :data:`PARALLEL_MIN_REGIONS` (see :func:`analyzer.workers.fork_map`)."""
    n = fork_workers(workers) if busy >= PARALLEL_MIN_REGIONS else 1
    return fork_map(fn, ctx, tasks, n)


def analyze_capture(cap: Capture, opts: AnalysisOptions, bits_text: str | None = None,
                    progress: Callable[[int, int, str], None] | None = None,
                    prior_warnings: tuple[str, ...] = (), block: int | None = None,
                    workers: int | None = None, strict: bool = False) -> AnalysisResult:
    """Analyse an opened capture (see :func:`analyze`).

    ``prior_warnings`` (from opening the capture) are put first in the result's warnings.
    ``block`` is the number of samples read at a time in the passes over the
    capture (default :data:`BLOCK_SAMPLES`); it changes memory use, not results.
    ``workers`` is the number of processes that share the pass over the capture
    and the burst regions (default :func:`analyzer.workers.default_workers`; 1
    keeps everything in this process); it changes speed, not results.
    A SigMF checksum still to be checked (``cap.sha512_unchecked``, from
    ``open_capture(..., verify=False)``) is checked in the first pass over
    the file; ``strict`` makes a mismatch an error instead of a warning.
    """
    _check_hints(cap, opts)
    keep_freed_memory()
    # The matrices here are small (a burst's symbols by a few columns): a
    # multi-threaded BLAS spends more time waking and spinning its threads
    # than computing, and its idle threads take the core from worker processes.
    from threadpoolctl import threadpool_limits

    with threadpool_limits(limits=1, user_api="blas"):
        return _analyze_capture(cap, opts, bits_text, progress, prior_warnings, block, workers, strict)


def _checked_survey(cap: Capture, strict: bool, **kw) -> survey.Survey:
    """The survey pass; with a SigMF checksum still to check, the file's SHA-512 formed in the same
    pass and compared (a mismatch warns, or with ``strict`` is an error, as when checked on opening)."""
    expected = getattr(cap, "sha512_unchecked", None)
    if not expected:
        return survey.survey(**kw)
    from ..capture import CaptureDigest

    digest = CaptureDigest(cap.data_path, cap.sample_bytes)
    try:
        scan = survey.survey(digest=digest, **kw)
    except InputError:
        # checked on opening, a strict mismatch came before any problem the pass finds
        if strict:
            verify_sha512(cap.data_path, expected, digest.hexdigest(), strict)
        raise
    finally:
        digest.close()
    verify_sha512(cap.data_path, expected, digest.hexdigest(), strict)
    return scan


def _analyze_capture(cap: Capture, opts: AnalysisOptions, bits_text, progress, prior_warnings, block,
                     workers, strict=False) -> AnalysisResult:
    fs = cap.sample_rate_hz
    nfft_psd = int(min(survey.SPECTROGRAM_NFFT, 2 ** np.floor(np.log2(max(cap.n_samples, 16)))))
    # the passes: the survey (checks, DC, spectra, and the power trace when the band is
    # known from the hints), the power trace (blind only), then the bursts; progress
    # counts samples over all of them
    n_passes = 2 if opts.tones_hz is not None else 3
    done = {"pass": 0}

    def stage_progress(name: str):
        if progress is None:
            return None
        k = done["pass"]
        done["pass"] += 1
        total = n_passes * cap.n_samples

        def cb(pos: int, n: int, _stage: str = name) -> None:
            progress(k * cap.n_samples + int(pos * cap.n_samples / max(n, 1)), total, _stage)

        return cb

    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", CaptureWarning)
        rs = opts.symbol_rate_hz
        known: survey.TraceSpec | None = None
        if opts.tones_hz is not None:
            # the band to watch is known from the hints: one pass gives spectra and power trace
            f0, f1 = opts.tones_hz
            guard = rs if rs is not None else f1 - f0
            band = (f0 - guard, f1 + guard)
            known = survey.TraceSpec(band, *_trace_frame(cap, band, rs))
        blk = _block_size(block, nfft_psd, survey.SPECTROGRAM_NFFT, known.frame if known else 1)
        stage = "spectrum and power" if known else "spectrum"
        scan = _checked_survey(cap, strict, read=cap.read, n_samples=cap.n_samples, sample_rate_hz=fs, block=blk,
                               nfft_psd=nfft_psd, kind=cap.kind, clip_level=getattr(cap, "clip_level", None),
                               path=cap.path, trace=known,
                               stride=survey.spectrogram_stride(cap.n_samples, every_frame=known is None),
                               progress=stage_progress(stage), stage=stage, workers=fork_workers(workers))
        if cap.n_samples == 0 or not scan.any_signal:
            raise InputError("the capture holds no signal (all samples are zero)", cap.path,
                             "check the recording chain")
        clipped_fraction = None
        if getattr(cap, "clip_level", None) is not None:
            clipped_fraction = scan.clipped / cap.n_samples
            if scan.clipped:
                warn(f"{cap.path}: {scan.clipped} samples ({100 * clipped_fraction:.3g}%) are at the converter "
                     f"limit (|I| or |Q| >= {cap.clip_level:.4g} of full scale): the capture is clipped, so "
                     "tone energies and Eb/N0 are biased; lower the receiver gain")
        read = _reader(cap, scan.mean)
        sgram = scan.spectrogram
        if known is None:
            band = acquire.occupied_band(sgram, fs, positive_only=cap.kind == "audio")
            if band is None:
                floor_db = 10 * np.log10(max(float(np.median(sgram)) * nfft_psd / nfft_psd, 1e-30)) \
                    if sgram.size else float("-inf")
                raise InputError(f"no tone bursts found above the noise floor ({floor_db:.1f} dBFS per "
                                 f"sample)", cap.path, "check that the capture holds a transmission, or give "
                                 "--tones and --baud")
            spec = survey.TraceSpec(band, *_trace_frame(cap, band, rs))
            trace = survey.trace_pass(cap.read, cap.n_samples, fs, _block_size(block, spec.frame), spec, scan.mean,
                                      stage_progress("power trace"))
        else:
            spec = known
            trace = scan.trace
        power = trace.power
        frame = spec.frame
        freqs, psd = scan.freqs, scan.psd
        bw = band[1] - band[0]
        sps_min = fs / rs if rs is not None else max(2.0, fs / bw)
        bins = trace.bins
        # the noise floor frame by frame, from the out-of-band noise (NaN without it)
        oob_track = acquire.floor_track(trace, float("nan"))
        spans, floor = acquire.find_bursts(trace, MIN_SYMBOLS * sps_min, track=oob_track)
        noise_var = floor * frame / max(bins, 1)       # complex noise variance per sample
        full_scale = 1.0
        floor_dbfs = float(10 * np.log10(noise_var)) if noise_var > 0 else float("-inf")
        if not np.any(power > 0):
            raise InputError("the capture holds no signal (every sample has the same value)", cap.path,
                             "check the recording chain")
        # reported when noise and signal alone would give so large a mean with a probability
        # under survey.DC_FALSE_ALARM (a significance test against the spectrum near 0 Hz)
        dc_power = abs(scan.mean) ** 2
        ac_power = max(scan.power - dc_power, 0.0)
        _, dc_p = survey.dc_offset_test(scan.mean, cap.n_samples, freqs, psd, real=cap.kind == "audio")
        rel = 10 * np.log10(dc_power / ac_power) if ac_power > 0 and dc_power > 0 else float("inf")
        # ... and large enough to matter: a mean 60 dB or more below the signal changes no figure
        if dc_power > 0 and dc_p < survey.DC_FALSE_ALARM and rel > DC_NEGLIGIBLE_DB:
            level = (f"mean sample value {scan.mean.real:.4g} of full scale" if cap.kind == "audio" else
                     f"I {scan.mean.real:.4g}, Q {scan.mean.imag:.4g} of full scale")
            warn(f"{cap.path}: DC offset of {10 * np.log10(dc_power):.1f} dBFS "
                 f"({level}, {rel:.1f} dB against the rest of the signal); removed before analysis")
        margin = 8 * frame + 4 * int(np.ceil(sps_min if rs is None else fs / rs))
        # close spans are joined: a weak burst can dip under the threshold for a
        # while, and the symbol-level segmentation splits real gaps precisely
        # (gaps up to twice the longest moving average of the burst search)
        k_long = acquire.smoothing_frames(bins)
        regions = _merge_spans(spans, gap=int(2 * k_long * frame), margin=margin, n_samples=cap.n_samples)
        regions = [piece for a, b in regions for piece in _split_region(a, b, power, frame, MAX_REGION_SAMPLES)]
        burst_cb = stage_progress("bursts")
        region_total = max(sum(b - a for a, b in regions), 1)
        region_done = 0
        bursts: list[BurstResult] = []
        ctx = _RegionContext(read, cap.kind, fs, opts, bits_text, full_scale, cap.path)
        if opts.tones_hz is not None and opts.symbol_rate_hz is not None:
            # hints give every region its starting point: no need to read the regions twice
            starts = [(tuple(opts.tones_hz), float(opts.symbol_rate_hz), float("inf"))] * len(regions)
        else:
            starts = list(_fork_map(_region_start, ctx, [(a, b, band) for a, b in regions], workers, len(regions)))
            starts = _common_rate(starts)
        # the noise floor where each region lies (it may drift along the capture)
        track = (oob_track if np.all(np.isfinite(oob_track)) else np.full(len(power), floor)) * frame / max(bins, 1)
        tasks = []
        for (a, b), start in zip(regions, starts):
            if start is None:
                tasks.append((a, b, None, 0.0))
                continue
            fa, fb = a // frame, max(a // frame + 1, min(b // frame, len(track)))
            local_nv = float(np.median(track[fa:fb])) if fb > fa and len(track) else noise_var
            tasks.append((a, b, (tuple(start[0]), float(start[1])), local_nv))
        busy = sum(t[2] is not None for t in tasks)
        for (a, b, _, _), found in zip(tasks, _fork_map(_region_bursts, ctx, tasks, workers, busy)):
            region_done += b - a
            first = len(bursts)          # taken before extending: the list grows while it is extended
            bursts.extend(replace(r, index=first + i) for i, r in enumerate(found))
            if burst_cb:
                burst_cb(region_done, region_total)
        sps = sps_min
        if not bursts:
            # were there bursts, only too short?  Segment again, keeping runs of 2 symbols or more.
            short = _merge_spans(acquire.find_bursts(trace, 2 * sps)[0], gap=int(4 * sps), margin=margin,
                                 n_samples=cap.n_samples)
            short = [piece for a, b in short for piece in _split_region(a, b, power, frame, MAX_REGION_SAMPLES)]
            longest = 0
            for a, b in short:
                x = read(a, b - a).astype(np.complex128)
                start = _starting_point(x, fs, band, opts, cap.path, a)
                if start is None:
                    continue
                for _, first, stop, _ in _acquire_bursts_in_span(x, a, fs, start[0], start[1], noise_var,
                                                              min_symbols=2):
                    longest = max(longest, stop - first)
            if 0 < longest < MIN_SYMBOLS:
                raise InputError(f"bursts shorter than {MIN_SYMBOLS} symbols (the longest found is about "
                                 f"{longest:.0f} symbols)", cap.path,
                                 f"tonepair needs bursts of at least {MIN_SYMBOLS} symbols; check --baud")
            raise InputError(f"no tone bursts found above the noise floor ({floor_dbfs:.1f} dBFS "
                             f"per sample)", cap.path,
                             "check --tones/--baud, or that the capture holds a transmission")
        summary = _summary(bursts)
    messages = tuple(prior_warnings) + tuple(str(w.message) for w in caught
                                             if issubclass(w.category, CaptureWarning))
    spec_db = 10 * np.log10(np.maximum(psd, 1e-30))
    return AnalysisResult(capture=cap, options=opts, bursts=tuple(bursts), summary=summary,
                          noise_floor_dbfs=floor_dbfs, spectrum_hz=freqs, spectrum_db=spec_db,
                          spectrogram=_thin_spectrogram(sgram), spectrogram_frame=nfft_psd, band_hz=band,
                          warnings=messages, dc_offset=complex(scan.mean), clipped_fraction=clipped_fraction)


def analyze(path: str | Path, tones_hz=None, symbol_rate_hz: float | None = None,
            sample_rate_hz: float | None = None, fmt: str | None = None, reference: str = "auto",
            decision: str = "square-law",
            progress: Callable[[int, int, str], None] | None = None, strict: bool = False,
            block: int | None = None, workers: int | None = None) -> AnalysisResult:
    """Analyse a capture of two-tone FSK bursts.

    Parameters
    ----------
    path : str or Path
        SigMF (.sigmf-meta/.sigmf-data), raw I/Q, or WAV/FLAC file.
    tones_hz : (float, float)
        Nominal tones: baseband Hz for I/Q, audio Hz for audio.
    symbol_rate_hz : float
        Nominal symbol rate.
    sample_rate_hz, fmt : optional
        For raw files: sample rate and ``cf32|ci16|ci8|cu8``.
    reference : str
        ``auto`` (detect an O.150 pattern, else HDLC frames), ``none``, ``frames``
        (HDLC frames with a valid FCS), ``PN7`` ... ``PN23`` or ``bits:FILE`` (a
        text file of 0/1 characters, repeated cyclically).
    decision : str
        ``square-law`` or ``likelihood``.
    progress : callable, optional
        Called as ``progress(done, total, stage)`` as the analysis goes: ``done``
        of ``total`` work units (samples, counted once per pass over the capture
        and once for the burst regions) and the name of the current stage.
    strict : bool
        A SigMF checksum mismatch is an error instead of a warning.
    block : int, optional
        Samples read at a time in the passes over the capture (default
        :data:`BLOCK_SAMPLES`, rounded up to whole frames); results do not
        depend on it.
    workers : int, optional
        Processes that share the pass over the capture and the burst regions
        (default: the cores available; 1 = all in this process).  Results do not depend on
        it.  Workers are forked, so this applies where the platform can fork
        and no other thread is running; elsewhere the analysis stays in this
        process.

    Returns
    -------
    AnalysisResult

    Raises
    ------
    InputError
        For any unusable input or option.
    """
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", CaptureWarning)
        # the checksum is checked in the analysis's own pass over the file (read once)
        cap = open_capture(path, rate=sample_rate_hz, fmt=fmt, strict=strict, verify=False)
    opened = tuple(str(w.message) for w in caught if issubclass(w.category, CaptureWarning))
    bits_text = None
    if reference.startswith("bits:"):
        bpath = Path(reference[5:])
        try:
            bits_text = bpath.read_text()
        except OSError as exc:
            raise InputError(f"cannot read the bits file ({exc.strerror or exc})", bpath,
                             "give --reference bits:FILE with a text file of 0/1 characters") from None
    elif reference not in ("auto", "none", "frames") and reference not in errorcount.PATTERNS:
        raise InputError(f"unknown reference {reference!r}", None,
                         "use auto, none, frames, " + ", ".join(errorcount.PATTERNS) + " or bits:FILE")
    if decision not in ("square-law", "likelihood"):
        raise InputError(f"unknown decision rule {decision!r}", None, "use square-law or likelihood")
    opts = AnalysisOptions(tones_hz=None if tones_hz is None else (float(tones_hz[0]), float(tones_hz[1])),
                           symbol_rate_hz=None if symbol_rate_hz is None else float(symbol_rate_hz),
                           reference=reference, decision=decision)
    return analyze_capture(cap, opts, bits_text=bits_text, progress=progress, prior_warnings=opened, block=block,
                           workers=workers, strict=strict)
