"""Figures for the HTML and PDF reports (matplotlib, headless).

Each figure function takes an :class:`~analyzer.pipeline.AnalysisResult` and
returns a matplotlib Figure with a fixed or constrained layout, so it is laid
out in the one pass that draws it.  :func:`render` draws a figure once into a
PNG; the HTML embeds that PNG and the PDF places the same picture on its A4
pages, so no figure is drawn twice.  :func:`render_all` draws the figures of
one report, in forked processes where there are cores.  Figures subsample
long data so reports stay small whatever the capture size.
"""

from __future__ import annotations

import base64
import io
from dataclasses import dataclass

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402

from .. import theory  # noqa: E402
from ._style import INK, MUTED, RULE as GRID  # noqa: E402

# our own palette: slate for data, amber for tone 0, teal for tone 1, brick for theory
TONE_COLOURS = ("#c9821a", "#1f8a86")
THEORY = "#9c3b2f"
MAX_POINTS = 20000
#: Resolution of every figure picture (HTML and PDF alike).
DPI = 120


def _style(ax):
    ax.grid(True, color=GRID, linewidth=0.6)
    for side in ("top", "right"):
        ax.spines[side].set_visible(False)
    ax.tick_params(labelsize=8)


def _figure(w: float, h: float, ncols: int = 1, **kw):
    """A figure laid out by the constrained engine when it is drawn (one pass, no second layout)."""
    fig = plt.figure(figsize=(w, h), layout="constrained", dpi=DPI)
    axes = fig.subplots(1, ncols, **kw)
    return fig, axes


@dataclass(frozen=True)
class Picture:
    """One drawn figure: PNG bytes and its size in pixels and inches."""

    png: bytes
    width_px: int
    height_px: int
    dpi: int

    @property
    def size_in(self) -> tuple[float, float]:
        return self.width_px / self.dpi, self.height_px / self.dpi

    def base64(self) -> str:
        return base64.b64encode(self.png).decode("ascii")

    def pixels(self) -> np.ndarray:
        """The picture as an RGB array (decoded from the PNG)."""
        from PIL import Image

        return np.asarray(Image.open(io.BytesIO(self.png)).convert("RGB"))


def render(fig, dpi: int = DPI) -> Picture:
    """Draw ``fig`` once and return it as a PNG picture (the figure is closed)."""
    from PIL import Image

    fig.set_dpi(dpi)
    fig.canvas.draw()
    rgba = np.asarray(fig.canvas.buffer_rgba())
    h, w = rgba.shape[:2]
    buf = io.BytesIO()
    Image.fromarray(rgba[..., :3]).save(buf, format="png", compress_level=6)
    plt.close(fig)
    return Picture(buf.getvalue(), w, h, dpi)


def to_png_base64(fig, dpi: int = DPI) -> str:
    """PNG of ``fig`` as base64 text (the figure is closed)."""
    return render(fig, dpi).base64()


#: The figures of one analysis report: name -> (function, burst index or None).
MAX_BURST_FIGURES = 4


def report_figures(result) -> list[tuple[str, str, int | None]]:
    """(key, function name, burst index) of each figure an analysis report shows."""
    out = [("ber", "ber_curve", None), ("spectrogram", "spectrogram", None), ("spectrum", "spectrum", None)]
    for i in range(min(len(result.bursts), MAX_BURST_FIGURES)):
        out += [(f"envelopes{i}", "envelope_histograms", i), (f"scatter{i}", "iq_scatter", i),
                (f"trend{i}", "ebn0_trend", i), (f"loss{i}", "loss_bars", i)]
    return out


def _draw_some(result, items):
    import warnings

    out = []
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        for key, fn, i in items:
            f = globals()[fn]
            out.append((key, render(f(result) if i is None else f(result, i))))
    return out


def _idle_cores() -> int:
    """Cores not already busy (by the one-minute load average): forking onto busy cores only adds CPU."""
    import os

    from ..parallel import default_workers

    try:
        load = os.getloadavg()[0]
    except (AttributeError, OSError):
        return default_workers()
    return max(1, int(default_workers() - load + 0.5))


def render_all(result, workers: int | None = 1) -> dict[str, Picture]:
    """Draw every figure of the report once: key -> :class:`Picture`.

    With ``workers`` > 1 (``None``: every core) and a platform that forks, the
    figures are shared among that many forked processes, at most one per idle
    core and one per three figures (pictures are the same either way: each is
    drawn by the same code from the same result).
    """
    from ..parallel import fork_map, fork_workers

    items = report_figures(result)
    n = min(fork_workers(workers), len(items) // 3, _idle_cores())
    if n <= 1:
        return dict(_draw_some(result, items))
    chunks = [(items[k::n],) for k in range(n)]            # round robin: the costly ones spread out
    out = {}
    for part in fork_map(_draw_some, result, chunks, n):
        out.update(part)
    return {key: out[key] for key, _f, _i in items}


def spectrum(result):
    """Averaged spectrum of the capture with the measured tones of every burst marked."""
    fig, ax = _figure(8.0, 3.0)
    f = result.spectrum_hz
    p = result.spectrum_db - np.max(result.spectrum_db)
    ax.plot(f / 1e3, p, color=INK, linewidth=0.8)
    for b in result.bursts:
        for i, ft in enumerate(b.tones_hz):
            ax.axvline(ft / 1e3, color=TONE_COLOURS[i], linewidth=1.0, alpha=0.8,
                       label=f"tone {i} measured" if b.index == 0 else None)
    if result.options.tones_hz is not None:
        for ft in result.options.tones_hz:
            ax.axvline(ft / 1e3, color=INK, linestyle=":", linewidth=1.0)
        ax.plot([], [], color=INK, linestyle=":", label="nominal")
    ax.set_xlabel("frequency (kHz)" + (" audio" if result.capture.kind == "audio" else " from centre"), fontsize=8)
    ax.set_ylabel("power (dB, peak = 0)", fontsize=8)
    ax.set_ylim(max(np.percentile(p, 1) - 3, -80), 3)
    ax.legend(fontsize=7, loc="upper right", frameon=True, facecolor="white", edgecolor=GRID)
    _style(ax)
    return fig


def envelope_histograms(result, burst_index: int = 0):
    """Envelopes |z_i| of each branch pair when its tone was sent and when not, with fitted curves.

    Sent: Rician with ``nu = g_i`` and ``sigma^2`` the variance of one real output;
    not sent: Rayleigh with that branch's ``sigma`` (a Rician with
    ``nu = |rho| g_j`` when the tones are not orthogonal).  Curves come from
    ``scipy.stats.rice`` and ``scipy.stats.rayleigh``.
    """
    from scipy import stats

    b = result.bursts[burst_index]
    r = np.abs(b.outputs.z)
    sent = b.sent
    g = b.stats.signal_gain
    sig = np.sqrt(np.clip(b.stats.noise_var, 1e-300, None))
    rho = abs(b.rho)
    fig, axes = _figure(8.0, 2.8, 2)
    for i, ax in enumerate(axes):
        j = 1 - i
        on = r[sent == i, i]
        off = r[sent == j, i]
        hi = np.percentile(np.concatenate([on, off]), 99.5) if len(on) + len(off) else 1.0
        bins = np.linspace(0, hi, 50)
        ax.hist(off, bins=bins, density=True, color=GRID, edgecolor="white", label="tone not sent")
        ax.hist(on, bins=bins, density=True, color=TONE_COLOURS[i], alpha=0.55, edgecolor="white",
                label="tone sent")
        x = np.linspace(0, hi, 300)
        if g[i] > 0:
            ax.plot(x, stats.rice.pdf(x, g[i] / sig[i], scale=sig[i]), color=THEORY, linewidth=1.2,
                    label="Rician fit")
        leak = rho * g[j]
        if leak > 0.05 * sig[i]:
            ax.plot(x, stats.rice.pdf(x, leak / sig[i], scale=sig[i]), color=INK, linewidth=1.0,
                    linestyle="--", label="Rician fit (leakage)")
        else:
            ax.plot(x, stats.rayleigh.pdf(x, scale=sig[i]), color=INK, linewidth=1.0, linestyle="--",
                    label="Rayleigh fit")
        ax.set_title(f"tone {i} branch pair ({b.tones_hz[i]:.0f} Hz)", fontsize=9)
        ax.set_xlabel("envelope |z|", fontsize=8)
        _style(ax)
        ax.legend(fontsize=6.5, frameon=False)
    axes[0].set_ylabel("density", fontsize=8)
    return fig


def ber_curve(result, size=(4.4, 3.2)):
    """Theory BER against Eb/N0 with each measured point and its two intervals.

    One theory curve per distinct link model (models whose tone correlation
    is within 0.05 and imbalance within 0.25 dB of one another draw the same
    curve and share one legend entry), each with its own line style; bursts drawn as circles,
    the pooled result as a diamond, a burst with no errors as a triangle at its
    upper bound.
    """
    fig, ax = _figure(*size)
    x = np.linspace(0, 16, 200)
    ax.semilogy(x, theory.ber_orthogonal(10 ** (x / 10)), color=THEORY, linewidth=1.4,
                label="theory: orthogonal, equal energy")
    models: dict = {}
    for b in result.bursts:
        m = b.theory_model
        if m.closed_form != "orthogonal":
            key = (m.closed_form, round(m.tone_correlation / 0.05), round(m.imbalance_db / 0.25))
            models.setdefault(key, []).append(m)
    for ms, ls in zip(models.values(), ("--", "-.", ":")):
        m = ms[0]
        rho = float(np.mean([q.tone_correlation for q in ms]))
        imb = float(np.mean([q.imbalance_db for q in ms]))
        n = f", {len(ms)} bursts" if len(ms) > 1 else ""
        ax.semilogy(x, theory.ber_expected(10 ** (x / 10), m), color=THEORY, linestyle=ls, linewidth=1.0,
                    label=f"theory: {m.closed_form.replace('-', ' ')} (|ρ| {rho:.2f}, {imb:+.1f} dB{n})")
    pts = [(b.stats, b.ber, False) for b in result.bursts if b.ber is not None]
    if result.summary.ber is not None and result.summary.stats is not None and len(result.bursts) > 1:
        pts.append((result.summary.stats, result.summary.ber, True))
    labelled = set()
    for st, br, pooled in pts:
        if not np.isfinite(st.ebn0_db):
            continue
        zero = br.errors == 0
        y = br.rate if not zero else br.ci95[1]
        xerr = np.array([[st.ebn0_db - st.ebn0_db_ci95[0]], [st.ebn0_db_ci95[1] - st.ebn0_db]])
        yerr = np.array([[max(y - br.ci95[0], 0) if not zero else 0], [max(br.ci95[1] - y, 0)]])
        kind = "all bursts pooled" if pooled else ("burst, no errors (upper bound)" if zero else "burst")
        ax.errorbar([st.ebn0_db], [y], xerr=np.nan_to_num(xerr), yerr=yerr,
                    fmt="D" if pooled else ("v" if zero else "o"), color=INK if not pooled else TONE_COLOURS[1],
                    markersize=6 if pooled else 4, capsize=3, linewidth=1.0, uplims=zero and not pooled,
                    zorder=3 if pooled else 2, label=None if kind in labelled else kind)
        labelled.add(kind)
    ax.set_xlabel("Eb/N0 (dB)", fontsize=8)
    ax.set_ylabel("bit error rate", fontsize=8)
    ax.set_ylim(1e-7, 0.6)
    ax.set_xlim(0, 16)
    _style(ax)
    ax.legend(fontsize=6.5, frameon=False, loc="lower left")
    return fig


def waterfall(sweep: dict):
    """BER against Eb/N0 for a sweep: theory, the measured points with both intervals,
    and the theory curve shifted by the fitted implementation loss.

    ``sweep`` is the JSON-ready sweep report (see :func:`analyzer.report.sweep_report`).
    """
    fig, ax = _figure(6.4, 4.2)
    pts = sweep["points"]
    e_all = [p["ebn0_db"] for p in pts if p["ebn0_db"] is not None]
    x_hi = max(16.0, (max(e_all) + 2.0) if e_all else 16.0)
    x = np.linspace(0, x_hi, 300)
    ideal = theory.ber_orthogonal(10 ** (x / 10))
    ax.semilogy(x, ideal, color=THEORY, linewidth=1.4, label="ideal: ½·exp(−Eb/2N0)")
    L = sweep["implementation_loss_db"]
    if L is not None:
        ax.semilogy(x + L, ideal, color=TONE_COLOURS[1], linewidth=1.2, linestyle="--",
                    label=f"fitted: ideal shifted by L = {L:+.2f} dB")
        t, et = sweep["target_ber"], sweep["ebn0_at_target_db"]
        ax.axhline(t, color=GRID, linewidth=0.8)
        if et is not None:
            ax.plot([et], [t], linestyle="none", marker="*", color=TONE_COLOURS[0], markersize=10,
                    markeredgecolor=INK, markeredgewidth=0.5, zorder=4,
                    label=f"Eb/N0 needed for BER {t:.0e}: {et:.2f} dB")
    labelled = set()
    for p in sorted(pts, key=lambda q: (q["ebn0_db"] is None, q["ebn0_db"] or 0.0)):
        if p["ebn0_db"] is None or p["bits"] == 0:
            continue
        zero = p["errors"] == 0
        y = p["ber_ci95"][1] if zero else p["ber"]
        lo, hi = p["ebn0_db_ci95"]
        xerr = [[p["ebn0_db"] - (lo if lo is not None else p["ebn0_db"])],
                [(hi if hi is not None else p["ebn0_db"]) - p["ebn0_db"]]]
        yerr = [[0 if zero else max(y - p["ber_ci95"][0], 0)], [0 if zero else max(p["ber_ci95"][1] - y, 0)]]
        kind = "no errors: 95% upper bound" if zero else "measured (95% intervals)"
        ax.errorbar([p["ebn0_db"]], [y], xerr=xerr, yerr=yerr, fmt="v" if zero else "o",
                    color=MUTED if zero else INK, mfc="white" if zero else INK, markersize=5, capsize=3,
                    linewidth=1.0, label=None if kind in labelled else kind)
        labelled.add(kind)
    ax.set_xlabel("Eb/N0 (dB)", fontsize=8)
    ax.set_ylabel("bit error rate", fontsize=8)
    ax.set_ylim(1e-7, 0.6)
    ax.set_xlim(0, x_hi)
    _style(ax)
    ax.legend(fontsize=7, frameon=False, loc="lower left")
    return fig


def occupied_band(result) -> tuple[float, float] | None:
    """Frequency span (Hz) holding every burst's tones with two symbol rates of margin, or None."""
    if not result.bursts:
        return None
    lo = min(min(b.tones_hz) - 2 * b.symbol_rate_hz for b in result.bursts)
    hi = max(max(b.tones_hz) + 2 * b.symbol_rate_hz for b in result.bursts)
    return lo, hi


def spectrogram(result):
    """Spectrogram of the whole capture with each burst boxed and its measured tones marked.

    The frequency axis is zoomed to the band the bursts occupy (when that is
    under half the sample band); a note in the corner gives the full band.
    """
    from matplotlib.patches import Rectangle

    sg = result.spectrogram
    fig, ax = _figure(8.0, 3.4)
    if sg is None or sg.size == 0:
        ax.text(0.5, 0.5, "capture too short for a spectrogram", ha="center", va="center", transform=ax.transAxes)
        return fig
    fs = result.capture.sample_rate_hz
    n = result.capture.n_samples
    cells = sg.shape[1]
    f_lo, f_hi = (0.0, fs / 2) if result.capture.kind == "audio" else (-fs / 2, fs / 2)
    edges = np.linspace(-fs / 2, fs / 2, cells + 1)
    band = occupied_band(result)
    zoom = band is not None and (band[1] - band[0]) < 0.5 * (f_hi - f_lo)
    if zoom:
        band = (max(band[0], f_lo), min(band[1], f_hi))
        centres = 0.5 * (edges[:-1] + edges[1:])
        keep = (centres >= band[0] - (edges[1] - edges[0])) & (centres <= band[1] + (edges[1] - edges[0]))
        if keep.sum() >= 2:
            idx = np.flatnonzero(keep)
            sg = sg[:, idx[0]:idx[-1] + 1]
            edges = edges[idx[0]:idx[-1] + 2]
        else:
            zoom = False
    db = 10 * np.log10(np.maximum(sg, 1e-30))
    lo_db = np.percentile(db, 5)
    hi_db = np.percentile(db, 99.9)
    ax.imshow(db.T, origin="lower", aspect="auto", cmap="bone_r", vmin=lo_db, vmax=hi_db,
              extent=(0, n / fs, edges[0] / 1e3, edges[-1] / 1e3), interpolation="nearest")
    label_box = {"facecolor": "white", "edgecolor": "none", "alpha": 0.85, "pad": 0.8}
    for b in result.bursts:
        t0, t1 = b.grid.first_start / fs, b.grid.stop / fs
        pad = 0.5 * b.symbol_rate_hz
        f0, f1 = b.tones_hz[0] - pad, b.tones_hz[1] + pad
        ax.add_patch(Rectangle((t0, f0 / 1e3), t1 - t0, (f1 - f0) / 1e3, fill=False, edgecolor=THEORY,
                               linewidth=1.2))
        for i, ft in enumerate(b.tones_hz):
            ax.plot([t0, t1], [ft / 1e3, ft / 1e3], color=TONE_COLOURS[i], linewidth=1.0)
        ax.text(t0, f1 / 1e3, f"{b.index}", color=INK, fontsize=7, va="bottom", ha="left", bbox=label_box)
    if zoom:
        ax.set_ylim(band[0] / 1e3, band[1] / 1e3)
        ax.text(0.995, 0.985, f"zoomed to the bursts; full band {f_lo / 1e3:.1f} … {f_hi / 1e3:.1f} kHz",
                transform=ax.transAxes, ha="right", va="top", fontsize=6.5, color=INK, bbox=label_box)
    else:
        ax.set_ylim(f_lo / 1e3, f_hi / 1e3)
    ax.set_xlabel("time (s)", fontsize=8)
    ax.set_ylabel("frequency (kHz)" + (" audio" if result.capture.kind == "audio" else " from centre"), fontsize=8)
    ax.tick_params(labelsize=8)
    return fig


SCATTER_POINTS = 4000


def iq_scatter(result, burst_index: int = 0):
    """The four outputs as two I/Q planes (one per tone), points coloured by the decision.

    At most ``SCATTER_POINTS`` symbols are drawn (evenly spaced through the burst).
    A tone's plane shows a ring of radius ``g_i`` when it was sent and a cloud at
    the origin when not.
    """
    b = result.bursts[burst_index]
    z = b.outputs.z
    dec = np.asarray(b.decisions).astype(int)
    keep = np.unique(np.linspace(0, len(z) - 1, min(len(z), SCATTER_POINTS)).astype(int))
    z, dec = z[keep], dec[keep]
    fig, axes = _figure(8.0, 3.9, 2)
    lim = 1.15 * float(np.percentile(np.abs(z), 99.5)) if len(z) else 1.0
    for i, ax in enumerate(axes):
        # the tone not sent first (drawn under), the legend in tone order in both planes
        for d in (1 - i, i):
            sel = dec == d
            ax.scatter(z[sel, i].real, z[sel, i].imag, s=2.0, color=TONE_COLOURS[d], alpha=0.45,
                       linewidths=0, label=f"decided tone {d}")
        ax.set_xlim(-lim, lim)
        ax.set_ylim(-lim, lim)
        ax.set_aspect("equal")
        ax.set_title(f"tone {i} outputs ({b.tones_hz[i]:.0f} Hz)", fontsize=9)
        ax.set_xlabel(f"I{i}", fontsize=8)
        ax.set_ylabel(f"Q{i}", fontsize=8)
        _style(ax)
        h, lab = ax.get_legend_handles_labels()
        order = sorted(range(len(lab)), key=lambda k: lab[k])
        ax.legend([h[k] for k in order], [lab[k] for k in order], fontsize=6.5, frameon=False, markerscale=4,
                  loc="upper right")
    return fig


def ebn0_trend(result, burst_index: int = 0):
    """Eb/N0 per block along the burst, with the burst's fitted Eb/N0 and its interval."""
    b = result.bursts[burst_index]
    fig, ax = _figure(6.0, 2.8)
    if b.trend is not None:
        y = np.asarray(b.trend.block_ebn0_db, float)
        ax.plot(np.arange(len(y)), y, marker="o", color=INK, linewidth=1.0, markersize=4, label="per block")
    e = b.stats.ebn0_db
    if np.isfinite(e):
        ax.axhline(e, color=THEORY, linewidth=1.0, label=f"burst: {e:.2f} dB")
        lo, hi = b.stats.ebn0_db_ci95
        if np.isfinite(lo) and np.isfinite(hi):
            ax.axhspan(lo, hi, color=THEORY, alpha=0.12, linewidth=0, label="95% interval")
    if b.trend is not None:
        ax.set_title(f"level test p = {b.trend.p_value:.3g}" + ("  (flagged)" if b.trend.flagged else ""),
                     fontsize=9)
    ax.set_xlabel("block (equal numbers of symbols)", fontsize=8)
    ax.set_ylabel("Eb/N0 (dB)", fontsize=8)
    _style(ax)
    ax.legend(fontsize=7, frameon=False)
    return fig


def loss_bars(result, burst_index: int = 0):
    """The implementation loss split into parts, as horizontal bars (dB).

    The template-mismatch bar stands apart: it is one view of the shaping
    part (the energy the rectangular template fails to collect), not a further
    term of the total.
    """
    b = result.bursts[burst_index]
    lp = b.loss_parts
    names, vals, cols = [], [], []
    if lp is not None:
        for n, v, c in (("tone correlation", lp.correlation_db, TONE_COLOURS[0]),
                        ("tone imbalance", lp.imbalance_db, TONE_COLOURS[1]),
                        ("shaping / ISI", lp.shaping_db, THEORY),
                        ("rest", lp.rest_db, GRID),
                        ("total", lp.total_db, INK),
                        ("template mismatch\n(part of shaping)", lp.template_db, THEORY)):
            names.append(n)
            vals.append(v if np.isfinite(v) else 0.0)
            cols.append(c)
    fig, ax = _figure(6.0, 2.6)
    if names:
        yy = np.arange(len(names))[::-1]
        ax.barh(yy, vals, color=cols, edgecolor=INK, linewidth=0.5)
        ax.set_yticks(yy)
        ax.set_yticklabels(names, fontsize=8)
        ax.axvline(0, color=INK, linewidth=0.8)
        lo, hi = min(0.0, min(vals)), max(0.0, max(vals))
        span = max(hi - lo, 0.1)
        ax.set_xlim(lo - (0.18 * span if lo < 0 else 0.02 * span), hi + 0.18 * span)
        for y, v in zip(yy, vals):
            # beside the bar's end, on the side away from zero; the x range leaves room for it
            ax.text(v, y, f" {v:+.2f} " if v >= 0 else f"{v:+.2f} ", va="center",
                    ha="left" if v >= 0 else "right", fontsize=7)
    else:
        ax.text(0.5, 0.5, "no split: no bit errors counted", ha="center", va="center", fontsize=9,
                transform=ax.transAxes)
        ax.set_yticks([])
    ax.set_xlabel("dB (positive = costs Eb/N0)", fontsize=8)
    _style(ax)
    return fig
