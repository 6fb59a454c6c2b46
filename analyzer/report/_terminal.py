"""The terminal summary and progress bar, in the house style (:mod:`analyzer.report._style`).

The summary leads with the verdict and the checks that fail or are marginal,
then the pooled result, then the bursts (at most :data:`MAX_BURST_ROWS` rows).
On a terminal, states are coloured with the 16 basic colours and rules are
drawn with a light line; piped, the text is plain ASCII apart from the dash
and ellipsis of the numbers, with no colour codes and no box art.
"""

from __future__ import annotations

import shutil
import sys
import textwrap
import time

from . import _style as style

#: Rows of the bursts table on the terminal (the JSON and HTML list every burst).
MAX_BURST_ROWS = 12


class Out:
    """Where the summary goes and whether it may carry colour and line art."""

    def __init__(self, stream=None, tty: bool | None = None, width: int | None = None):
        self.stream = stream or sys.stdout
        self.tty = bool(getattr(self.stream, "isatty", lambda: False)()) if tty is None else tty
        self.width = width or (shutil.get_terminal_size((100, 24)).columns if self.tty else 100)

    def paint(self, text: str, state: str | None = None, bold: bool = False) -> str:
        if not self.tty or (state is None and not bold):
            return text
        code = style.STATES[state][2] if state else "1"
        if bold and state:
            code += ";1"
        return f"\x1b[{code}m{text}\x1b[0m"

    def line(self, text: str = "") -> None:
        if getattr(self, "closed", False):
            return
        try:
            print(text, file=self.stream)
        except BrokenPipeError:              # the reader went away (| head): stop printing, quietly
            self.closed = True
            import os

            devnull = os.open(os.devnull, os.O_WRONLY)
            os.dup2(devnull, self.stream.fileno())

    def para(self, text: str, indent: str = "  ") -> None:
        """A sentence wrapped at word boundaries to the width, continuation lines indented."""
        for ln in textwrap.wrap(text, max(40, self.width - 1), subsequent_indent=indent + "  ",
                                initial_indent=indent, break_on_hyphens=False):
            self.line(ln)


def table(out: Out, header: list[str], rows: list[list[str]], right: set[int] | None = None,
          states: list[str | None] | None = None) -> None:
    """Columns two spaces apart, a rule under the header; a row may be coloured by its state."""
    right = set(range(1, len(header))) if right is None else right
    widths = [max([len(h)] + [len(r[i]) for r in rows]) for i, h in enumerate(header)]

    def fmt(cells):
        return "  ".join(c.rjust(w) if i in right else c.ljust(w) for i, (c, w) in enumerate(zip(cells, widths)))

    out.line("  " + out.paint(fmt(header).rstrip(), bold=True))
    out.line("  " + ("─" if out.tty else "-") * sum(w + 2 for w in widths[:-1]) + ("─" if out.tty else "-")
             * widths[-1])
    for k, r in enumerate(rows):
        st = states[k] if states else None
        out.line("  " + out.paint(fmt(r).rstrip(), st if st in ("fail", "marginal") else None))


def _heading(out: Out, text: str) -> None:
    out.line()
    out.line(out.paint(text, bold=True))


def print_summary(report: dict, stream=None, written: list[str] | None = None, out: Out | None = None) -> None:
    """Print the summary of a JSON-ready report."""
    o = out or Out(stream)
    s, cap, verdict = report["summary"], report["capture"], report["verdict"]
    word = style.VERDICT_WORDS.get(verdict, verdict.upper())
    state = verdict if verdict in style.STATES else None
    checks = report.get("checks") or []
    note = "" if checks else "  (no spec given: nothing judged)"
    o.line(o.paint(f"verdict: {word}", state, bold=True) + note + f"   {cap['path']}")
    bad = [c for c in style.ordered_checks(checks) if style.check_state(c) != "pass"]
    for c in bad:
        st = style.check_state(c)
        note = style.check_note(c, report, short=True)
        word = style.check_result_word(c).upper() if st == "fail" else "MARGINAL"
        # the check on one line, its note on the next: neither wraps at 100 columns or more
        o.para(f"{o.paint(word, st)}  {style.check_name(c['name'])}: {style.check_measured(c, report['bursts'], True)}"
               f", limit {style.check_limit(c)} {c['unit']}")
        if note:
            o.para(note, indent="      ")
    passed = [style.check_name(c["name"]) for c in checks if style.check_state(c) == "pass"]
    if passed:
        o.para(f"pass  {', '.join(passed)}")

    _heading(o, "Result (all bursts pooled)")
    lo, hi = s["ebn0_db_ci95"]
    rows = [["Eb/N0", style.fixed(s["ebn0_db"], 2, "dB"), f"{style.fixed(lo)} … {style.fixed(hi)} dB"]]
    b = s["ber"]
    if b:
        rows.append(["bit error rate", f"{style.sci(b['rate'])}  ({b['errors']:,} / {b['bits']:,})",
                     f"{style.sci(b['ci95'][0])} … {style.sci(b['ci95'][1])}"])
        rows.append(["pattern", b["reference"], f"ONE on the {b['tone_for_one']} tone, {b['slips']} slips"])
    elif s.get("frames"):
        rows.append(["bit error rate", style.DASH, "not counted (the frames are the reference)"])
    else:
        rows.append(["bit error rate", style.DASH, f"not counted: {s.get('ber_reason') or 'no reference pattern'}"])
    fr = s.get("frames")
    if fr:
        rows.append(["frames (HDLC)", f"{fr['valid']} of {fr['found']} valid",
                     f"FCS checked; {fr['known_symbols']:,} symbols known"])
        rows.append(["frame error rate", style.sci(fr["error_rate"]),
                     f"{style.sci(fr['ci95'][0])} … {style.sci(fr['ci95'][1])}"])
        rows.append(["frame errors, theory", style.sci(fr["error_rate_theory"]), ""])
        if fr["implementation_loss_db"] is not None or fr["implementation_loss_db_ci95"][1] is not None:
            rows.append(["loss from frames", *style.loss_text(fr["implementation_loss_db"],
                                                               fr["implementation_loss_db_ci95"],
                                                               {"errors": fr["found"] - fr["valid"]}, "frame")])
    rows.append(["BER theory expects", style.sci(s["ber_theory"]), ""])
    rows.append(["implementation loss", *style.loss_text(s["implementation_loss_db"],
                                                          s["implementation_loss_db_ci95"], b)])
    rows.append(["bursts / symbols", f"{s['n_bursts']} / {s['n_symbols']:,}", ""])
    table(o, ["quantity", "value", "95% interval"], rows, right={1})
    kind = "complex baseband (I/Q)" if cap["kind"] == "iq" else "real audio"
    o.line(f"  {kind}, {style.fixed(cap['sample_rate_hz'], 0, 'Hz')}, {cap['samples']:,} samples, "
           f"noise floor {style.fixed(cap['noise_floor_dbfs'], 1, 'dBFS')}")

    bursts = report["bursts"]
    _heading(o, f"Bursts ({len(bursts)})")
    brows = []
    for bd in bursts[:MAX_BURST_ROWS]:
        eb = bd["ber"]
        brows.append([str(bd["index"]), style.fixed(bd["start_sample"], 1), f"{bd['n_symbols']:,}",
                      f"{style.fixed(bd['tones_hz'][0], 1)} / {style.fixed(bd['tones_hz'][1], 1)}",
                      style.fixed(bd["symbol_rate_hz"], 2), style.fixed(bd["tone_correlation"], 3),
                      style.fixed(bd["tone_imbalance_db"], 2, sign=True), style.fixed(bd["ebn0_db"], 2),
                      f"{eb['errors']:,} / {eb['bits']:,}" if eb else style.DASH,
                      style.fixed(bd["implementation_loss_db"], 2)])
    if brows:
        table(o, ["#", "start sample", "symbols", "tones (Hz)", "rate (Bd)", "|rho|", "imbal. dB", "Eb/N0 dB",
                  "errors / bits", "loss dB"], brows)
    if len(bursts) > MAX_BURST_ROWS:
        o.line(f"  … and {len(bursts) - MAX_BURST_ROWS} more bursts (every burst is in the JSON and HTML reports)")
    for w in report.get("warnings", []):
        o.para(f"{o.paint('warning:', 'marginal')} {w}", indent="")
    if written:
        o.line()
        for path in written:
            o.line(f"wrote {path}")



def print_sweep_summary(sweep: dict, written: list | None = None, stream=None) -> None:
    """The fitted loss of a level sweep in one line (and the files written)."""
    stream = stream or sys.stdout
    ci = sweep["implementation_loss_db_ci95"]
    print(f"implementation loss {style.fixed(sweep['implementation_loss_db'], 2, 'dB')} "
          f"(95% {style.fixed(ci[0])} … {style.fixed(ci[1])} dB); Eb/N0 for BER {style.sci(sweep['target_ber'])}: "
          f"{style.fixed(sweep['ebn0_at_target_db'], 2, 'dB')}", file=stream)
    for p in written or []:
        print(f"wrote {p}", file=stream)


def print_batch_summary(summary: dict, written: list | None = None, stream=None) -> None:
    """One line per capture of a batch (verdict, path, Eb/N0 or its problem), the counts, the files written."""
    stream = stream or sys.stdout
    entries = summary["captures"]
    width = max([len(e["path"]) for e in entries] + [7])
    for e in entries:
        word = style.VERDICT_WORDS.get(e["verdict"], str(e["verdict"]))
        if e["error"]:
            line = e["error"]
        else:
            line = f"Eb/N0 {style.fixed(e['ebn0_db'], 2, 'dB')}" if e["ebn0_db"] is not None else "no Eb/N0"
            if e["failed_checks"]:
                line += "; failed: " + ", ".join(e["failed_checks"])
        print(f"{word:<12} {e['path']:<{width}}  {line}", file=stream)
    c = summary["counts"]
    print(f"{len(entries)} captures: {c['pass']} pass, {c['fail']} fail, {c['not-judged']} not judged, "
          f"{c['error']} not analysed", file=stream)
    for p in written or []:
        print(f"wrote {p}", file=stream)


class Progress:
    """A one-line progress bar of our own: stage, bar, percentage, time left (a terminal only).

    Redrawn from the callback (no refresh thread: the analysis may fork worker
    processes, which must not copy a thread holding a lock).
    """

    WIDTH = 28

    def __init__(self, stream=None):
        self.stream = stream or sys.stdout
        self.stage, self.done, self.total = "reading", 0, 1
        self._t0 = self._last = time.monotonic()
        self._stage_t0 = self._t0

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.clear()
        return False

    def clear(self) -> None:
        self.stream.write("\r\x1b[2K")
        self.stream.flush()

    def update(self, done: int, total: int, stage: str) -> None:
        if stage != self.stage:
            self._stage_t0 = time.monotonic()
        self.stage, self.done, self.total = stage, int(done), max(int(total), 1)
        now = time.monotonic()
        if now - self._last >= 0.1 or done >= total:
            self._last = now
            self.draw()

    def draw(self) -> None:
        frac = min(max(self.done / self.total, 0.0), 1.0)
        fill = int(round(frac * self.WIDTH))
        bar = "█" * fill + "·" * (self.WIDTH - fill)
        el = time.monotonic() - self._t0
        left = f"{(el / frac - el):4.0f} s left" if 0.02 < frac < 1 and el > 0.5 else ""
        self.stream.write(f"\r\x1b[2K  {self.stage:<20} {bar} {100 * frac:3.0f}%  {left}")
        self.stream.flush()

    def __call__(self, done: int, total: int, stage: str = "reading") -> None:
        self.update(done, total, stage)
