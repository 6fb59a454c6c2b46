"""Self-contained HTML pages of an analysis, a sweep and a batch (one Jinja2 environment, figures embedded as PNG).

The words, colours and number formats are the house style of
:mod:`analyzer.report._style`, shared with the terminal and the PDF.
"""

from __future__ import annotations

import datetime as _dt
import os
from pathlib import Path

from jinja2 import Environment, PackageLoader, select_autoescape

from . import _style as style


def env() -> Environment:
    """The template environment of every HTML page (analysis, sweep, batch), with the shared filters."""
    e = Environment(loader=PackageLoader("analyzer", "report/templates"),
                    autoescape=select_autoescape(["html", "j2"]), trim_blocks=True, lstrip_blocks=True)
    e.filters["f"] = fmt_num
    e.filters["sci"] = fmt_sci
    e.filters["g"] = fmt_auto
    e.globals.update(style=style, STATES=style.STATES, VERDICT_WORDS=style.VERDICT_WORDS)
    return e



def fmt_num(v, digits: int = 2, unit: str = "") -> str:
    """A number for a table cell; an en dash when not measured."""
    return style.fixed(v, digits, unit)


def fmt_auto(v) -> str:
    """Fixed point for ordinary values, scientific for small ones (a p-value)."""
    if v is None:
        return style.DASH
    return fmt_sci(v) if v != 0 and abs(v) < 0.01 else fmt_num(v, 3)


def fmt_sci(v, digits: int = 2) -> str:
    return style.sci(v, digits)


def generated_at() -> str:
    return _dt.datetime.now(_dt.timezone.utc).strftime("%Y-%m-%d %H:%M UTC")


def render_html(result, report: dict, pics: dict | None = None) -> str:
    """The report page as one HTML string; ``pics`` are the figures already drawn (drawn here if not given)."""
    from ._figures import render_all

    pics = render_all(result) if pics is None else pics
    figs = {k: p.base64() for k, p in pics.items()}
    tmpl = env().get_template("report.html.j2")
    return tmpl.render(r=report, figs=figs, generated=generated_at(),
                       checks=style.ordered_checks(report.get("checks") or []))


def render_sweep_html(sweep: dict, pic) -> str:
    """The sweep page: the fitted loss, its points and the waterfall figure ``pic`` (a drawn Picture)."""
    return env().get_template("sweep.html.j2").render(r=sweep, fig=pic.base64(), generated=generated_at())


def render_batch_html(summary: dict, html_path: Path) -> str:
    """The batch page: pass/fail per capture, links (relative to ``html_path``) to each capture's own reports."""
    here = Path(html_path).resolve().parent
    rows = [{**e, "html_link": _link(e["reports"].get("html"), here),
             "json_link": _link(e["reports"].get("json"), here),
             "pdf_link": _link(e["reports"].get("pdf"), here)}
            for e in summary["captures"]]
    return env().get_template("batch.html.j2").render(s=summary, rows=rows, generated=generated_at())


def _link(path, here: Path) -> str | None:
    return os.path.relpath(Path(path).resolve(), here) if path else None
