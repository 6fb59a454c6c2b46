"""Level sweep: one implementation loss fitted across captures.

Reference curve: ideal noncoherent orthogonal BFSK, Pb = 1/2 exp(-Eb/2N0)
(Proakis, Digital Communications -- from memory).  Handbook value: about 10.9 dB
Eb/N0 for BER 1e-3 (standard textbook curves, e.g. Sklar -- from memory).
"""

from __future__ import annotations

import json
import math

import pytest

from analyzer.sweep import SweepPoint, fit_loss


def _ideal_required_db(p):
    # closed-form inverse of Pb = 1/2 exp(-x/2): x = -2 ln(2 Pb)  (Proakis, from memory)
    return 10 * math.log10(-2 * math.log(2 * p))


def test_fit_recovers_a_known_shift():
    # points whose Eb/N0 is exactly the closed-form requirement plus 1.5 dB
    pts = []
    for k, n in ((300, 3000), (100, 3000), (20, 3000)):
        e = _ideal_required_db(k / n) + 1.5
        pts.append(SweepPoint("p", e, (e - 0.2, e + 0.2), k, n))
    pts.append(SweepPoint("z", 14.0, (13.8, 14.2), 0, 3000))    # no errors: left out, gives a bound
    fit = fit_loss(pts, 1e-3)
    assert fit.loss_db == pytest.approx(1.5, abs=1e-6)
    assert fit.used == (True, True, True, False)
    assert fit.ebn0_at_target_db == pytest.approx(_ideal_required_db(1e-3) + 1.5, abs=1e-6)
    # handbook: ~10.9 dB for 1e-3 ideal (Sklar, from memory), so ~12.4 dB with 1.5 dB loss
    assert fit.ebn0_at_target_db == pytest.approx(12.4, abs=0.1)
    assert math.isfinite(fit.upper_bounds_db[3])


def test_sweep_of_four_levels_has_no_loss(tmp_path, make_capture, run_cli):
    caps = [make_capture(name=f"lvl{e}", ebn0_db=float(e), symbols_per_burst=3000, seed=e) for e in (4, 6, 8, 10)]
    out = tmp_path / "out"
    res = run_cli("sweep", *caps, "--tones", "-2500,2500", "--baud", "5000", "--reference", "PN9",
                  "--out", out, "--formats", "json,html,pdf", "--quiet")
    assert res.exit_code == 0, res.output
    rep = json.loads((out / "sweep.json").read_text())
    # the file names its schema and holds to it (jsonschema, a general-purpose validator)
    import jsonschema
    from importlib.resources import files

    schema = json.loads(files("analyzer").joinpath("report/sweep.schema.json").read_text())
    assert rep["$schema"] == schema["$id"]
    jsonschema.validate(rep, schema)
    levels = [p["ebn0_db"] for p in rep["points"]]
    assert levels == sorted(levels)                                     # listed by level, lowest first
    # an ideal link: implementation loss within 0.3 dB of zero against 1/2 exp(-Eb/2N0)
    assert rep["implementation_loss_db"] == pytest.approx(0.0, abs=0.3)
    assert rep["target_ber"] == 1e-3
    # Eb/N0 for 1e-3 = closed-form ideal requirement + L (to 1e-9 dB)
    assert rep["ebn0_at_target_db"] == pytest.approx(_ideal_required_db(1e-3) + rep["implementation_loss_db"],
                                                     abs=1e-9)
    assert len(rep["points"]) == 4
    for p in rep["points"]:
        assert {"path", "ebn0_db", "ebn0_db_ci95", "ber", "ber_ci95", "errors", "bits"} <= set(p)
    assert (out / "sweep.pdf").read_bytes()[:5] == b"%PDF-"        # ISO 32000 header
    assert (out / "sweep.html").exists()
