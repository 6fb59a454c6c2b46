"""Figures for the HTML and PDF reports (matplotlib, headless).

Each function takes an :class:`~analyzer.pipeline.AnalysisResult` and returns a
matplotlib Figure; :func:`to_png_base64` embeds one in a page.  Figures
subsample long data so reports stay small whatever the capture size.
"""

from __future__ import annotations

import base64
import io

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402
from scipy import stats  # noqa: E402

from .. import theory  # noqa: E402

# our own palette: slate for data, amber for tone 0, teal for tone 1, brick for theory
INK = "#2b3440"
TONE_COLOURS = ("#c9821a", "#1f8a86")
THEORY = "#9c3b2f"
GRID = "#d8dde3"
MAX_POINTS = 20000


def _style(ax):
    ax.grid(True, color=GRID, linewidth=0.6)
    for side in ("top", "right"):
        ax.spines[side].set_visible(False)
    ax.tick_params(labelsize=8)


def to_png_base64(fig, dpi: int = 110) -> str:
    """PNG of ``fig`` as base64 text (the figure is closed)."""
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=dpi, bbox_inches="tight")
    plt.close(fig)
    return base64.b64encode(buf.getvalue()).decode("ascii")


def spectrum(result):
    """Averaged spectrum of the capture with the measured tones of every burst marked."""
    fig, ax = plt.subplots(figsize=(8.0, 3.0))
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
    b = result.bursts[burst_index]
    r = np.abs(b.outputs.z)
    sent = b.sent
    g = b.stats.signal_gain
    sig = np.sqrt(np.clip(b.stats.noise_var, 1e-300, None))
    rho = abs(b.rho)
    fig, axes = plt.subplots(1, 2, figsize=(8.0, 2.8), sharey=False)
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
    fig.tight_layout()
    return fig


def ber_curve(result):
    """Theory BER against Eb/N0 with each measured point and its two intervals."""
    fig, ax = plt.subplots(figsize=(6.0, 3.8))
    x = np.linspace(0, 16, 200)
    ax.semilogy(x, theory.ber_orthogonal(10 ** (x / 10)), color=THEORY, linewidth=1.4,
                label="orthogonal, equal energy: ½·exp(−Eb/2N0)")
    models = {}
    for b in result.bursts:
        m = b.theory_model
        if m.closed_form != "orthogonal":
            models.setdefault((m.closed_form, round(m.tone_correlation, 2), round(m.imbalance_db, 1)), m)
    for m in list(models.values())[:3]:
        ax.semilogy(x, theory.ber_expected(10 ** (x / 10), m), color=THEORY, linestyle="--", linewidth=1.0,
                    label=f"{m.closed_form} (|ρ|={m.tone_correlation:.2f}, {m.imbalance_db:+.1f} dB)")
    pts = [(b.stats, b.ber) for b in result.bursts if b.ber is not None]
    if result.summary.ber is not None and result.summary.stats is not None and len(result.bursts) > 1:
        pts.append((result.summary.stats, result.summary.ber))
    for k, (st, br) in enumerate(pts):
        if not np.isfinite(st.ebn0_db):
            continue
        y = br.rate if br.errors > 0 else br.ci95[1]
        xerr = np.array([[st.ebn0_db - st.ebn0_db_ci95[0]], [st.ebn0_db_ci95[1] - st.ebn0_db]])
        yerr = np.array([[max(y - br.ci95[0], 0) if br.errors else 0], [max(br.ci95[1] - y, 0)]])
        pooled = k == len(pts) - 1 and len(result.bursts) > 1
        ax.errorbar([st.ebn0_db], [y], xerr=np.nan_to_num(xerr), yerr=yerr, fmt="D" if pooled else "o",
                    color=INK, markersize=5 if pooled else 4, capsize=3, linewidth=1.0,
                    uplims=br.errors == 0,
                    label=("all bursts" if pooled else ("measured" if k == 0 else None)))
    ax.set_xlabel("Eb/N0 (dB)", fontsize=8)
    ax.set_ylabel("bit error rate", fontsize=8)
    ax.set_ylim(1e-7, 0.6)
    ax.set_xlim(0, 16)
    _style(ax)
    ax.legend(fontsize=7, frameon=False, loc="lower left")
    return fig


def waterfall(sweep: dict):
    """BER against Eb/N0 for a sweep: theory, the measured points with both intervals,
    and the theory curve shifted by the fitted implementation loss.

    ``sweep`` is the JSON-ready sweep report (see :func:`analyzer.commands.sweep_report`).
    """
    fig, ax = plt.subplots(figsize=(6.4, 4.2))
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
        ax.plot([et], [t], marker="x", color=TONE_COLOURS[1], markersize=7)
    for k, p in enumerate(pts):
        if p["ebn0_db"] is None or p["bits"] == 0:
            continue
        zero = p["errors"] == 0
        y = p["ber_ci95"][1] if zero else p["ber"]
        lo, hi = p["ebn0_db_ci95"]
        xerr = [[p["ebn0_db"] - (lo if lo is not None else p["ebn0_db"])],
                [(hi if hi is not None else p["ebn0_db"]) - p["ebn0_db"]]]
        yerr = [[0 if zero else max(y - p["ber_ci95"][0], 0)], [0 if zero else max(p["ber_ci95"][1] - y, 0)]]
        ax.errorbar([p["ebn0_db"]], [y], xerr=xerr, yerr=yerr, fmt="v" if zero else "o", color=INK,
                    markersize=4, capsize=3, linewidth=1.0,
                    label=("measured (95% intervals)" if k == 0 else None))
    ax.set_xlabel("Eb/N0 (dB)", fontsize=8)
    ax.set_ylabel("bit error rate", fontsize=8)
    ax.set_ylim(1e-7, 0.6)
    ax.set_xlim(0, x_hi)
    _style(ax)
    ax.legend(fontsize=7, frameon=False, loc="lower left")
    return fig


def spectrogram(result):
    """Spectrogram of the whole capture with each burst boxed and its measured tones marked."""
    from matplotlib.patches import Rectangle

    sg = result.spectrogram
    fig, ax = plt.subplots(figsize=(8.0, 3.4))
    if sg is None or sg.size == 0:
        ax.text(0.5, 0.5, "capture too short for a spectrogram", ha="center", va="center", transform=ax.transAxes)
        return fig
    fs = result.capture.sample_rate_hz
    n = result.capture.n_samples
    cells = sg.shape[1]
    edges = np.linspace(-fs / 2, fs / 2, cells + 1)
    db = 10 * np.log10(np.maximum(sg, 1e-30))
    lo_db = np.percentile(db, 5)
    hi_db = np.percentile(db, 99.9)
    f_lo, f_hi = (0.0, fs / 2) if result.capture.kind == "audio" else (-fs / 2, fs / 2)
    ax.imshow(db.T, origin="lower", aspect="auto", cmap="bone_r", vmin=lo_db, vmax=hi_db,
              extent=(0, n / fs, edges[0] / 1e3, edges[-1] / 1e3), interpolation="nearest")
    for b in result.bursts:
        t0, t1 = b.grid.first_start / fs, b.grid.stop / fs
        pad = 0.5 * b.symbol_rate_hz
        f0, f1 = b.tones_hz[0] - pad, b.tones_hz[1] + pad
        ax.add_patch(Rectangle((t0, f0 / 1e3), t1 - t0, (f1 - f0) / 1e3, fill=False, edgecolor=THEORY,
                               linewidth=1.2))
        for i, ft in enumerate(b.tones_hz):
            ax.plot([t0, t1], [ft / 1e3, ft / 1e3], color=TONE_COLOURS[i], linewidth=1.0)
        ax.text(t0, f1 / 1e3, f" {b.index}", color=THEORY, fontsize=7, va="bottom")
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
    fig, axes = plt.subplots(1, 2, figsize=(8.0, 3.9))
    lim = 1.15 * float(np.percentile(np.abs(z), 99.5)) if len(z) else 1.0
    for i, ax in enumerate(axes):
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
        ax.legend(fontsize=6.5, frameon=False, markerscale=4, loc="upper right")
    fig.tight_layout()
    return fig


def ebn0_trend(result, burst_index: int = 0):
    """Eb/N0 per block along the burst, with the burst's fitted Eb/N0 and its interval."""
    b = result.bursts[burst_index]
    fig, ax = plt.subplots(figsize=(6.0, 2.8))
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
    fig.tight_layout()
    return fig


def loss_bars(result, burst_index: int = 0):
    """The implementation loss split into parts, as horizontal bars (dB).

    The template-mismatch bar stands apart: it is not part of the total (the
    measured Eb/N0 already leaves out what the template fails to collect).
    """
    b = result.bursts[burst_index]
    lp = b.loss_parts
    names, vals, cols = [], [], []
    if lp is not None:
        for n, v, c in (("tone correlation", lp.correlation_db, TONE_COLOURS[0]),
                        ("tone imbalance", lp.imbalance_db, TONE_COLOURS[1]),
                        ("rest", lp.rest_db, GRID),
                        ("total", lp.total_db, INK),
                        ("template mismatch\n(not in total)", lp.template_db, THEORY)):
            names.append(n)
            vals.append(v if np.isfinite(v) else 0.0)
            cols.append(c)
    fig, ax = plt.subplots(figsize=(6.0, 2.6))
    if names:
        yy = np.arange(len(names))[::-1]
        ax.barh(yy, vals, color=cols, edgecolor=INK, linewidth=0.5)
        ax.set_yticks(yy)
        ax.set_yticklabels(names, fontsize=8)
        ax.axvline(0, color=INK, linewidth=0.8)
        for y, v in zip(yy, vals):
            ax.text(v, y, f" {v:+.2f}", va="center", ha="left" if v >= 0 else "right", fontsize=7)
    else:
        ax.text(0.5, 0.5, "no split: no bit errors counted", ha="center", va="center", fontsize=9,
                transform=ax.transAxes)
        ax.set_yticks([])
    ax.set_xlabel("dB (positive = costs Eb/N0)", fontsize=8)
    _style(ax)
    fig.tight_layout()
    return fig
