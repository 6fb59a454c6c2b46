"""PDF report: checked with pypdf (an independent PDF reader) against the JSON report.

References: ISO 32000 (PDF files begin with the "%PDF-" header); ISO 216 (A4 is
210 mm x 297 mm, 595.3 pt x 841.9 pt); pypdf for text, page sizes and document
information.
"""

from __future__ import annotations

import json

import pypdf

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
    assert len(reader.pages) >= 4          # summary, sheet(s) of figures, diagnostics, the burst's figures
    for page in reader.pages:              # ISO 216 A4 (matplotlib's 8.27 x 11.69 in is within 0.3 pt)
        assert abs(float(page.mediabox.width) - 595.3) < 0.5 and abs(float(page.mediabox.height) - 841.9) < 0.5
    assert "frequency (kHz) from centre" in reader.pages[1].extract_text()     # the spectrum, on sheet 2
    assert reader.metadata["/Creator"] == "tonepair"
    assert "tonepair report" in reader.metadata["/Title"]
    text = reader.pages[0].extract_text()
    assert "Verdict: PASS" in text
    rep = json.loads((tmp_path / "out" / "cap.json").read_text())
    assert rep["verdict"] == "pass"
    # the Eb/N0 printed in the PDF is the JSON's, to the 0.01 dB shown
    assert f"{rep['summary']['ebn0_db']:.2f} dB" in text
    b = rep["summary"]["ber"]
    assert f"({b['errors']} / {b['bits']:,})" in text


def test_pdf_only_when_asked(tmp_path, make_capture, run_cli):
    cap = make_capture(ebn0_db=10.0, seed=8)
    res = run_cli("analyze", cap, "--tones", "-2500,2500", "--baud", "5000", "--out", tmp_path / "o", "--quiet")
    assert res.exit_code == 0, res.output
    assert sorted(p.suffix for p in (tmp_path / "o").iterdir()) == [".html", ".json"]


def _figure_pdf(sizes_in, labels) -> bytes:
    import io

    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt
    from matplotlib.backends.backend_pdf import PdfPages

    buf = io.BytesIO()
    with PdfPages(buf) as pdf:
        for size, label in zip(sizes_in, labels):
            fig = plt.figure(figsize=size)
            fig.text(0.5, 0.5, label)
            pdf.savefig(fig)
            plt.close(fig)
    return buf.getvalue()


def test_figure_pages_are_stacked_on_a4_sheets_in_order():
    import io

    from analyzer.report.pdf import A4, on_a4_sheets

    # a full A4 page, three 6 x 3 in figures (216 pt high: three fit on one sheet), one 10 in wide
    raw = _figure_pdf([A4, (6, 3), (6, 3), (6, 3), (10, 4)], ["page-one", "fig-a", "fig-b", "fig-c", "fig-wide"])
    reader = pypdf.PdfReader(io.BytesIO(on_a4_sheets(raw)))
    texts = [p.extract_text() for p in reader.pages]
    assert len(texts) == 3
    assert "page-one" in texts[0]
    assert texts[1].index("fig-a") < texts[1].index("fig-b") < texts[1].index("fig-c")
    assert "fig-wide" in texts[2]    # sheet 2 has 80 pt left; 720 x 288 pt scaled to the 523 pt width needs 209
    for page in reader.pages:                   # ISO 216 A4
        assert abs(float(page.mediabox.width) - 595.3) < 0.5 and abs(float(page.mediabox.height) - 841.9) < 0.5
