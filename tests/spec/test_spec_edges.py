"""Spec checks at their edges, worked by hand: a value equal to its limit, a limit at an interval
end, per-burst worst values with their intervals, a spec with only [link], unmeasurable checks.

References: the rules stated with the spec (a maximum passes when the value is at most the
limit, a minimum when at least; a check is marginal when the limit lies in the closed 95%
interval); every expected number below is worked by hand from the inputs given.
"""

from __future__ import annotations

import json

import pytest

from analyzer.spec import BurstReading, Readings, judge, parse_spec


def _burst(tones, tone_ci, rate, imb, imb_ci, rho, rho_ci, rate_ci=(None, None)):
    return BurstReading(tones_hz=tuple(tones), tones_hz_ci95=tuple(tuple(c) for c in tone_ci), symbol_rate_hz=rate,
                        symbol_rate_hz_ci95=tuple(rate_ci), tone_imbalance_db=imb, tone_imbalance_db_ci95=tuple(imb_ci), tone_correlation=rho,
                        tone_correlation_ci95=tuple(rho_ci))


def _report(bursts, ebn0=9.0, ebn0_ci=(8.5, 9.5), nominal=True):
    return Readings(tones_hz=(-2500.0, 2500.0) if nominal else None, symbol_rate_hz=5000.0 if nominal else None,
                    bursts=tuple(bursts), ebn0_db=ebn0, ebn0_db_ci95=tuple(ebn0_ci), ber=None, ber_reason=None,
                    implementation_loss_db=None, implementation_loss_db_ci95=(None, None))


B0 = _burst((-2240.0, 2510.0), ((-2250.0, -2230.0), (2490.0, 2530.0)), 5001.0, -1.4, (-1.9, -0.9), 0.02, (0.01, 0.03),
            (5000.5, 5001.5))
B1 = _burst((-2400.0, 2600.0), ((-2420.0, -2380.0), (2580.0, 2620.0)), 4998.0, 0.9, (0.4, 1.4), 0.05, (0.04, 0.06),
            (4997.5, 4998.6))


def _one(limits, bursts=(B0, B1), **kw):
    checks, verdict = judge(_report(list(bursts), **kw), parse_spec("[limits]\n" + limits))
    assert len(checks) == 1
    return checks[0], verdict


def test_tone_error_equal_to_its_limit_passes_and_is_marginal():
    # worst tone error: |-2240 - (-2500)| = 260 Hz (burst 0, tone 0); its interval -2250..-2230
    # gives an error interval 250..270; the worst of all error intervals: max lower ends
    # (250, 0, 80, 80 -> 250) and max upper ends (270, 30, 120, 120 -> 270)
    c, verdict = _one("tone_error_hz = 260.0\n")
    assert c["measured"] == pytest.approx(260.0) and c["pass"] and c["marginal"]
    assert c["ci95"] == pytest.approx([250.0, 270.0])
    assert verdict == "pass"
    c, _ = _one("tone_error_hz = 271.0\n")
    assert c["pass"] and not c["marginal"]
    c, _ = _one("tone_error_hz = 249.0\n")
    assert not c["pass"] and not c["marginal"]


def test_limit_at_an_interval_end_is_marginal():
    # imbalance: |-1.4| = 1.4 dB worst; |interval| of burst 0 is 0.9..1.9, of burst 1 0.4..1.4:
    # worst interval 0.9..1.9; a limit of exactly 1.9 or 0.9 lies on its ends
    for limit, passed in ((1.9, True), (0.9, False)):
        c, _ = _one(f"max_tone_imbalance_db = {limit}\n")
        assert c["measured"] == pytest.approx(1.4)
        assert c["ci95"] == pytest.approx([0.9, 1.9])
        assert c["pass"] is passed and c["marginal"]


def test_rate_and_correlation_checks_take_the_worst_burst():
    # rate: |4998 - 5000| / 5000 * 1e6 = 400 ppm (burst 1) against |5001 - 5000| / 5000 * 1e6 = 200
    # its interval: burst 0's 5000.5..5001.5 Bd is 100..300 ppm, burst 1's 4997.5..4998.6 Bd is
    # 280..500 ppm; the worst of them max(100, 280)..max(300, 500) = 280..500 ppm
    c, _ = _one("symbol_rate_error_ppm = 400.0\n")
    assert c["measured"] == pytest.approx(400.0) and c["pass"] and c["marginal"]
    assert c["ci95"] == pytest.approx([280.0, 500.0])
    c, _ = _one("symbol_rate_error_ppm = 399.0\n")
    assert not c["pass"] and c["marginal"]
    c, _ = _one("symbol_rate_error_ppm = 501.0\n")
    assert c["pass"] and not c["marginal"]
    # a burst without a rate interval (too short): the worst interval is not known, never marginal
    b1 = _burst((-2400.0, 2600.0), ((-2420.0, -2380.0), (2580.0, 2620.0)), 4998.0, 0.9, (0.4, 1.4), 0.05,
                (0.04, 0.06))
    c, _ = _one("symbol_rate_error_ppm = 400.0\n", bursts=(B0, b1))
    assert c["pass"] and not c["marginal"] and c["ci95"] == [None, None]
    # correlation: worst 0.05 (burst 1), interval max(0.01, 0.04)..max(0.03, 0.06) = 0.04..0.06
    c, _ = _one("max_tone_correlation = 0.045\n")
    assert c["measured"] == pytest.approx(0.05) and not c["pass"] and c["marginal"]
    assert c["ci95"] == pytest.approx([0.04, 0.06])
    c, _ = _one("max_tone_correlation = 0.07\n")
    assert c["pass"] and not c["marginal"]


def test_minimum_equal_to_its_limit_passes():
    c, verdict = _one("min_ebn0_db = 9.0\n")
    assert c["pass"] and c["marginal"] and verdict == "pass"
    c, _ = _one("min_ebn0_db = 9.5\n")                       # the interval's upper end
    assert not c["pass"] and c["marginal"]


def test_checks_that_cannot_be_measured_fail_and_say_why():
    rep = _report([B0], nominal=False)
    checks, verdict = judge(rep, parse_spec("[limits]\ntone_error_hz = 300.0\nsymbol_rate_error_ppm = 100.0\n"
                                            "max_ber = 1e-3\n"))
    notes = {c["name"]: c["note"] for c in checks}
    assert all(c["measured"] is None and not c["pass"] for c in checks) and verdict == "fail"
    assert "no nominal tones" in notes["tone_error_hz"]
    assert "no nominal symbol rate" in notes["symbol_rate_error_ppm"]
    assert "no bit errors counted" in notes["max_ber"]


def test_a_spec_with_only_link_is_not_judged(run_cli, make_capture, tmp_path):
    spec = tmp_path / "link.toml"
    spec.write_text('[link]\ntones_hz = [-2500.0, 2500.0]\nsymbol_rate_hz = 5000.0\nreference = "PN9"\n')
    assert judge(_report([B0]), parse_spec(spec.read_text())) == ([], "not-judged")
    cap = make_capture(symbols_per_burst=800)
    r = run_cli("analyze", cap, "--spec", spec, "--out", tmp_path / "o")
    assert r.exit_code == 0, r.output
    rep = json.loads((tmp_path / "o" / "cap.json").read_text())
    assert rep["verdict"] == "not-judged" and rep["checks"] == []
    # the link's hints were used: nominal tones and the named pattern
    assert rep["options"]["tones_hz"] == [-2500.0, 2500.0] and rep["options"]["reference"] == "PN9"
    assert rep["summary"]["ber"]["reference"] == "PN9"
