"""PDF report: checked with pypdf (an independent PDF reader) against the JSON report.

References: ISO 32000 (PDF files begin with the "%PDF-" header); ISO 216 (A4 is
210 mm x 297 mm, 595.3 pt x 841.9 pt); pypdf for text, page sizes and document
information.
"""

from __future__ import annotations

import json
from pathlib import Path

import pypdf
import pytest

SPEC = """
[link]
tones_hz = [-2500.0, 2500.0]
symbol_rate_hz = 5000.0
reference = "PN9"

[limits]
min_ebn0_db = 6.0
max_ber = 0.05
"""


def test_pdf_holds_verdict_and_same_numbers(tmp_path, make_capture, run_cli):
    cap = make_capture(ebn0_db=10.0, seed=7)
    spec = tmp_path / "s.toml"
    spec.write_text(SPEC)
    pdf = tmp_path / "out" / "r.pdf"
    res = run_cli("analyze", cap, "--spec", spec, "--out", tmp_path / "out", "--pdf", pdf, "--quiet")
    assert res.exit_code == 0, res.output
    raw = pdf.read_bytes()
    assert raw[:5] == b"%PDF-"                       # ISO 32000 file header
    reader = pypdf.PdfReader(pdf)
    assert len(reader.pages) >= 4          # summary, the capture's figures, two pages for the burst
    for page in reader.pages:              # ISO 216 A4 (matplotlib's 8.27 x 11.69 in is within 0.3 pt)
        assert abs(float(page.mediabox.width) - 595.3) < 0.5 and abs(float(page.mediabox.height) - 841.9) < 0.5
    assert "spectrogram and spectrum" in "".join(p.extract_text() for p in reader.pages[:2])   # early on
    assert reader.metadata["/Creator"] == "tonepair"
    assert "tonepair report" in reader.metadata["/Title"]
    text = reader.pages[0].extract_text()
    assert "Verdict: PASS" in text
    assert "Eb/N0" in text and "bit error rate" in text           # readable check names, not the JSON keys
    rep = json.loads((tmp_path / "out" / "cap.json").read_text())
    assert rep["verdict"] == "pass"
    # the Eb/N0 printed in the PDF is the JSON's, to the 0.01 dB shown
    assert f"{rep['summary']['ebn0_db']:.2f} dB" in text
    b = rep["summary"]["ber"]
    assert f"{b['errors']:,} / {b['bits']:,}" in text


def test_pdf_only_when_asked(tmp_path, make_capture, run_cli):
    cap = make_capture(ebn0_db=10.0, seed=8)
    res = run_cli("analyze", cap, "--tones", "-2500,2500", "--baud", "5000", "--out", tmp_path / "o", "--quiet")
    assert res.exit_code == 0, res.output
    assert sorted(p.suffix for p in (tmp_path / "o").iterdir()) == [".html", ".json"]


# ---------------------------------------------------------------------- page layout
# A page is readable when no two pieces of text overlap, no text runs into a
# figure, and nothing but the footer sits in the footer band or off the page.
# The boxes are those matplotlib's own renderer reports for each artist drawn
# (Text.get_window_extent), so the check sees the layout exactly as written.

def _boxes(fig):
    fig.set_dpi(40)                   # boxes scale with the resolution; a coarse one draws faster
    fig.canvas.draw()
    r = fig.canvas.get_renderer()
    texts = [(t.get_text(), t.get_window_extent(r)) for t in fig.texts if t.get_text().strip()]
    images = [ax.get_window_extent(r) for ax in fig.axes]
    return texts, images, fig.bbox


def _overlap(a, b, tol=0.5):
    return (min(a.x1, b.x1) - max(a.x0, b.x0) > tol) and (min(a.y1, b.y1) - max(a.y0, b.y0) > tol)


def _layout_problems(pages):
    # private: the page geometry has no public door (the public render_pdf returns the finished bytes)
    from analyzer.report._pdf import A4, FOOTER, FOOTER_TEXT

    problems = []
    for n, fig in enumerate(pages, 1):
        texts, images, page = _boxes(fig)
        footer_top = (FOOTER - 0.05) * fig.dpi
        tol = 0.5 * fig.dpi / 72.0
        for k, (s, b) in enumerate(texts):
            if b.x0 < -0.5 or b.x1 > page.x1 + 0.5 or b.y0 < -0.5 or b.y1 > page.y1 + 0.5:
                problems.append(f"page {n}: {s[:30]!r} off the page")
            footer = s == FOOTER_TEXT or s.startswith("tonepair ") and " · page " in s
            if not footer and b.y0 < footer_top:
                problems.append(f"page {n}: {s[:30]!r} in the footer band")
            for s2, b2 in texts[k + 1:]:
                if _overlap(b, b2):
                    problems.append(f"page {n}: {s[:30]!r} overlaps {s2[:30]!r}")
            for im in images:
                if _overlap(b, im):
                    problems.append(f"page {n}: {s[:30]!r} overlaps a figure")
        for i, im in enumerate(images):
            if im.y0 < footer_top - 0.5:
                problems.append(f"page {n}: a figure runs into the footer band")
            for im2 in images[i + 1:]:
                if _overlap(im, im2):
                    problems.append(f"page {n}: two figures overlap")
        assert tuple(fig.get_size_inches()) == A4
    return problems


@pytest.fixture(scope="module")
def analysed(tmp_path_factory):
    """One real analysis of a two-burst capture, its report judged against a spec, and its figures."""
    from analyzer import capture
    from analyzer.pipeline import analyze
    from analyzer.report import build_report
    from analyzer.report import _figures as figures   # private: drawn figures have no public door
    from analyzer.spec import judge, parse_spec
    from analyzer.synth import SynthParams, synthesize

    d = tmp_path_factory.mktemp("layout")
    res = synthesize(SynthParams(ebn0_db=9.0, n_bursts=2, symbols_per_burst=600, seed=3))
    cap = capture.write_sigmf(d / "cap", res.samples, 80e3, centre_hz=433.92e6, truth=res.truth)
    result = analyze(cap, tones_hz=(-2500.0, 2500.0), symbol_rate_hz=5000.0, workers=1)
    spec = parse_spec(SPEC + "max_tone_imbalance_db = 0.0001\nmax_implementation_loss_db = 0.5\n"
                      "tone_error_hz = 0.001\nsymbol_rate_error_ppm = 0.01\nmax_tone_correlation = 0.0\n")
    base = build_report(result)
    checks, verdict = judge(result, spec)
    judged = build_report(result, checks, verdict)
    return base, judged, figures.render_all(result, workers=1)


@pytest.mark.parametrize("n_bursts", [0, 1, 2, 20])
@pytest.mark.parametrize("judged", [False, True])
def test_pdf_pages_have_no_overlapping_text(analysed, n_bursts, judged):
    import copy

    # private: the pages before they are written have no public door (render_pdf returns bytes)
    from analyzer.report._pdf import analysis_sheets

    base, with_spec, pics = analysed
    report = copy.deepcopy(with_spec if judged else base)
    # the report of a capture with n bursts: the measured ones repeated (layout only; numbers unchanged)
    report["bursts"] = [dict(report["bursts"][k % 2], index=k) for k in range(n_bursts)]
    shown = {k: v for k, v in pics.items() if not k[-1].isdigit() or int(k[-1]) < min(n_bursts, 2)}
    for k in range(2, min(n_bursts, 4)):
        shown.update({key[:-1] + str(k): pics[key[:-1] + "0"] for key in pics if key.endswith("0")})
    sheet = analysis_sheets(report, shown, "2026-01-01 00:00 UTC")
    try:
        problems = _layout_problems(sheet.pages)
        # page 1 leads with the verdict; with no spec there is no checks heading at all
        first = [t.get_text() for t in sheet.pages[0].texts]
        assert any(t.startswith("Verdict: ") for t in first)
        assert ("Checks against the spec" in first) == judged
        # every burst is listed (the table continues on the next pages when long)
        rows = [t.get_text() for f in sheet.pages for t in f.texts if t.get_text().isdigit()]
        assert len([r for r in rows if int(r) < n_bursts]) >= n_bursts
    finally:
        import matplotlib.pyplot as plt

        for f in sheet.pages:
            plt.close(f)
    assert problems == []


_FORKED_FIGURES = r"""
import sys
from analyzer import capture
from analyzer.pipeline import analyze
from analyzer.report import _figures as figures    # private: the forked drawing has no other door
from analyzer.synth import SynthParams, synthesize

res = synthesize(SynthParams(ebn0_db=9.0, n_bursts=2, symbols_per_burst=400, seed=5))
cap = capture.write_sigmf(sys.argv[1] + "/cap", res.samples, 80e3, truth=res.truth)
result = analyze(cap, tones_hz=(-2500.0, 2500.0), symbol_rate_hz=5000.0, workers=1)
serial = figures.render_all(result, workers=1)
figures._idle_cores = lambda: 2
forked = figures.render_all(result, workers=2)
assert list(forked) == list(serial)
print(sum(forked[k].png == serial[k].png for k in serial), len(serial))
"""


def test_figures_drawn_in_worker_processes_are_the_same_pictures(tmp_path):
    # the same code on the same result: the PNG bytes of every figure agree exactly (identity);
    # run in a fresh interpreter, where no other thread stops the fork
    import os
    import subprocess
    import sys

    import multiprocessing

    if "fork" not in multiprocessing.get_all_start_methods():
        pytest.skip("this platform cannot fork")
    out = subprocess.run([sys.executable, "-c", _FORKED_FIGURES, str(tmp_path)], capture_output=True, text=True,
                         env={**os.environ, "MPLBACKEND": "Agg"}, timeout=300)
    assert out.returncode == 0, out.stderr
    same, total = map(int, out.stdout.split())
    assert total == 11 and same == total


def test_a_long_report_raises_no_open_figures_warning(analysed):
    # matplotlib warns (RuntimeWarning "More than 20 figures have been opened") when a document holds
    # more pages than its figure.max_open_warning; a long bursts table must not reach the terminal with it
    import copy
    import warnings

    import matplotlib.pyplot as plt

    # private: the pages before they are written have no public door (render_pdf returns bytes)
    from analyzer.report._pdf import analysis_sheets

    base, _judged, pics = analysed
    report = copy.deepcopy(base)
    report["bursts"] = [dict(report["bursts"][k % 2], index=k) for k in range(1200)]
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        sheet = analysis_sheets(report, {}, "2026-01-01 00:00 UTC")
    n = len(sheet.pages)
    for f in sheet.pages:
        plt.close(f)
    assert n > 21
    assert not [w for w in caught if "figures have been opened" in str(w.message)]
