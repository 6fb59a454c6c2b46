"""What the reports say: burst numbers, and the same numbers and verdict in JSON, terminal and HTML.

References: the JSON report is the record (checked against its schema with ``jsonschema`` in
tests/pipeline/test_pipeline_analyze.py); the terminal and HTML views must show its numbers as printed by the
report's own formats, and number the bursts 0, 1, 2 ... in time order (common practice for a
list: consecutive numbers, so that a burst is found by its number in every view).
"""

from __future__ import annotations

import json
import re

import pytest




def test_burst_numbers_are_consecutive_in_every_view(run_cli, make_capture, tmp_path):
    cap = make_capture("three", n_bursts=3, symbols_per_burst=600, ebn0_db=12.0, seed=3)
    out = tmp_path / "rep"
    r = run_cli("analyze", cap, "--out", out, "--annotate")              # blind: no hints
    assert r.exit_code == 0, r.output
    rep = json.loads((out / "three.json").read_text())
    assert [b["index"] for b in rep["bursts"]] == [0, 1, 2]
    rows = re.findall(r"^\s+(\d+)\s+[0-9.,]+\s+600\s", r.output, flags=re.M)
    assert rows == ["0", "1", "2"]
    html = (out / "three.html").read_text()
    assert re.findall(r"<tr><td>(\d+)</td><td>[0-9.,]+</td><td>600</td>", html) == ["0", "1", "2"]
    assert re.findall(r"<h3>Burst (\d+)</h3>", html) == ["0", "1", "2"]
    meta = json.loads((out / "three.annotated.sigmf-meta").read_text())
    assert [a["core:label"] for a in meta["annotations"]] == ["burst 0", "burst 1", "burst 2"]


def _validate(rep):
    import jsonschema

    from analyzer import report
    jsonschema.validate(rep, json.loads(report.SCHEMA_PATH.read_text()))   # reference: jsonschema


@pytest.mark.parametrize("pattern,symbols,reference,reason", [
    # PN23 with the default 184-bit window needs 2 * 184 + 23 = 391 bits to sync (analyzer.prbs)
    ("PN23", 300, "PN23", "PN23: the burst is too short to sync (300 bits; PN23 needs at least 391)"),
    ("PN15", 1500, "PN9", "PN9 not found; the bits follow PN15"),
    ("PN23", 300, "auto", "PN23: the burst is too short to sync (300 bits; PN23 needs at least 391)"),
])
def test_a_pattern_not_counted_says_why(run_cli, make_capture, tmp_path, pattern, symbols, reference, reason):
    cap = make_capture("p", pattern=pattern, symbols_per_burst=symbols, ebn0_db=12.0)
    spec = tmp_path / "s.toml"
    spec.write_text("[limits]\nmax_ber = 1e-3\nmax_implementation_loss_db = 2.0\n")
    out = tmp_path / "rep"
    r = run_cli("analyze", cap, "--tones", "-2500,2500", "--baud", "5000", "--reference", reference,
                "--spec", spec, "--out", out)
    assert r.exit_code == 1, r.output                     # a limit that cannot be checked does not pass
    rep = json.loads((out / "p.json").read_text())
    _validate(rep)
    assert rep["summary"]["ber"] is None
    assert rep["summary"]["ber_reason"] == reason
    assert [b["ber_reason"] for b in rep["bursts"]] == [reason]
    assert f"not counted: {reason}" in r.output
    html = (out / "p.html").read_text()
    assert f"not counted: {reason}" in html
    checks = {c["name"]: c for c in rep["checks"]}
    assert reason in checks["max_ber"]["note"] and not checks["max_ber"]["pass"]
    assert reason in checks["max_implementation_loss_db"]["note"]


@pytest.mark.parametrize("name", ["PN7", "PN9", "PN15", "PN23"])
def test_sync_bits_needed_is_where_the_count_starts_to_sync(name):
    # the count's own acceptance rule (2W bits judged after the order-bit seed), checked on
    # error-free O.150 bits (ITU-T O.150 patterns) one bit either side of the stated length
    from analyzer.errorcount import Reference, count_errors, prbs_sequence, sync_bits_needed
    ref = Reference.prbs(name)
    need = sync_bits_needed(ref)
    seq = prbs_sequence(name, need + 40)
    assert not count_errors(seq[17:17 + need - 1], ref).synced
    assert count_errors(seq[17:17 + need], ref).synced


SPEC_FAIL = """
[link]
tones_hz = [-2500.0, 2500.0]
symbol_rate_hz = 5000.0
reference = "PN9"

[limits]
min_ebn0_db = 6.0
max_ber = 1e-4
symbol_rate_error_ppm = 200.0
"""


def test_html_and_pdf_show_the_json_numbers_and_verdict(run_cli, make_capture, tmp_path):
    import pypdf

    cap = make_capture(ebn0_db=9.0, seed=12, n_bursts=2, symbols_per_burst=1200)
    spec = tmp_path / "s.toml"
    spec.write_text(SPEC_FAIL)
    out = tmp_path / "o"
    r = run_cli("analyze", cap, "--spec", spec, "--out", out, "--pdf", out / "r.pdf")
    # at 9 dB, Pb = 1/2 exp(-3.97) = 9.4e-3 (Proakis & Salehi, from memory): a 1e-4 limit fails
    # unless fewer than about 1 error in 2400 bits, probability binom.cdf(0, 2400, 9.4e-3) ~ 1e-10
    assert r.exit_code == 1, r.output
    rep = json.loads((out / "cap.json").read_text())
    assert rep["verdict"] == "fail"
    s = rep["summary"]
    html = (out / "cap.html").read_text()
    assert '<span class="verdict v-fail">FAIL</span>' in html
    assert (f'<tr><td class="l">Eb/N0</td><td>{s["ebn0_db"]:,.2f} dB</td><td class="l">'
            f'{s["ebn0_db_ci95"][0]:,.2f} … {s["ebn0_db_ci95"][1]:,.2f} dB</td></tr>') in html
    assert f'<td>{s["ber"]["rate"]:.2e}</td>' in html
    assert f'<td>{s["ber"]["errors"]:,} / {s["ber"]["bits"]:,}</td>' in html
    for c in rep["checks"]:            # one row per check, with its result
        row = html[html.index(f'<td class="l" title="{c["name"]}">'):]
        row = row[:row.index("</tr>")]
        assert ("FAIL" if not c["pass"] else "pass") in row
    # the symbol-rate check shows the interval it was judged with, as the JSON states it
    rate = next(c for c in rep["checks"] if c["name"] == "symbol_rate_error_ppm")
    lo, hi = rate["ci95"]
    assert lo <= rate["measured"] <= hi
    assert f"{rate['measured']:.1f} (95% {lo:.1f} … {hi:.1f})" in html
    for b in rep["bursts"]:
        assert f"<h3>Burst {b['index']}</h3>" in html
    # the PDF's pages after the summary: one diagnostics page per burst with its numbers
    reader = pypdf.PdfReader(out / "r.pdf")
    texts = [p.extract_text() for p in reader.pages[1:]]
    for b in rep["bursts"]:
        page = [t for t in texts if f"Burst {b['index']}: receiver model checks" in t]
        assert len(page) == 1
        assert f"counted {b['ber']['rate']:.2e}" in page[0]
        assert f"{b['diagnostics']['blind_ber']:.2e}" in page[0]


def test_bits_file_and_likelihood_decisions_through_the_command_line(run_cli, make_capture, tmp_path):
    from scipy import stats

    from analyzer.errorcount import prbs_sequence

    # the bits file holds one period of PN9 (ITU-T O.150) as text; the capture sends PN9 with
    # unequal tones, where the likelihood rule (optimal for unequal energies) is used
    bits = tmp_path / "pn9.txt"
    bits.write_text("# one period of PN9\n" + "".join(map(str, prbs_sequence("PN9", 511))) + "\n")
    cap = make_capture(ebn0_db=10.0, seed=21, symbols_per_burst=3000, tone_amplitudes=(1.0, 0.8))
    counts = {}
    for decision in ("square-law", "likelihood"):
        out = tmp_path / decision
        r = run_cli("analyze", cap, "--tones", "-2500,2500", "--baud", "5000", "--reference", f"bits:{bits}",
                    "--decision", decision, "--out", out)
        assert r.exit_code == 0, r.output
        rep = json.loads((out / "cap.json").read_text())
        assert rep["options"]["decision"] == decision
        ber = rep["summary"]["ber"]
        assert ber["reference"] == f"bits:{bits}" and ber["tone_for_one"] == "high"
        assert ber["bits"] >= 2900
        counts[decision] = ber
    # the same bits as the O.150 PN9 reference would count (square-law)
    r = run_cli("analyze", cap, "--tones", "-2500,2500", "--baud", "5000", "--reference", "PN9", "--out",
                tmp_path / "pn9")
    pn9 = json.loads((tmp_path / "pn9" / "cap.json").read_text())["summary"]["ber"]
    assert abs(pn9["errors"] - counts["square-law"]["errors"]) <= 2          # a bit or two at the sync edge
    # both counts lie in the 1e-5 binomial band of the BER the fitted statistics predict for each rule
    for decision, ber in counts.items():
        rep = json.loads((tmp_path / decision / "cap.json").read_text())
        gain = rep["bursts"][0]["diagnostics"]["decision_gain"]
        p = gain["ber_likelihood" if decision == "likelihood" else "ber_square_law"]
        assert stats.binom.ppf(5e-6, ber["bits"], p) <= ber["errors"] <= stats.binom.isf(5e-6, ber["bits"], p)
