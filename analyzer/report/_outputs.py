"""Every file a command writes, rendered before any is written (so a failure leaves no partial set).

``analysis_files`` (one capture: JSON, HTML, PDF, annotated SigMF metadata,
decisions, frames), ``sweep_files`` (a level sweep) and ``batch_files`` (a
batch summary) each return ``(path, data)`` items for
:func:`analyzer.report.write_all`.
"""

from __future__ import annotations

import csv
import io
from pathlib import Path

from ._files import check_output
from ._json import build_report, dumps

#: Columns of the batch summary's CSV, one row per capture.
CSV_COLUMNS = ("path", "verdict", "failed_checks", "ebn0_db", "ber", "errors", "bits", "n_bursts", "json", "html",
               "error")


def analysis_files(result, spec, paths: dict[str, Path], workers: int | None = None,
                   progress=None) -> tuple[dict, list[tuple[Path, bytes | str]]]:
    """The JSON-ready report of one analysis (judged against ``spec`` when given) and every (path, data)
    of ``paths`` (keys json, html, pdf, annotated, bits, frames); figures drawn once for HTML and PDF.

    ``progress(done, total, stage)`` is called before each costly part.
    """
    # the files actually read (a SigMF core:dataset may name another data file)
    opened = [Path(result.capture.path), Path(result.capture.data_path)]
    for p in paths.values():
        check_output(p, opened, overwrite=True)
    if spec is not None:
        from ..spec import judge

        checks, verdict = judge(result, spec)
        report = build_report(result, checks, verdict)
    else:
        report = build_report(result)
    stages = [k for k in ("html", "pdf", "annotated") if k in paths]
    step = {"n": 0}

    def stage(name: str) -> None:
        if progress is not None:
            progress(step["n"], len(stages) + 1, name)
        step["n"] += 1

    items: list[tuple[Path, bytes | str]] = []
    if "json" in paths:
        items.append((paths["json"], dumps(report)))
    pics = None
    if "html" in paths or "pdf" in paths:
        from ._figures import render_all

        stage("figures")
        pics = render_all(result, workers)
    if "html" in paths:
        from ._html import render_html

        stage("HTML report")
        items.append((paths["html"], render_html(result, report, pics)))
    if "pdf" in paths:
        from ._pdf import render_pdf

        stage("PDF report")
        items.append((paths["pdf"], render_pdf(result, report, pics)))
    if "annotated" in paths:
        from ._annotate import annotated_metadata

        items.append((paths["annotated"], annotated_metadata(result, report)))
    if "bits" in paths or "frames" in paths:
        from ._bits import decisions_text, valid_frames_text

        if "bits" in paths:
            items.append((paths["bits"], decisions_text(result)))
        if "frames" in paths:
            items.append((paths["frames"], valid_frames_text(result)))
    if progress is not None:
        progress(1, 1, "writing")
    return report, items


def sweep_files(sweep: dict, paths: dict[str, Path]) -> list[tuple[Path, bytes | str]]:
    """Every (path, data) of a level sweep's report (``sweep_report``) for ``paths`` (keys json, html, pdf)."""
    items: list[tuple[Path, bytes | str]] = []
    if "json" in paths:
        items.append((paths["json"], dumps(sweep)))
    pic = None
    if "html" in paths or "pdf" in paths:
        from ._figures import render, waterfall

        pic = render(waterfall(sweep))
    if "html" in paths:
        from ._html import render_sweep_html

        items.append((paths["html"], render_sweep_html(sweep, pic)))
    if "pdf" in paths:
        from ._pdf import render_sweep_pdf

        items.append((paths["pdf"], render_sweep_pdf(sweep, pic)))
    return items


def batch_files(summary: dict, paths: dict[str, Path]) -> list[tuple[Path, bytes | str]]:
    """Every (path, data) of a batch summary for ``paths`` (keys json, csv, html, pdf)."""
    items: list[tuple[Path, bytes | str]] = []
    if "json" in paths:
        items.append((paths["json"], dumps(summary)))
    if "csv" in paths:
        items.append((paths["csv"], batch_csv(summary)))
    if "html" in paths:
        from ._html import render_batch_html

        items.append((paths["html"], render_batch_html(summary, paths["html"])))
    if "pdf" in paths:
        from ._pdf import render_batch_pdf

        items.append((paths["pdf"], render_batch_pdf(summary)))
    return items


def batch_csv(summary: dict) -> str:
    """The batch summary as CSV, one row per capture (columns :data:`CSV_COLUMNS`)."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(CSV_COLUMNS)
    for e in summary["captures"]:
        row = {**e, "json": e["reports"].get("json", ""), "html": e["reports"].get("html", ""),
               "failed_checks": "; ".join(e.get("failed_checks") or [])}
        w.writerow(["" if row[c] is None else row[c] for c in CSV_COLUMNS])
    return buf.getvalue()
