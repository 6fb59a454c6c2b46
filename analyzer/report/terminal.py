"""The terminal summary: one table of the pooled result and one row per burst."""

from __future__ import annotations

from rich.console import Console
from rich.table import Table


def _f(v, d=2, unit=""):
    return "–" if v is None else (f"{v:.{d}f} {unit}".strip())


def _g(v):
    """Fixed point for ordinary values, scientific for small ones (a BER), as in the HTML."""
    return "–" if v is None else (_e(v) if v != 0 and abs(v) < 0.01 else _f(v, 3))


def _e(v):
    return "–" if v is None else ("0" if v == 0 else f"{v:.2e}")


def print_summary(report: dict, console: Console | None = None, written: list[str] | None = None) -> None:
    """Print the summary of a JSON-ready report."""
    con = console or Console()
    if not con.is_terminal:
        con = Console(width=max(con.width, 120), force_terminal=False)
    s = report["summary"]
    cap = report["capture"]
    con.print(f"[bold]{cap['path']}[/bold]  {cap['kind']}, {cap['sample_rate_hz']:.0f} Hz, "
              f"{cap['samples']:,} samples, noise floor {_f(cap['noise_floor_dbfs'], 1)} dBFS")
    t = Table(title=None, show_header=True, header_style="bold")
    t.add_column("quantity")
    t.add_column("value", justify="right")
    t.add_column("95% interval", justify="right")
    lo, hi = s["ebn0_db_ci95"]
    t.add_row("Eb/N0", _f(s["ebn0_db"], 2, "dB"), f"{_f(lo)} … {_f(hi)} dB")
    if s["ber"]:
        b = s["ber"]
        t.add_row("BER", f"{_e(b['rate'])}  ({b['errors']}/{b['bits']:,})",
                  f"{_e(b['ci95'][0])} … {_e(b['ci95'][1])}")
        t.add_row("pattern", f"{b['reference']}, ONE = {b['tone_for_one']} tone, {b['slips']} slips", "")
    elif s.get("frames"):
        t.add_row("BER", "not counted (the frames are the reference)", "")
    else:
        t.add_row("BER", "not counted (no reference pattern)", "")
    fr = s.get("frames")
    if fr:
        t.add_row("frames (HDLC)", f"{fr['valid']} of {fr['found']} with a valid FCS, "
                  f"{fr['known_symbols']:,} symbols known", "")
        t.add_row("frame error rate", f"{_g(fr['error_rate'])}  (theory {_g(fr['error_rate_theory'])})",
                  f"{_g(fr['ci95'][0])} … {_g(fr['ci95'][1])}")
        if fr["implementation_loss_db"] is not None or fr["implementation_loss_db_ci95"][1] is not None:
            flo, fhi = fr["implementation_loss_db_ci95"]
            t.add_row("loss from frames", _f(fr["implementation_loss_db"], 2, "dB"), f"{_f(flo)} … {_f(fhi)} dB")
    t.add_row("BER theory", _e(s["ber_theory"]), "")
    llo, lhi = s["implementation_loss_db_ci95"]
    t.add_row("implementation loss", _f(s["implementation_loss_db"], 2, "dB"), f"{_f(llo)} … {_f(lhi)} dB")
    t.add_row("bursts / symbols", f"{s['n_bursts']} / {s['n_symbols']:,}", "")
    t.add_row("verdict", report["verdict"], "")
    con.print(t)
    bt = Table(show_header=True, header_style="bold")
    for col in ("#", "start sample", "symbols", "tones (Hz)", "rate (Bd)", "|rho|", "imbal. dB", "Eb/N0 dB",
                "errors/bits", "loss dB"):
        bt.add_column(col, justify="right")
    for b in report["bursts"][:50]:
        eb = b["ber"]
        bt.add_row(str(b["index"]), _f(b["start_sample"], 1), str(b["n_symbols"]),
                   f"{_f(b['tones_hz'][0], 1)} / {_f(b['tones_hz'][1], 1)}", _f(b["symbol_rate_hz"], 2),
                   _f(b["tone_correlation"], 3), _f(b["tone_imbalance_db"], 2), _f(b["ebn0_db"], 2),
                   f"{eb['errors']}/{eb['bits']}" if eb else "–", _f(b["implementation_loss_db"], 2))
    con.print(bt)
    if len(report["bursts"]) > 50:
        con.print(f"… {len(report['bursts']) - 50} more bursts in the JSON report")
    for c in report.get("checks", []):
        mark = "pass" if c["pass"] else "FAIL"
        marg = " (marginal)" if c.get("marginal") else ""
        con.print(f"  {mark:4}{marg}  {c['name']}: {_g(c['measured'])} (limit {_g(c['limit'])}) {c['unit']}"
                  + (f"  - {c['note']}" if c.get("note") else ""), markup=False)
    for w in report.get("warnings", []):
        con.print(f"[yellow]warning:[/yellow] {w}")
    for path in written or []:
        con.print(f"wrote {path}")
