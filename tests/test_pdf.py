"""PDF report: checked with pypdf (an independent PDF reader) against the JSON report.

References: ISO 32000 (PDF files begin with the "%PDF-" header); pypdf for text
and document information.
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
    assert len(reader.pages) >= 4                    # summary, spectrum, envelopes, BER curve
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
