"""PDF reports laid out on A4 pages directly (matplotlib's PdfPages).

Every page is an A4 matplotlib figure filled from the top by a small layout
cursor (:class:`Sheet`): headings, wrapped notes, tables drawn as text in a
grid, and the report's figures placed as the very pictures the HTML embeds
(:class:`~analyzer.report._figures.Picture`, drawn once).  An element that does
not fit on the page starts the next one, so nothing runs over the footer.
Every number comes from the JSON-ready report dict, so the PDF, HTML and JSON
agree.  Text is embedded with TrueType fonts so it can be searched and
extracted.
"""

from __future__ import annotations

import datetime as _dt
import io
import textwrap

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
from matplotlib.backends.backend_pdf import PdfPages  # noqa: E402
from matplotlib.patches import Rectangle  # noqa: E402

from . import _figures as figures, _style as style  # noqa: E402
from ._style import HEAD, INK, MUTED, RULE  # noqa: E402

A4 = (8.27, 11.69)
MARGIN = 0.6          # inches, left/right/top
FOOTER = 0.55         # inches kept free at the bottom for the footer
FOOTER_TEXT = "tonepair is a measurement aid, not a certification."


def _meta(title: str) -> dict:
    return {"Title": title, "Creator": "tonepair", "Subject": "two-tone FSK burst measurement",
            "CreationDate": _dt.datetime.now(_dt.timezone.utc)}


def _line_h(fontsize: float) -> float:
    return fontsize * 1.32 / 72.0


class Sheet:
    """A4 pages filled from the top; ``y`` is the distance from the top edge, inches."""

    def __init__(self, title: str):
        self.title = title
        self.pages: list = []
        self.fig = None
        self.y = 0.0
        self.new_page()

    # ------------------------------------------------------------------ pages
    def new_page(self, heading: str | None = None) -> None:
        # the pages stay open until the document is written: a long one may have more than 20
        with matplotlib.rc_context({"figure.max_open_warning": 0}):
            self.fig = plt.figure(figsize=A4)
        self.pages.append(self.fig)
        self.y = MARGIN
        n = len(self.pages)
        self.text(FOOTER_TEXT, 7, MUTED, y_top=A4[1] - FOOTER + 0.2, advance=False)
        self.text(f"{self.title} · page {n}", 7, MUTED, y_top=A4[1] - FOOTER + 0.2, x=A4[0] - MARGIN,
                  ha="right", advance=False)
        if heading:
            self.heading(heading, size=14)

    @property
    def room(self) -> float:
        return A4[1] - FOOTER - self.y

    def need(self, h: float, heading: str | None = None) -> None:
        """Start a new page (with ``heading``) unless ``h`` inches are left on this one."""
        if h > self.room:
            self.new_page(heading)

    # ------------------------------------------------------------------ elements
    def text(self, s: str, size: float = 9, colour: str = INK, weight: str = "normal", x: float = MARGIN,
             y_top: float | None = None, ha: str = "left", advance: bool = True, **kw):
        y = self.y if y_top is None else y_top
        t = self.fig.text(x, A4[1] - y, s, fontsize=size, color=colour, weight=weight, ha=ha, va="top",
                          transform=self.fig.dpi_scale_trans, **kw)
        if advance:
            self.y = y + _line_h(size) * (s.count("\n") + 1)
        return t

    def heading(self, s: str, size: float = 12, gap: float = 0.12) -> None:
        self.need(gap + _line_h(size) + 0.4)
        self.y += gap
        self.text(s, size, INK, "bold")
        self.y += 0.04

    def note(self, s: str, size: float = 7.5, colour: str = MUTED, width_in: float | None = None,
             x: float = MARGIN) -> None:
        chars = int((width_in or (A4[0] - 2 * MARGIN)) / (size * 0.5 / 72.0))
        lines = textwrap.wrap(s, chars)
        self.need(_line_h(size) * len(lines))
        self.text("\n".join(lines), size, colour, x=x)

    def table(self, header: list[str], rows: list[list[str]], widths: list[float], size: float = 7.5,
              states: list[str | None] | None = None, right: set[int] | None = None, x: float = MARGIN,
              wrap: dict[int, int] | None = None, continued: str | None = None) -> None:
        """Rows of text in columns ``widths`` (inches); header filled; rows ruled; long cells wrapped.

        A row that does not fit starts a new page, where the header is repeated.
        """
        right = right if right is not None else set(range(1, len(header)))
        wrap = wrap or {}
        lh = _line_h(size)
        cells = [[textwrap.wrap(c, wrap[i]) or [""] if i in wrap else c.split("\n") for i, c in enumerate(r)]
                 for r in rows]

        def draw_row(texts, bold=False, fill=None, colour=INK):
            n = max(len(t) for t in texts)
            h = n * lh + 0.06
            top = self.y
            if fill:
                self.fig.patches.append(Rectangle((x, A4[1] - top - h), sum(widths), h, facecolor=fill,
                                                  edgecolor="none", transform=self.fig.dpi_scale_trans,
                                                  figure=self.fig, zorder=0))
            cx = x
            for i, (t, w) in enumerate(zip(texts, widths)):
                if i in right:
                    self.text("\n".join(t), size, colour, "bold" if bold else "normal", x=cx + w - 0.05,
                              y_top=top + 0.03, ha="right", advance=False)
                else:
                    self.text("\n".join(t), size, colour, "bold" if bold else "normal", x=cx + 0.05,
                              y_top=top + 0.03, advance=False)
                cx += w
            self.y = top + h
            self.fig.add_artist(plt.Line2D([x, x + sum(widths)], [A4[1] - self.y] * 2, color=RULE, linewidth=0.5,
                                           transform=self.fig.dpi_scale_trans))

        head = [[h] for h in header]
        self.need(2 * (lh + 0.06) + 0.05, continued)
        draw_row(head, bold=True, fill=HEAD)
        for k, texts in enumerate(cells):
            h = max(len(t) for t in texts) * lh + 0.06
            if h > self.room:
                self.new_page(continued)
                draw_row(head, bold=True, fill=HEAD)
            st = states[k] if states else None
            colour = style.STATES[st][0] if st in ("fail", "marginal") else INK
            draw_row(texts, bold=st == "fail", colour=colour)
        self.y += 0.08

    def picture(self, pic: figures.Picture, width_in: float, x: float | None = None,
                heading: str | None = None, advance: bool = True) -> float:
        """Place a drawn figure ``width_in`` wide (centred unless ``x``); return its height."""
        w0, h0 = pic.size_in
        h = width_in * h0 / w0
        if advance:
            self.need(h + 0.05, heading)
        x = (A4[0] - width_in) / 2 if x is None else x
        ax = self.fig.add_axes([x / A4[0], (A4[1] - self.y - h) / A4[1], width_in / A4[0], h / A4[1]])
        ax.imshow(pic.pixels(), interpolation="none", aspect="auto")
        ax.set_axis_off()
        if advance:
            self.y += h + 0.08
        return h

    def pdf(self, title: str) -> bytes:
        buf = io.BytesIO()
        with matplotlib.rc_context({"pdf.fonttype": 42}):
            with PdfPages(buf, metadata=_meta(title)) as pdf:
                for fig in self.pages:
                    pdf.savefig(fig)
                    plt.close(fig)
        self.pages = []
        return buf.getvalue()


# ---------------------------------------------------------------------- analysis report
def _check_table(sh: Sheet, checks: list[dict], report: dict) -> None:
    bursts = report["bursts"]
    cs = style.ordered_checks(checks)
    rows = [[style.check_name(c["name"]), style.check_measured(c, bursts), style.check_limit(c), c["unit"],
             style.check_result_word(c)] for c in cs]
    sh.table(["check", "measured", "limit", "unit", "result"], rows, [2.2, 1.6, 1.2, 0.8, 1.2],
             states=[style.check_state(c) for c in cs], right={1, 2})
    for c in cs:
        if c.get("note") and (style.check_state(c) != "pass" or c["measured"] is None):
            sh.note(f"{style.check_name(c['name'])}: {style.check_note(c, report)}")


def _summary_rows(report: dict) -> list[list[str]]:
    s = report["summary"]
    b = s.get("ber")
    ci = s["ebn0_db_ci95"]
    loss, loss_ci = style.loss_text(s["implementation_loss_db"], s["implementation_loss_db_ci95"], b)
    return [["Eb/N0", style.fixed(s["ebn0_db"], 2, "dB"), f"{style.fixed(ci[0])} … {style.fixed(ci[1])} dB"],
            ["bit error rate", style.sci(b["rate"]) if b else "not counted",
             f"{style.sci(b['ci95'][0])} … {style.sci(b['ci95'][1])}" if b else ""],
            ["errors / bits", f"{b['errors']:,} / {b['bits']:,}" if b else style.DASH, ""],
            ["pattern", f"{b['reference']}, ONE on {b['tone_for_one']}" if b else
             ("HDLC frames" if s.get("frames") else "none counted"),
             "" if b or s.get("frames") else textwrap.fill(s.get("ber_reason") or "", 40)],
            ["slips", str(b["slips"]) if b else style.DASH, ""],
            ["BER theory expects", style.sci(s["ber_theory"]), ""],
            ["implementation loss", loss, loss_ci],
            ["bursts / symbols", f"{s.get('n_bursts', len(report['bursts']))} / {s.get('n_symbols', 0):,}", ""]]


def _verdict(sh: Sheet, verdict: str, checks: list[dict]) -> None:
    fg, bg, _ = style.STATES.get(verdict, style.STATES["not-judged"])
    word = style.VERDICT_WORDS.get(verdict, verdict.upper())
    sh.y += 0.12
    sh.text(f"Verdict: {word}", 22, fg, "bold", advance=False,
            bbox={"facecolor": bg, "edgecolor": fg, "boxstyle": "round,pad=0.35"})
    if not checks:
        why = "no spec was given, so nothing was judged"
    else:
        n_fail = sum(style.check_state(c) == "fail" for c in checks)
        n_marg = sum(style.check_state(c) == "marginal" for c in checks)
        why = f"{len(checks)} checks: {n_fail} failed, {n_marg} marginal"
    sh.text(why, 9, MUTED, x=MARGIN + 3.9, y_top=sh.y + 0.12, advance=False)
    sh.y += 0.55


def analysis_sheets(report: dict, pics: dict[str, figures.Picture], generated: str) -> Sheet:
    """The pages of an analysis report (not yet written): see :func:`render_pdf`."""
    cap = report["capture"]
    sh = Sheet("tonepair report")
    sh.text("Two-tone burst analysis", 18, INK, "bold")
    sh.y += 0.04
    sh.text(f"{report['tool']['name']} {report['tool']['version']} · {generated}", 8, MUTED)
    sh.note(f"capture: {cap['path']}", 9, INK)
    kind = "complex baseband (I/Q)" if cap["kind"] == "iq" else "real audio"
    sh.note(f"{kind}, {cap.get('datatype', '')}, {style.fixed(cap['sample_rate_hz'], 0, 'Hz')}, "
            f"{cap['samples']:,} samples, centre {style.fixed(cap['centre_hz'], 0, 'Hz')}", 9, INK)
    checks = report.get("checks") or []
    _verdict(sh, report["verdict"], checks)
    if checks:
        sh.heading("Checks against the spec")
        _check_table(sh, checks, report)

    # the result beside the headline plot: measured BER against theory
    sh.heading("Result (all bursts pooled)")
    top = sh.y
    sh.table(["quantity", "value", "95% interval"], _summary_rows(report), [1.35, 1.3, 1.15], size=7.5, right={1})
    left_end = sh.y
    sh.y = top
    if "ber" in pics:
        x = MARGIN + 3.95
        sh.picture(pics["ber"], A4[0] - MARGIN - x, x=x, advance=False)
        sh.y = max(left_end, top + (A4[0] - MARGIN - x) * pics["ber"].size_in[1] / pics["ber"].size_in[0]) + 0.1
    else:
        sh.y = left_end

    bursts = report["bursts"]
    sh.heading(f"Bursts ({len(bursts)})")
    rows = []
    for bd in bursts:
        eb = bd["ber"]
        rows.append([str(bd["index"]), style.fixed(bd["start_sample"], 1), f"{bd['n_symbols']:,}",
                     f"{style.fixed(bd['tones_hz'][0], 1)} / {style.fixed(bd['tones_hz'][1], 1)}",
                     style.fixed(bd["symbol_rate_hz"], 2), style.fixed(bd["tone_imbalance_db"], 2, sign=True),
                     style.fixed(bd["ebn0_db"], 2), f"{eb['errors']} / {eb['bits']:,}" if eb else style.DASH,
                     style.fixed(bd["implementation_loss_db"], 2)])
    if rows:
        sh.table(["#", "start", "symbols", "tones (Hz)", "rate (Bd)", "imbal. dB", "Eb/N0 dB", "errors / bits",
                  "loss dB"], rows, [0.35, 1.0, 0.6, 1.45, 0.8, 0.7, 0.7, 1.0, 0.5], size=7,
                 continued="Bursts (continued)")
    else:
        sh.note("no bursts were found", 9)

    if report["summary"].get("frames"):
        _frames_section(sh, report)
    if "spectrogram" in pics:
        w0, h0 = pics["spectrogram"].size_in
        sh.need(0.9 + (A4[0] - 2 * MARGIN) * h0 / w0)       # the heading stays with its figure
        sh.heading("Capture: spectrogram and spectrum", 14, gap=0.2)
        sh.note("The whole capture; each burst found is boxed and numbered, with its measured tones drawn across it.")
        sh.picture(pics["spectrogram"], A4[0] - 2 * MARGIN)
        sh.picture(pics["spectrum"], A4[0] - 2 * MARGIN)
    for i, bd in enumerate(bursts[:figures.MAX_BURST_FIGURES]):
        _burst_pages(sh, bd, pics, i)
    return sh


FRAME_HEX_CHARS = 48     # hex characters of a frame shown in the table


def _frames_section(sh: Sheet, report: dict) -> None:
    """The HDLC frames found (from the JSON-ready report): counts, theory and a table of every frame."""
    fr = report["summary"]["frames"]
    sh.new_page("Frames")
    sh.note(f"{fr['valid']} of {fr['found']} HDLC frames with a valid frame check sequence; "
            f"{fr['known_symbols']:,} symbols known from them.", 8.5, INK)
    sh.note(f"Frame error rate {style.sci(fr['error_rate'])} (95%: {style.sci(fr['ci95'][0])} … "
            f"{style.sci(fr['ci95'][1])}); theory at the measured Eb/N0 {style.sci(fr['error_rate_theory'])}.", 8.5, INK)
    if fr["implementation_loss_db_ci95"][1] is not None:
        loss, ci = style.loss_text(fr["implementation_loss_db"], fr["implementation_loss_db_ci95"],
                                   {"errors": fr["found"] - fr["valid"]}, "frame")
        tail = f", an {ci}" if ci.startswith("upper") else f" (95%: {ci})"
        sh.note(f"Implementation loss from the frame error rate {loss}{tail}.", 8.5, INK)
    rows = []
    for bd in report["bursts"]:
        for f in (bd.get("frames") or {}).get("frames", []):
            h = f["hex"]
            rows.append([str(bd["index"]), style.fixed(f["start_sample"], 1),
                         style.DASH if f["length_bytes"] is None else str(f["length_bytes"]),
                         "yes" if f["fcs_valid"] else ("aborted" if f["aborted"] else "no"),
                         h[:FRAME_HEX_CHARS] + ("…" if len(h) > FRAME_HEX_CHARS else "")])
    if rows:
        sh.table(["burst", "start sample", "bytes", "FCS valid", "bytes (hex)"], rows, [0.5, 1.0, 0.5, 0.7, 4.3],
                 size=7, right={1, 2}, continued="Frames (continued)")


def _burst_pages(sh: Sheet, bd: dict, pics: dict, i: int) -> None:
    """Two pages per burst: model checks beside its envelope histograms; outputs, trend and the loss split."""
    k = bd["index"]
    dg = bd["diagnostics"]
    width = A4[0] - 2 * MARGIN
    sh.new_page(f"Burst {k}: receiver model checks")
    sh.note("Model checks are flagged below p = 0.01 (Bonferroni-corrected over the family).")
    rows, states = [], []
    for c in dg["model_checks"]:
        p = c["p_value"]
        rows.append([c["name"], style.fixed(c["statistic"], 3), style.sci(p) if p is not None and p < 0.01
                     else style.fixed(p, 3), "FLAGGED" if c["flagged"] else "ok", c["meaning"]])
        states.append("fail" if c["flagged"] else None)
    tr = dg.get("ebn0_trend")
    if tr:
        rows.append(["constant Eb/N0 along the burst", style.fixed(tr["slope_db_per_block"], 3) + " dB/blk",
                     style.fixed(tr["p_value"], 3), "FLAGGED" if tr["flagged"] else "ok", tr["meaning"]])
        states.append("fail" if tr["flagged"] else None)
    sh.table(["check", "statistic", "p-value", "result", "a failure usually means"], rows,
             [1.75, 0.85, 0.65, 0.65, width - 3.9], size=6.5, states=states, right={1, 2},
             wrap={0: 34, 4: 70}, continued=f"Burst {k} (continued)")
    if f"envelopes{i}" in pics:
        sh.heading("Envelopes of each tone's branch pair", 10)
        sh.picture(pics[f"envelopes{i}"], width)
    lk, nc, pu, gd = dg.get("leakage"), dg.get("noise_correlation"), dg.get("pulse"), dg.get("decision_gain")
    rho = style.fixed(bd["tone_correlation"], 3)
    q = [["leakage on the idle branch", style.fixed(lk["ratio_mean"], 3) if lk else style.DASH, f"|rho| = {rho}"],
         ["noise correlation of the branches",
          f"{style.fixed(nc['abs'], 3)} ± {style.fixed(nc['ci95_abs'], 3)} ({nc['n_windows']} windows)" if nc
          else style.DASH, f"|rho| = {rho}"],
         ["template mismatch (measured pulse)", style.fixed(pu["template_loss_db_mean"], 3, "dB") if pu else style.DASH,
          "0 dB (rectangular)"],
         ["nominal-template loss", style.fixed(bd["nominal_template_loss_db"], 3, "dB"), "0 dB"],
         ["likelihood-ratio gain over square-law", style.fixed(gd["likelihood_gain_db"], 2, "dB") if gd else
          style.DASH, f"at {style.fixed(bd['tone_imbalance_db'], 2, sign=True)} dB imbalance"],
         ["BER from the fitted statistics", style.sci(dg["blind_ber"]),
          f"counted {style.sci(bd['ber']['rate'])}" if bd["ber"] else "not counted"]]
    sh.heading("Measured against the model", 10)
    sh.table(["quantity", "measured", "model / reference"], q, [3.0, 2.2, width - 5.2], right={1},
             continued=f"Burst {k} (continued)")

    sh.new_page(f"Burst {k}: correlator outputs and loss")
    for key, title, w in ((f"scatter{i}", "The four outputs as two I/Q planes", 0.8 * width),
                          (f"trend{i}", "Eb/N0 along the burst", 0.65 * width)):
        if key in pics:
            sh.heading(title, 10)
            sh.picture(pics[key], w)
    sh.heading("Implementation loss by cause (dB)", 10)
    lp = dg.get("loss_parts_db")
    if lp:
        lr = [["tone correlation", style.fixed(lp["correlation"], 2)],
              ["tone imbalance", style.fixed(lp["imbalance"], 2)],
              ["pulse shaping / intersymbol interference", style.fixed(lp.get("shaping"), 2)],
              ["rest (timing, frequency, interference, estimation)", style.fixed(lp["rest"], 2)],
              ["total", style.fixed(bd["implementation_loss_db"], 2)],
              ["template mismatch (part of shaping)", style.fixed(lp["template_mismatch"], 2)]]
        sh.table(["cause", "dB"], lr, [3.4, 0.7])
        if f"loss{i}" in pics:
            sh.picture(pics[f"loss{i}"], 0.6 * width, heading=f"Burst {k} (continued)")
    else:
        sh.note("no split: no bit errors were counted", 8, INK)


def render_pdf(result, report: dict, pics: dict[str, figures.Picture] | None = None) -> bytes:
    """The analysis report as PDF bytes on A4 pages.

    Page 1: verdict, checks, the pooled result beside the BER-against-theory
    figure, and the bursts table (continued on the next pages when long);
    then the spectrogram and spectrum; then per burst (up to four) its model
    checks beside its envelope histograms, and its outputs, Eb/N0 trend and
    loss split.  ``pics`` are the figures already drawn for the HTML report
    (drawn here when not given).
    """
    generated = _dt.datetime.now(_dt.timezone.utc).strftime("%Y-%m-%d %H:%M UTC")
    pics = figures.render_all(result) if pics is None else pics
    sh = analysis_sheets(report, pics, generated)
    return sh.pdf(f"tonepair report: {report['capture']['path']}")


# ---------------------------------------------------------------------- level sweep
def sweep_sheets(sweep: dict, pic: figures.Picture | None, generated: str) -> Sheet:
    sh = Sheet("tonepair level sweep")
    sh.text("Level sweep: measured BER against Eb/N0", 16, INK, "bold")
    sh.y += 0.04
    sh.text(f"{sweep['tool']['name']} {sweep['tool']['version']} · {generated} · {len(sweep['points'])} captures",
            8, MUTED)
    sh.y += 0.15
    sh.text(f"Implementation loss: {style.fixed(sweep['implementation_loss_db'], 2, 'dB')}", 16, INK, "bold")
    ci = sweep["implementation_loss_db_ci95"]
    sh.text(f"95%: {style.fixed(ci[0])} … {style.fixed(ci[1])} dB", 9)
    ct = sweep["ebn0_at_target_db_ci95"]
    sh.note(f"Eb/N0 needed for BER {style.sci(sweep['target_ber'])}: {style.fixed(sweep['ebn0_at_target_db'], 2, 'dB')}"
            f" (95%: {style.fixed(ct[0])} … {style.fixed(ct[1])} dB; ideal "
            f"{style.fixed(sweep['ebn0_ideal_at_target_db'], 2, 'dB')})", 9, INK)
    if pic is not None:
        sh.heading("Measured BER against Eb/N0")
        sh.picture(pic, 0.85 * (A4[0] - 2 * MARGIN))
    sh.heading("Points, by Eb/N0")
    rows = [[p["path"] if len(p["path"]) <= 34 else "…" + p["path"][-33:], style.fixed(p["ebn0_db"], 2),
             f"{style.fixed(p['ebn0_db_ci95'][0])} … {style.fixed(p['ebn0_db_ci95'][1])}",
             f"{p['errors']} / {p['bits']:,}", style.sci(p["ber"]),
             f"{style.sci(p['ber_ci95'][0])} … {style.sci(p['ber_ci95'][1])}", "yes" if p["used"] else "no"]
            for p in sweep["points"]]
    sh.table(["capture", "Eb/N0 dB", "95% dB", "errors / bits", "BER", "95%", "in fit"], rows,
             [2.3, 0.6, 0.95, 1.05, 0.65, 1.15, 0.35], size=6.5, continued="Points (continued)")
    sh.note(sweep["method"])
    return sh


def render_sweep_pdf(sweep: dict, pic: figures.Picture | None = None) -> bytes:
    """A level sweep as PDF bytes: the result, the BER-against-Eb/N0 figure, then the points by level."""
    generated = _dt.datetime.now(_dt.timezone.utc).strftime("%Y-%m-%d %H:%M UTC")
    pic = figures.render(figures.waterfall(sweep)) if pic is None else pic
    return sweep_sheets(sweep, pic, generated).pdf("tonepair level sweep")


# ---------------------------------------------------------------------- batch summary
def render_batch_pdf(summary: dict) -> bytes:
    """A batch summary as PDF bytes: the counts, then one row per capture (verdict, failed checks, numbers)."""
    sh = Sheet("tonepair batch summary")
    sh.text("Batch summary", 16, INK, "bold")
    sh.y += 0.04
    c = summary["counts"]
    n = len(summary["captures"])
    when = _dt.datetime.now(_dt.timezone.utc).strftime("%Y-%m-%d %H:%M UTC")
    sh.text(f"{summary['tool']['name']} {summary['tool']['version']} · {when} · {n} captures: {c['pass']} pass, {c['fail']} fail, {c['not-judged']} not judged, "
            f"{c['error']} not analysed", 8, MUTED)
    sh.y += 0.1
    rows, states = [], []
    for e in summary["captures"]:
        word = style.VERDICT_WORDS.get(e["verdict"], str(e["verdict"]))
        if e["error"]:
            rows.append([e["path"], word, e["error"], "", "", ""])
        else:
            rows.append([e["path"], word, ", ".join(e.get("failed_checks") or []), str(e["n_bursts"]),
                         style.fixed(e["ebn0_db"], 2),
                         f"{e['errors']} / {e['bits']:,}" if e["bits"] is not None else style.DASH])
        states.append("fail" if e["verdict"] in ("fail", "error") else None)
    sh.table(["capture", "verdict", "failed checks / problem", "bursts", "Eb/N0 dB", "errors / bits"], rows,
             [2.2, 0.95, 2.0, 0.5, 0.6, 0.8], size=6.5, states=states, right={3, 4, 5}, wrap={0: 48, 2: 44},
             continued="Batch summary (continued)")
    return sh.pdf("tonepair batch summary")
