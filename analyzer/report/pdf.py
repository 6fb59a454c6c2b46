"""PDF reports (matplotlib's PdfPages, laid out on A4 with pypdf): a summary page, then the figures.

Every number on the summary page comes from the JSON-ready report dict, so
the PDF, HTML and JSON agree.  Text is embedded with TrueType fonts so it can
be searched and extracted.
"""

from __future__ import annotations

import datetime as _dt
import io

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
from matplotlib.backends.backend_pdf import PdfPages  # noqa: E402

from . import figures  # noqa: E402
from .figures import GRID, INK  # noqa: E402
from .html import fmt_num, fmt_sci  # noqa: E402

A4 = (8.27, 11.69)
VERDICT_COLOURS = {"pass": ("#d9efe0", "#1d5e33"), "fail": ("#f6dcd7", "#8a2a1c"),
                   "not-judged": ("#eef1f4", INK)}


def _meta(title: str) -> dict:
    return {"Title": title, "Creator": "tonepair", "Subject": "two-tone FSK burst measurement",
            "CreationDate": _dt.datetime.now(_dt.timezone.utc)}


def _ci(pair, digits=2, sci=False):
    f = fmt_sci if sci else (lambda v: fmt_num(v, digits))
    return f"{f(pair[0])} … {f(pair[1])}"


def _table(ax, rows, col_labels, widths, fontsize=8):
    ax.axis("off")
    if not rows:
        return
    t = ax.table(cellText=rows, colLabels=col_labels, colWidths=widths, loc="upper left", cellLoc="left")
    t.auto_set_font_size(False)
    t.set_fontsize(fontsize)
    t.scale(1.0, 1.35)
    for (r, _c), cell in t.get_celld().items():
        cell.set_edgecolor(GRID)
        if r == 0:
            cell.set_facecolor("#eef1f4")
            cell.set_text_props(weight="bold")


def _verdict(fig, verdict: str, y: float):
    bg, fg = VERDICT_COLOURS.get(verdict, VERDICT_COLOURS["not-judged"])
    fig.text(0.08, y, f"Verdict: {verdict.upper()}", fontsize=26, weight="bold", color=fg,
             bbox={"facecolor": bg, "edgecolor": fg, "boxstyle": "round,pad=0.4"})


def _check_rows(checks):
    rows = []
    for c in checks:
        res = ("pass" if c["pass"] else "FAIL") + (" (marginal)" if c.get("marginal") else "")
        meas = fmt_sci(c["measured"]) if c["name"] == "max_ber" else fmt_num(c["measured"], 3)
        lim = fmt_sci(c["limit"]) if c["name"] == "max_ber" else fmt_num(c["limit"], 3)
        rows.append([c["name"], meas, lim, c["unit"], res])
    return rows


def summary_page(report: dict, generated: str):
    """Page 1 of an analysis report: title, capture, verdict, checks and summary numbers."""
    fig = plt.figure(figsize=A4)
    cap, s = report["capture"], report["summary"]
    fig.text(0.08, 0.95, "Two-tone burst analysis", fontsize=18, weight="bold", color=INK)
    fig.text(0.08, 0.925, f"{report['tool']['name']} {report['tool']['version']} · {generated}",
             fontsize=8, color="#5a6672")
    fig.text(0.08, 0.9, f"capture: {cap['path']}", fontsize=9, color=INK)
    kind = "complex baseband (I/Q)" if cap["kind"] == "iq" else "real audio"
    fig.text(0.08, 0.882, f"{kind}, {cap.get('datatype', '')}, {fmt_num(cap['sample_rate_hz'], 0, 'Hz')}, "
             f"{cap['samples']:,} samples, centre {fmt_num(cap['centre_hz'], 0, 'Hz')}", fontsize=9, color=INK)
    _verdict(fig, report["verdict"], 0.82)
    if report["verdict"] == "not-judged":
        fig.text(0.08, 0.795, "no spec was given, so nothing was judged", fontsize=9, color="#5a6672")

    fig.text(0.08, 0.765, "Checks against the spec", fontsize=12, weight="bold", color=INK)
    ax = fig.add_axes([0.08, 0.56, 0.84, 0.195])
    _table(ax, _check_rows(report.get("checks", [])), ["check", "measured", "limit", "unit", "result"],
           [0.34, 0.16, 0.16, 0.08, 0.2])
    marg = [c for c in report.get("checks", []) if c.get("marginal") or c.get("measured") is None]
    y = 0.545
    for c in marg[:4]:
        fig.text(0.08, y, f"{c['name']}: {c['note']}", fontsize=7, color="#5a6672", wrap=True)
        y -= 0.016

    fig.text(0.08, 0.46, "Summary (all bursts pooled)", fontsize=12, weight="bold", color=INK)
    b = s.get("ber")
    rows = [["Eb/N0", fmt_num(s["ebn0_db"], 2, "dB"), _ci(s["ebn0_db_ci95"]) + " dB"],
            ["bit error rate", (f"{fmt_sci(b['rate'])} ({b['errors']} / {b['bits']:,})" if b else "not counted"),
             _ci(b["ci95"], sci=True) if b else ""],
            ["pattern", f"{b['reference']}, ONE on the {b['tone_for_one']} tone, {b['slips']} slips" if b else
             "no reference pattern", ""],
            ["BER theory expects", fmt_sci(s["ber_theory"]), ""],
            ["implementation loss", fmt_num(s["implementation_loss_db"], 2, "dB"),
             _ci(s["implementation_loss_db_ci95"]) + " dB"],
            ["bursts / symbols", f"{s.get('n_bursts', len(report['bursts']))} / {s.get('n_symbols', 0):,}", ""]]
    ax = fig.add_axes([0.08, 0.29, 0.84, 0.16])
    _table(ax, rows, ["quantity", "value", "95% interval"], [0.3, 0.35, 0.35])

    fig.text(0.08, 0.25, "Bursts", fontsize=12, weight="bold", color=INK)
    brow = []
    for bd in report["bursts"][:12]:
        eb = bd["ber"]
        brow.append([str(bd["index"]), fmt_num(bd["start_sample"], 1), str(bd["n_symbols"]),
                     f"{fmt_num(bd['tones_hz'][0], 1)} / {fmt_num(bd['tones_hz'][1], 1)}",
                     fmt_num(bd["symbol_rate_hz"], 2), fmt_num(bd["ebn0_db"], 2),
                     f"{eb['errors']}/{eb['bits']}" if eb else "–", fmt_num(bd["implementation_loss_db"], 2)])
    ax = fig.add_axes([0.08, 0.05, 0.84, 0.19])
    _table(ax, brow, ["#", "start", "symbols", "tones (Hz)", "rate (Bd)", "Eb/N0 dB", "errors/bits", "loss dB"],
           [0.05, 0.12, 0.1, 0.23, 0.13, 0.11, 0.14, 0.1], fontsize=7)
    if len(report["bursts"]) > 12:
        fig.text(0.08, 0.035, f"… {len(report['bursts']) - 12} more bursts in the JSON report", fontsize=7)
    fig.text(0.08, 0.015, "tonepair is a measurement aid, not a certification.", fontsize=7, color="#5a6672")
    return fig


FRAME_ROWS = 40          # frames listed on the PDF page
FRAME_HEX_CHARS = 48     # hex characters of a frame shown in the table


def frames_page(report: dict):
    """The HDLC frames found (from the JSON-ready report): counts, theory and a table of frames."""
    fr = report["summary"]["frames"]
    fig = plt.figure(figsize=A4)
    fig.text(0.08, 0.95, "Frames", fontsize=16, weight="bold", color=INK)
    lines = [f"{fr['valid']} of {fr['found']} HDLC frames with a valid frame check sequence; "
             f"{fr['known_symbols']:,} symbols known from them.",
             f"Frame error rate {fmt_sci(fr['error_rate'])} (95%: {_ci(fr['ci95'], sci=True)}); theory at the "
             f"measured Eb/N0 {fmt_sci(fr['error_rate_theory'])}."]
    if fr["implementation_loss_db_ci95"][1] is not None:
        lines.append(f"Implementation loss from the frame error rate {fmt_num(fr['implementation_loss_db'], 2, 'dB')} "
                     f"(95%: {_ci(fr['implementation_loss_db_ci95'])} dB).")
    for i, t in enumerate(lines):
        fig.text(0.08, 0.915 - 0.02 * i, t, fontsize=8.5, color=INK)
    rows = []
    for bd in report["bursts"]:
        for f in (bd.get("frames") or {}).get("frames", []):
            h = f["hex"]
            rows.append([str(bd["index"]), fmt_num(f["start_sample"], 1),
                         "–" if f["length_bytes"] is None else str(f["length_bytes"]),
                         "yes" if f["fcs_valid"] else ("aborted" if f["aborted"] else "no"),
                         h[:FRAME_HEX_CHARS] + ("…" if len(h) > FRAME_HEX_CHARS else "")])
    ax = fig.add_axes([0.05, 0.08, 0.9, 0.76])
    _table(ax, rows[:FRAME_ROWS], ["burst", "start sample", "bytes", "FCS valid", "bytes (hex)"],
           [0.07, 0.15, 0.08, 0.1, 0.6], fontsize=7)
    if len(rows) > FRAME_ROWS:
        fig.text(0.08, 0.05, f"… {len(rows) - FRAME_ROWS} more frames in the JSON report", fontsize=7)
    return fig


def _wrap(text: str, width: int = 70) -> str:
    import textwrap
    return "\n".join(textwrap.wrap(text, width))


def diagnostics_page(bd: dict):
    """Receiver diagnostics of one burst (from its JSON entry): model checks, leakage, pulse, loss split."""
    fig = plt.figure(figsize=A4)
    dg = bd["diagnostics"]
    fig.text(0.08, 0.95, f"Receiver diagnostics, burst {bd['index']}", fontsize=16, weight="bold", color=INK)
    fig.text(0.08, 0.925, "Model checks are flagged below p = 0.01 (Bonferroni-corrected over the family).",
             fontsize=8, color="#5a6672")
    rows = [[c["name"], fmt_num(c["statistic"], 3), fmt_sci(c["p_value"]) if c["p_value"] is not None and
             c["p_value"] < 0.01 else fmt_num(c["p_value"], 3), "FLAGGED" if c["flagged"] else "ok",
             _wrap(c["meaning"], 58)] for c in dg["model_checks"]]
    tr = dg.get("ebn0_trend")
    if tr:
        rows.append(["constant Eb/N0 along the burst", fmt_num(tr["slope_db_per_block"], 3) + " dB/blk",
                     fmt_num(tr["p_value"], 3), "FLAGGED" if tr["flagged"] else "ok", _wrap(tr["meaning"], 58)])
    ax = fig.add_axes([0.05, 0.52, 0.9, 0.39])
    _table(ax, rows, ["check", "statistic", "p-value", "result", "a failure usually means"],
           [0.22, 0.1, 0.09, 0.09, 0.5], fontsize=6.5)
    if ax.tables:
        for (r, _c), cell in ax.tables[0].get_celld().items():
            if r > 0:
                cell.set_height(cell.get_height() * 2.2)
    lk, nc, pu, gd = dg.get("leakage"), dg.get("noise_correlation"), dg.get("pulse"), dg.get("decision_gain")
    rho = fmt_num(bd["tone_correlation"], 3)
    q = [["leakage on the idle branch", fmt_num(lk["ratio_mean"], 3) if lk else "–", f"|rho| = {rho}"],
         ["noise correlation of the branches",
          f"{fmt_num(nc['abs'], 3)} ± {fmt_num(nc['ci95_abs'], 3)} ({nc['n_windows']} windows)" if nc else "–",
          f"|rho| = {rho}"],
         ["template mismatch (measured pulse)", fmt_num(pu["template_loss_db_mean"], 3, "dB") if pu else "–",
          "0 dB (rectangular)"],
         ["nominal-template loss", fmt_num(bd["nominal_template_loss_db"], 3, "dB"), "0 dB"],
         ["likelihood-ratio gain over square-law", fmt_num(gd["likelihood_gain_db"], 2, "dB") if gd else "–",
          f"at {fmt_num(bd['tone_imbalance_db'], 2)} dB imbalance"],
         ["BER from the fitted statistics", fmt_sci(dg["blind_ber"]),
          f"counted {fmt_sci(bd['ber']['rate'])}" if bd["ber"] else "not counted"]]
    fig.text(0.08, 0.47, "Measured against the model", fontsize=12, weight="bold", color=INK)
    ax = fig.add_axes([0.08, 0.3, 0.84, 0.16])
    _table(ax, q, ["quantity", "measured", "model / reference"], [0.4, 0.33, 0.27], fontsize=7.5)
    fig.text(0.08, 0.26, "Implementation loss by cause (dB)", fontsize=12, weight="bold", color=INK)
    lp = dg.get("loss_parts_db")
    if lp:
        lr = [["tone correlation", fmt_num(lp["correlation"], 2)], ["tone imbalance", fmt_num(lp["imbalance"], 2)],
              ["rest (timing, frequency, interference, estimation)", fmt_num(lp["rest"], 2)],
              ["total", fmt_num(bd["implementation_loss_db"], 2)],
              ["template mismatch (not in the total)", fmt_num(lp["template_mismatch"], 2)]]
    else:
        lr = [["no split: no bit errors were counted", ""]]
    ax = fig.add_axes([0.08, 0.08, 0.84, 0.17])
    _table(ax, lr, ["cause", "dB"], [0.7, 0.3], fontsize=7.5)
    return fig


#: Margin and gap between figures on an A4 sheet, points.
SHEET_MARGIN_PT = 36.0
FIGURE_GAP_PT = 14.0


def _pdf_bytes(pages, title: str) -> bytes:
    buf = io.BytesIO()
    with matplotlib.rc_context({"pdf.fonttype": 42}):
        with PdfPages(buf, metadata=_meta(title)) as pdf:
            for fig in pages:
                pdf.savefig(fig, bbox_inches=None if fig.get_size_inches()[1] > 10 else "tight")
                plt.close(fig)
    return on_a4_sheets(buf.getvalue())


def on_a4_sheets(raw: bytes) -> bytes:
    """Every page of the PDF ``raw`` on A4: full pages as they are, figure-sized pages
    stacked from the top of A4 sheets in order, centred, scaled down only to fit the width.

    The figures stay vector graphics (each page's content is placed by a transformation,
    with :mod:`pypdf`), so a report prints on sheets of one size.
    """
    from pypdf import PdfReader, PdfWriter, Transformation

    reader = PdfReader(io.BytesIO(raw))
    writer = PdfWriter()
    width, height = A4[0] * 72.0, A4[1] * 72.0
    usable_w = width - 2 * SHEET_MARGIN_PT
    sheet, y = None, 0.0                      # the sheet being filled and the height left on it

    for page in reader.pages:
        box = page.mediabox
        w, h = float(box.width), float(box.height)
        if w >= 0.95 * width and h >= 0.95 * height:          # a full page: as it is
            writer.add_page(page)
            sheet = None
            continue
        s = min(1.0, usable_w / w, (height - 2 * SHEET_MARGIN_PT) / h)
        if sheet is None or s * h > y - SHEET_MARGIN_PT:
            sheet = writer.add_blank_page(width, height)
            y = height - SHEET_MARGIN_PT
        y -= s * h
        x = 0.5 * (width - s * w)
        sheet.merge_transformed_page(page, Transformation().translate(-float(box.left), -float(box.bottom))
                                     .scale(s, s).translate(x, y))
        y -= FIGURE_GAP_PT
    for page in writer.pages:
        page.compress_content_streams()       # the merged streams come out uncompressed
    writer.compress_identical_objects()       # one copy of what the figures share (fonts)
    if reader.metadata:
        writer.add_metadata(reader.metadata)
    out = io.BytesIO()
    writer.write(out)
    return out.getvalue()


def render_pdf(result, report: dict) -> bytes:
    """The analysis report as PDF bytes: summary page, spectrum, envelope histograms, BER curve,
    then per burst (up to four) the diagnostics page, I/Q planes, Eb/N0 trend and loss split."""
    generated = _dt.datetime.now(_dt.timezone.utc).strftime("%Y-%m-%d %H:%M UTC")
    pages = [summary_page(report, generated), figures.spectrogram(result), figures.spectrum(result)]
    if report["summary"].get("frames"):
        pages.insert(1, frames_page(report))
    pages += [figures.envelope_histograms(result, i) for i in range(min(len(result.bursts), 4))]
    pages.append(figures.ber_curve(result))
    for i in range(min(len(result.bursts), 4)):
        pages += [diagnostics_page(report["bursts"][i]), figures.iq_scatter(result, i),
                  figures.ebn0_trend(result, i), figures.loss_bars(result, i)]
    return _pdf_bytes(pages, f"tonepair report: {report['capture']['path']}")


def render_sweep_pdf(sweep: dict) -> bytes:
    """A level sweep as PDF bytes: result page, then the waterfall figure."""
    generated = _dt.datetime.now(_dt.timezone.utc).strftime("%Y-%m-%d %H:%M UTC")
    fig = plt.figure(figsize=A4)
    fig.text(0.08, 0.95, "Level sweep: bit error rate against Eb/N0", fontsize=16, weight="bold", color=INK)
    fig.text(0.08, 0.925, f"{sweep['tool']['name']} {sweep['tool']['version']} · {generated} · "
             f"{len(sweep['points'])} captures", fontsize=8, color="#5a6672")
    fig.text(0.08, 0.87, f"Implementation loss: {fmt_num(sweep['implementation_loss_db'], 2, 'dB')}", fontsize=18,
             weight="bold", color=INK)
    fig.text(0.08, 0.845, f"95%: {_ci(sweep['implementation_loss_db_ci95'])} dB", fontsize=9, color=INK)
    fig.text(0.08, 0.815, f"Eb/N0 needed for BER {fmt_sci(sweep['target_ber'])}: "
             f"{fmt_num(sweep['ebn0_at_target_db'], 2, 'dB')} (95%: {_ci(sweep['ebn0_at_target_db_ci95'])} dB; "
             f"ideal {fmt_num(sweep['ebn0_ideal_at_target_db'], 2, 'dB')})", fontsize=9, color=INK)
    rows = [[p["path"][-40:], fmt_num(p["ebn0_db"], 2), _ci(p["ebn0_db_ci95"]), f"{p['errors']} / {p['bits']:,}",
             fmt_sci(p["ber"]), _ci(p["ber_ci95"], sci=True), "yes" if p["used"] else "no"]
            for p in sweep["points"][:30]]
    ax = fig.add_axes([0.05, 0.3, 0.9, 0.48])
    _table(ax, rows, ["capture", "Eb/N0 dB", "95% dB", "errors/bits", "BER", "95%", "in fit"],
           [0.3, 0.09, 0.14, 0.13, 0.09, 0.17, 0.07], fontsize=6.5)
    fig.text(0.08, 0.2, sweep["method"], fontsize=7, color="#5a6672", wrap=True)
    return _pdf_bytes([fig, figures.waterfall(sweep)], "tonepair level sweep")
