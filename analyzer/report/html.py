"""Self-contained HTML report (Jinja2 template, figures embedded as PNG)."""

from __future__ import annotations

import datetime as _dt

from jinja2 import Environment, PackageLoader, select_autoescape

from . import figures


def _env() -> Environment:
    env = Environment(loader=PackageLoader("analyzer", "report/templates"),
                      autoescape=select_autoescape(["html", "j2"]), trim_blocks=True, lstrip_blocks=True)
    env.filters["f"] = fmt_num
    env.filters["sci"] = fmt_sci
    env.filters["g"] = fmt_auto
    return env


def fmt_num(v, digits: int = 2, unit: str = "") -> str:
    """A number for a table cell; an en dash when not measured."""
    if v is None:
        return "–"
    s = f"{v:,.{digits}f}"
    return f"{s} {unit}".strip()


def fmt_auto(v) -> str:
    """Fixed point for ordinary values, scientific for small ones (a BER)."""
    if v is None:
        return "–"
    return fmt_sci(v) if v != 0 and abs(v) < 0.01 else fmt_num(v, 3)


def fmt_sci(v, digits: int = 2) -> str:
    if v is None:
        return "–"
    if v == 0:
        return "0"
    return f"{v:.{digits}e}"


def render_html(result, report: dict) -> str:
    """The report page as one HTML string."""
    figs = {
        "spectrum": figures.to_png_base64(figures.spectrum(result)),
        "spectrogram": figures.to_png_base64(figures.spectrogram(result)),
        "envelopes": [figures.to_png_base64(figures.envelope_histograms(result, i))
                      for i in range(min(len(result.bursts), 4))],
        "ber": figures.to_png_base64(figures.ber_curve(result)),
        "diag": [{"scatter": figures.to_png_base64(figures.iq_scatter(result, i)),
                  "trend": figures.to_png_base64(figures.ebn0_trend(result, i)),
                  "loss": figures.to_png_base64(figures.loss_bars(result, i))}
                 for i in range(min(len(result.bursts), 4))],
    }
    tmpl = _env().get_template("report.html.j2")
    return tmpl.render(r=report, figs=figs,
                       generated=_dt.datetime.now(_dt.timezone.utc).strftime("%Y-%m-%d %H:%M UTC"))
