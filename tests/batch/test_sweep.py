"""Level sweep: one implementation loss fitted across captures.

Reference curve: ideal noncoherent orthogonal BFSK, Pb = 1/2 exp(-Eb/2N0)
(Proakis, Digital Communications -- from memory).  Handbook value: about 10.9 dB
Eb/N0 for BER 1e-3 (standard textbook curves, e.g. Sklar -- from memory).
"""

from __future__ import annotations

import json
import math

import pytest

from analyzer.batch import SweepPoint, fit_loss


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


def test_weighted_fit_interval_and_bound_against_scipy():
    """Points off the curve by different amounts and with different spreads: the fit must weight
    each by its inverse variance.  Reference: scipy.optimize.minimize_scalar on the weighted sum
    of squares, the weights from scipy.stats.binomtest's exact (Clopper-Pearson) interval mapped
    through the closed-form requirement and the Eb/N0 interval read as normal; the zero-error
    bound from the closed-form Clopper-Pearson upper end 1 - 0.025^(1/n)."""
    from scipy import optimize, stats

    z = stats.norm.isf(0.025)
    spec = [(1.0, 0.1, 400, 4000), (1.5, 0.6, 60, 4000), (2.5, 1.2, 8, 4000)]   # (shift, Eb/N0 half-width, k, n)
    pts, d, w = [], [], []
    for shift, half, k, n in spec:
        e = _ideal_required_db(k / n) + shift
        pts.append(SweepPoint("p", e, (e - half, e + half), k, n))
        lo, hi = stats.binomtest(k, n).proportion_ci(0.95, method="exact")
        s_r = (_ideal_required_db(lo) - _ideal_required_db(hi)) / (2 * z)
        d.append(shift)
        w.append(1.0 / ((half / z) ** 2 + s_r ** 2))
    pts.append(SweepPoint("zero", 14.0, (13.5, 14.5), 0, 5000))
    fit = fit_loss(pts, 1e-3)
    ref = optimize.minimize_scalar(lambda L: sum(wi * (di - L) ** 2 for wi, di in zip(w, d)),
                                   bounds=(0, 4), method="bounded", options={"xatol": 1e-10})
    assert fit.loss_db == pytest.approx(ref.x, abs=1e-6)
    # the weights differ a lot, so the unweighted mean (1.667) and a variance-weighted one are far off
    assert abs(fit.loss_db - sum(d) / 3) > 0.2
    chi2 = sum(wi * (di - ref.x) ** 2 for wi, di in zip(w, d))
    se = max(1.0, math.sqrt(chi2 / 2)) / math.sqrt(sum(w))
    assert fit.chi2 == pytest.approx(chi2, rel=1e-6)
    assert fit.loss_db_ci95 == pytest.approx((ref.x - z * se, ref.x + z * se), abs=1e-6)
    p_hi = 1 - 0.025 ** (1 / 5000)                       # Clopper-Pearson upper end for 0 of n
    assert fit.upper_bounds_db[3] == pytest.approx(14.5 - _ideal_required_db(p_hi), abs=1e-6)
