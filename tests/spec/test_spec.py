"""Spec files and the pass/fail verdict.

References: the TOML 1.0 standard (parsed by Python's tomllib); ITU-T O.150 for the
PN9 pattern; Clopper-Pearson intervals checked against scipy.stats.binomtest.
"""

from __future__ import annotations

import json

import pytest
from scipy import stats

from analyzer.errors import InputError
from analyzer.spec import BerReading, Readings, judge, parse_spec

SPEC = """
[link]
tones_hz = [-2500.0, 2500.0]
symbol_rate_hz = 5000.0
reference = "PN9"

[limits]
tone_error_hz = {tone_error}
symbol_rate_error_ppm = 500.0
max_ber = 0.01
max_implementation_loss_db = 2.0
min_ebn0_db = 8.0
max_tone_imbalance_db = 1.0
max_tone_correlation = 0.1
"""


def _spec_file(tmp_path, tone_error=150.0, text=None):
    p = tmp_path / "link.spec.toml"
    p.write_text(text if text is not None else SPEC.format(tone_error=tone_error))
    return p


def test_capture_meeting_spec_passes(tmp_path, make_capture, run_cli):
    cap = make_capture(ebn0_db=12.0, seed=4)
    spec = _spec_file(tmp_path)
    # no --tones/--baud/--reference: the spec's [link] supplies them
    res = run_cli("analyze", cap, "--spec", spec, "--out", tmp_path / "out", "--quiet")
    assert res.exit_code == 0, res.output
    rep = json.loads((tmp_path / "out" / "cap.json").read_text())
    assert rep["verdict"] == "pass"
    assert rep["options"]["reference"] == "PN9"
    assert len(rep["checks"]) == 7
    # reference: ideal noncoherent orthogonal BFSK, Pb = 1/2 exp(-Eb/2N0) (Proakis, from memory):
    # at 12 dB Pb = 6.4e-5, so a 2000-bit capture sees well under the 1e-2 limit.
    ber = [c for c in rep["checks"] if c["name"] == "max_ber"][0]
    assert ber["measured"] == pytest.approx(6.4e-5, abs=3e-3)
    # Clopper-Pearson bound in the report against scipy.stats.binomtest (tolerance 1e-9)
    b = rep["summary"]["ber"]
    ci = stats.binomtest(b["errors"], b["bits"]).proportion_ci(0.95, method="exact")
    assert b["ci95"][1] == pytest.approx(ci.high, rel=1e-9)


def test_tone_error_fails_spec_and_names_check(tmp_path, make_capture, run_cli):
    # transmitter 400 Hz off (an input); limit 150 Hz -> fail
    cap = make_capture(ebn0_db=12.0, centre_offset_hz=400.0, seed=5)
    spec = _spec_file(tmp_path, tone_error=150.0)
    res = run_cli("analyze", cap, "--spec", spec, "--out", tmp_path / "out", "--quiet")
    assert res.exit_code == 1, res.output
    rep = json.loads((tmp_path / "out" / "cap.json").read_text())
    assert rep["verdict"] == "fail"
    failed = [c for c in rep["checks"] if not c["pass"]]
    assert "tone_error_hz" in [c["name"] for c in failed]
    tone = [c for c in failed if c["name"] == "tone_error_hz"][0]
    # the offset applied by the transmitter is 400 Hz; measured within 60 Hz of it
    assert tone["measured"] == pytest.approx(400.0, abs=60.0)


def test_unknown_key_exit_2_names_key(tmp_path, make_capture, run_cli):
    cap = make_capture()
    spec = _spec_file(tmp_path, text="[limits]\nmax_berr = 1e-3\n")
    res = run_cli("analyze", cap, "--spec", spec, "--out", tmp_path / "out", "--quiet")
    assert res.exit_code == 2
    assert "limits.max_berr" in res.output
    assert not (tmp_path / "out").exists()          # no report files left behind


@pytest.mark.parametrize("text, key", [
    ("[link]\ntones_hz = [2500, -2500]\n", "link.tones_hz"),
    ("[limits]\nmax_ber = 0.7\n", "limits.max_ber"),
    ("[limits]\ntone_error_hz = -1\n", "limits.tone_error_hz"),
    ("[limits]\nmin_ebn0_db = \"ten\"\n", "limits.min_ebn0_db"),
    ("[limit]\nmax_ber = 0.1\n", "limit"),
])
def test_bad_spec_names_key(text, key):
    with pytest.raises(InputError) as exc:
        parse_spec(text, "x.toml")
    assert key in exc.value.problem
    assert exc.value.path == "x.toml"


def _readings(ber_errors, bits, loss=None, loss_ci=(None, None), ber=True):
    lo, hi = stats.binomtest(ber_errors, bits).proportion_ci(0.95, method="exact")
    return Readings(tones_hz=(-2500.0, 2500.0), symbol_rate_hz=5000.0, bursts=(), ebn0_db=9.0,
                    ebn0_db_ci95=(8.5, 9.5),
                    ber=BerReading(errors=ber_errors, bits=bits, rate=ber_errors / bits, ci95=(lo, hi)) if ber else None,
                    ber_reason=None, implementation_loss_db=loss, implementation_loss_db_ci95=tuple(loss_ci))


def test_marginal_when_limit_inside_interval():
    # 5 errors in 1000 bits: Clopper-Pearson 95% interval (scipy.stats.binomtest) is
    # about 0.0016 ... 0.0116, so a 1e-2 limit lies inside it: pass but marginal.
    checks, verdict = judge(_readings(5, 1000), parse_spec("[limits]\nmax_ber = 1e-2\nmin_ebn0_db = 9.2\n"))
    ber, eb = checks
    assert ber["pass"] and ber["marginal"] and "95%" in ber["note"]
    assert ber["measured"] == pytest.approx(0.005, rel=1e-12)
    # Eb/N0 9.0 dB with interval 8.5 ... 9.5 against a 9.2 dB minimum: fails, marginal
    assert not eb["pass"] and eb["marginal"]
    assert verdict == "fail"


def test_unmeasurable_quantity_fails():
    rep = _readings(1, 1000, ber=False)      # no reference pattern -> no BER
    checks, verdict = judge(rep, parse_spec("[limits]\nmax_ber = 1e-2\n"))
    assert checks[0]["pass"] is False and checks[0]["measured"] is None
    assert verdict == "fail"


def test_judged_numbers_are_the_reported_numbers(make_capture):
    # judge reads the result objects; reference: the JSON report of the same result (the record a
    # user reads, schema-checked elsewhere) -- every reading equals the reported number exactly
    from analyzer.pipeline import analyze
    from analyzer.report import build_report
    from analyzer.spec import readings

    cap = make_capture(ebn0_db=8.0, n_bursts=2, symbols_per_burst=800, gap_samples=6000.0, centre_offset_hz=90.0,
                       tone_amplitudes=(1.0, 0.9), seed=12)
    result = analyze(cap, tones_hz=(-2500.0, 2500.0), symbol_rate_hz=5000.0, workers=1)
    rep = build_report(result)
    r = readings(result)
    assert len(r.bursts) == len(rep["bursts"]) == 2
    for b, d in zip(r.bursts, rep["bursts"]):
        assert list(b.tones_hz) == d["tones_hz"] and [list(c) for c in b.tones_hz_ci95] == d["tones_hz_ci95"]
        assert b.symbol_rate_hz == d["symbol_rate_hz"]
        assert b.tone_imbalance_db == d["tone_imbalance_db"]
        assert list(b.tone_imbalance_db_ci95) == d["tone_imbalance_db_ci95"]
        assert b.tone_correlation == d["tone_correlation"]
        assert list(b.tone_correlation_ci95) == d["tone_correlation_ci95"]
    s = rep["summary"]
    assert r.ebn0_db == s["ebn0_db"] and list(r.ebn0_db_ci95) == s["ebn0_db_ci95"]
    assert (r.ber.errors, r.ber.bits, r.ber.rate, list(r.ber.ci95)) == (
        s["ber"]["errors"], s["ber"]["bits"], s["ber"]["rate"], s["ber"]["ci95"])
    assert r.implementation_loss_db == s["implementation_loss_db"]
    assert list(r.implementation_loss_db_ci95) == s["implementation_loss_db_ci95"]
    assert list(r.tones_hz) == rep["options"]["tones_hz"] and r.symbol_rate_hz == rep["options"]["symbol_rate_hz"]
    # and the verdict on the worst tone error the JSON shows: a maximum passes at its limit and fails
    # 0.01 Hz below it (the rule stated with the spec)
    worst = max(abs(t - n) for d in rep["bursts"] for t, n in zip(d["tones_hz"], (-2500.0, 2500.0)))
    assert worst > 30.0                                          # the 90 Hz offset is seen
    for limit, verdict in ((worst - 0.01, "fail"), (worst, "pass")):
        checks, got = judge(result, parse_spec(f"[limits]\ntone_error_hz = {limit!r}\n"))
        assert got == verdict and checks[0]["measured"] == worst
