"""The JSON report: a stable contract (keys documented in ``report.schema.json``).

Numbers that could not be measured are ``null``, never NaN.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np

from .. import __version__
from .. import estimate
from ..numbers import finite_or_none

SCHEMA_PATH = Path(__file__).with_name("report.schema.json")
SCHEMA_ID = "https://tonepair.invalid/schema/report-1.json"


_num = finite_or_none


def _pair(v):
    return [_num(v[0]), _num(v[1])]


def _noise_corr(nc):
    if nc is None:
        return None
    return {"abs": _num(abs(nc.value)), "phase_deg": _num(np.degrees(np.angle(nc.value))),
            "ci95_abs": _num(nc.ci95_abs), "n_windows": int(nc.n_windows),
            "template_abs": _num(abs(nc.template_correlation)),
            "template_phase_deg": _num(np.degrees(np.angle(nc.template_correlation))),
            "p_value": _num(nc.p_value)}


def _out_corr(c):
    if c is None:
        return None
    return {"outputs": ["I0", "Q0", "I1", "Q1"],
            "tone_0_sent": [[_num(v) for v in row] for row in c[0]],
            "tone_1_sent": [[_num(v) for v in row] for row in c[1]]}


def _ber(b):
    if b is None:
        return None
    return {"reference": b.reference, "bits": int(b.bits), "errors": int(b.errors),
            "rate": _num(b.rate), "ci95": _pair(b.ci95), "slips": int(b.slips),
            "tone_for_one": b.tone_for_one}


def _loss(loss):
    if loss is None:
        return None, [None, None]
    return _num(loss.value), _pair(loss.ci95)


def _frames(fc, th, grid=None):
    """``frames`` of a burst (with the list of frames when its ``grid`` is given) or of the summary."""
    if fc is None:
        return None
    lv, lci = _loss(th.loss if th is not None else None)
    d = {"found": int(fc.found), "valid": int(fc.valid), "error_rate": _num(fc.error_rate),
         "ci95": _pair(fc.ci95), "known_symbols": int(fc.known_symbols),
         "tone_error_rate_theory": _num(th.tone_error_rate) if th is not None else None,
         "error_rate_theory": _num(th.error_rate) if th is not None else None,
         "implementation_loss_db": lv, "implementation_loss_db_ci95": lci}
    if grid is not None:
        d["frames"] = [{"start_sample": _num(grid.first_start + f.start_symbol * grid.samples_per_symbol),
                        "start_symbol": int(f.start_symbol), "on_air_bits": int(f.on_air_bits),
                        "length_bytes": int(f.length_bytes) if f.length_bytes >= 0 else None,
                        "fcs_valid": bool(f.fcs_valid), "aborted": bool(f.aborted), "hex": f.data.hex()}
                       for f in fc.frames]
    return d


def burst_dict(b, sample_rate_hz: float) -> dict:
    """One entry of ``bursts[]``."""
    lv, lci = _loss(b.loss)
    d = {
        "index": int(b.index),
        "start_sample": _num(b.grid.first_start),
        "stop_sample": _num(b.grid.stop),
        "n_symbols": int(b.n_symbols),
        "tones_hz": _pair(b.tones_hz),
        "centre_offset_hz": _num(b.centre_offset_hz),
        "deviation_hz": _num(b.deviation_hz),
        "symbol_rate_hz": _num(b.symbol_rate_hz),
        "symbol_rate_hz_ci95": [None, None] if b.symbol_rate_ci95_hz is None else _pair(b.symbol_rate_ci95_hz),
        "tone_correlation": _num(abs(b.rho)),
        "tone_imbalance_db": _num(b.stats.imbalance_db),
        "nominal_template_loss_db": _num(b.nominal_template_loss_db),
        "signal_gain": [_num(v) for v in b.stats.signal_gain],
        "noise_var": [_num(v) for v in b.stats.noise_var],
        "ebn0_db": _num(b.stats.ebn0_db),
        "ebn0_db_ci95": _pair(b.stats.ebn0_db_ci95),
        "correlator_ebn0_db": _num(b.stats.correlator_ebn0_db),
        "ebn0_tone_db": [_num(v) for v in b.stats.ebn0_tone_db],
        "statistics": "data-aided" if b.stats.data_aided else "decision-directed",
        "ber": _ber(b.ber),
        "ber_reason": getattr(b, "ber_reason", None),
        "ber_theory": _num(b.ber_theory),
        "theory_model": b.theory_model.closed_form,
        "implementation_loss_db": lv,
        "implementation_loss_db_ci95": lci,
        "power_dbfs": _num(b.power_dbfs),
        "phase_continuity": _num(b.phase_continuity),
        "keying": b.keying,
        "timing_quality": _num(b.timing_quality),
        "frames": _frames(getattr(b, "frames", None), getattr(b, "frame_theory", None), b.grid),
    }
    d["diagnostics"] = {
        "model_checks": [{"name": c.name, "statistic": _num(c.statistic), "p_value": _num(c.p_value),
                          "flagged": c.flagged, "meaning": c.meaning} for c in b.checks],
        "ebn0_trend": None if b.trend is None else {
            "block_ebn0_db": [_num(v) for v in b.trend.block_ebn0_db],
            "slope_db_per_block": _num(b.trend.slope_db_per_block), "p_value": _num(b.trend.p_value),
            "flagged": b.trend.flagged, "meaning": b.trend.meaning},
        "blind_ber": None if b.blind_ber is None else _num(b.blind_ber[0]),
        "blind_ber_ci95": [None, None] if b.blind_ber is None else _pair(b.blind_ber[1]),
        "loss_parts_db": None if b.loss_parts is None else {
            "correlation": _num(b.loss_parts.correlation_db), "imbalance": _num(b.loss_parts.imbalance_db),
            "rest": _num(b.loss_parts.rest_db), "template_mismatch": _num(b.loss_parts.template_db),
            "shaping": _num(b.loss_parts.shaping_db)},
        "decision_gain": None if getattr(b, "decision_gain", None) is None else {
            "ber_square_law": _num(b.decision_gain.ber_square_law),
            "ber_likelihood": _num(b.decision_gain.ber_likelihood),
            "likelihood_gain_db": _num(b.decision_gain.gain_db)},
        "pulse": None if getattr(b, "pulse", None) is None else {
            "template_loss_db": [_num(v) for v in b.pulse.template_loss_db],
            "template_loss_db_mean": _num(b.pulse.template_loss_db_mean),
            "n_symbols": [int(v) for v in b.pulse.n_used],
            "noise_per_sample": _num(b.pulse.noise_per_sample)},
        "leakage": None if getattr(b, "leakage", None) is None else {
            "ratio": [_num(v) for v in b.leakage.ratio], "ratio_mean": _num(b.leakage.ratio_mean),
            "tone_correlation": _num(abs(b.rho))},
        "noise_correlation": _noise_corr(getattr(b, "noise_correlation", None)),
        "output_correlation": _out_corr(getattr(b, "output_correlation", None)),
    }
    nominal_centre = 0.0 if b.nominal_tones_hz is None else 0.5 * sum(b.nominal_tones_hz)
    iv = estimate.burst_intervals(b.tones_hz, b.stats.gain_sq, b.stats.noise_var_complex, b.stats.n_symbols,
                                   b.grid.window, sample_rate_hz, nominal_centre)
    d["tones_hz_ci95"] = [_pair(iv.tones_hz[0]), _pair(iv.tones_hz[1])]
    d["centre_offset_hz_ci95"] = _pair(iv.centre_offset_hz)
    d["tone_imbalance_db_ci95"] = _pair(iv.imbalance_db)
    d["tone_correlation_ci95"] = _pair(iv.tone_correlation)
    return d


def build_report(result, checks: list[dict] | None = None, verdict: str = "not-judged") -> dict:
    """The JSON-ready report of an :class:`~analyzer.pipeline.AnalysisResult`."""
    cap = result.capture
    s = result.summary
    lv, lci = _loss(s.loss)
    summary = {
        "n_bursts": len(result.bursts),
        "n_symbols": int(sum(b.n_symbols for b in result.bursts)),
        "ebn0_db": _num(s.stats.ebn0_db) if s.stats else None,
        "ebn0_db_ci95": _pair(s.stats.ebn0_db_ci95) if s.stats else [None, None],
        "ber": _ber(s.ber),
        "ber_reason": getattr(s, "ber_reason", None),
        "ber_theory": _num(s.ber_theory),
        "implementation_loss_db": lv,
        "implementation_loss_db_ci95": lci,
        "frames": _frames(getattr(s, "frames", None), getattr(s, "frame_theory", None)),
    }
    opts = result.options
    return {
        "$schema": SCHEMA_ID,
        "tool": {"name": "tonepair", "version": __version__},
        "capture": {
            "path": str(cap.path),
            "sample_rate_hz": _num(cap.sample_rate_hz),
            "samples": int(cap.n_samples),
            "kind": cap.kind,
            "centre_hz": _num(cap.centre_hz),
            "datatype": cap.datatype,
            "noise_floor_dbfs": _num(result.noise_floor_dbfs),
            "dc_offset_dbfs": _num(getattr(result, "dc_offset_dbfs", None)),
            "dc_offset_iq": _pair((getattr(result, "dc_offset", 0j).real, getattr(result, "dc_offset", 0j).imag)),
            "clipped_fraction": _num(getattr(result, "clipped_fraction", None)),
        },
        "options": {
            "tones_hz": None if opts.tones_hz is None else _pair(opts.tones_hz),
            "symbol_rate_hz": _num(opts.symbol_rate_hz),
            "reference": opts.reference,
            "decision": opts.decision,
        },
        "bursts": [burst_dict(b, cap.sample_rate_hz) for b in result.bursts],
        "summary": summary,
        "checks": list(checks or []),
        "verdict": verdict,
        "warnings": list(result.warnings),
    }


def dumps(report: dict) -> str:
    """Serialise with stable key order and no NaN."""
    return json.dumps(report, indent=2, allow_nan=False) + "\n"
