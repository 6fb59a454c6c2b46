"""Judging an analysis against a spec's limits: checks with their 95% intervals, and a verdict.

:func:`judge` reads the result objects of the analysis (``AnalysisResult``
with its ``Summary`` and ``BurstResult`` s) through :func:`readings`: the
quantities the limits concern, each None when not measured, with the 95%
intervals the reports state (:func:`analyzer.estimate.burst_intervals`), so
the numbers judged are exactly those reported.  Pure: no I/O.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from .. import estimate
from ..numbers import finite_or_none
from ._parse import LIMIT_UNITS, Spec

__all__ = ["BerReading", "BurstReading", "Readings", "readings", "judge"]

Interval = tuple  # (lo, hi); an end is None when not known


@dataclass(frozen=True)
class BurstReading:
    """What the limits read of one burst (None: not measured)."""

    tones_hz: tuple[float | None, float | None]
    tones_hz_ci95: tuple[Interval, Interval]
    symbol_rate_hz: float | None
    symbol_rate_hz_ci95: Interval
    tone_imbalance_db: float | None
    tone_imbalance_db_ci95: Interval
    tone_correlation: float | None
    tone_correlation_ci95: Interval


@dataclass(frozen=True)
class BerReading:
    """The pooled bit error count (``rate`` None when not a number)."""

    errors: int
    bits: int
    rate: float | None
    ci95: Interval


@dataclass(frozen=True)
class Readings:
    """What the limits read of one analysis: nominal tones and rate of its options, its bursts, the pooled summary."""

    tones_hz: tuple[float | None, float | None] | None
    symbol_rate_hz: float | None
    bursts: tuple[BurstReading, ...]
    ebn0_db: float | None
    ebn0_db_ci95: Interval
    ber: BerReading | None
    ber_reason: str | None
    implementation_loss_db: float | None
    implementation_loss_db_ci95: Interval


_num = finite_or_none


def _pair(v) -> Interval:
    return _num(v[0]), _num(v[1])


def _burst_reading(b, sample_rate_hz: float) -> BurstReading:
    nominal_centre = 0.0 if b.nominal_tones_hz is None else 0.5 * sum(b.nominal_tones_hz)
    iv = estimate.burst_intervals(b.tones_hz, b.stats.gain_sq, b.stats.noise_var_complex, b.stats.n_symbols,
                                  b.grid.window, sample_rate_hz, nominal_centre)
    return BurstReading(tones_hz=_pair(b.tones_hz), tones_hz_ci95=(_pair(iv.tones_hz[0]), _pair(iv.tones_hz[1])),
                        symbol_rate_hz=_num(b.symbol_rate_hz),
                        symbol_rate_hz_ci95=(None, None) if b.symbol_rate_ci95_hz is None else _pair(b.symbol_rate_ci95_hz),
                        tone_imbalance_db=_num(b.stats.imbalance_db),
                        tone_imbalance_db_ci95=_pair(iv.imbalance_db), tone_correlation=_num(abs(b.rho)),
                        tone_correlation_ci95=_pair(iv.tone_correlation))


def readings(result) -> Readings:
    """The quantities the limits concern, read from an ``AnalysisResult`` (numbers as its reports state them)."""
    s = result.summary
    opts = result.options
    ber = None if s.ber is None else BerReading(errors=int(s.ber.errors), bits=int(s.ber.bits),
                                                rate=_num(s.ber.rate), ci95=_pair(s.ber.ci95))
    return Readings(tones_hz=None if opts.tones_hz is None else _pair(opts.tones_hz),
                    symbol_rate_hz=_num(opts.symbol_rate_hz),
                    bursts=tuple(_burst_reading(b, result.capture.sample_rate_hz) for b in result.bursts),
                    ebn0_db=_num(s.stats.ebn0_db) if s.stats else None,
                    ebn0_db_ci95=_pair(s.stats.ebn0_db_ci95) if s.stats else (None, None),
                    ber=ber, ber_reason=getattr(s, "ber_reason", None),
                    implementation_loss_db=None if s.loss is None else _num(s.loss.value),
                    implementation_loss_db_ci95=(None, None) if s.loss is None else _pair(s.loss.ci95))


def _check(name, measured, limit, passed, marginal=False, note="", ci95=(None, None)):
    return {"name": name, "measured": measured, "limit": limit, "unit": LIMIT_UNITS[name],
            "pass": bool(passed), "marginal": bool(marginal), "ci95": [ci95[0], ci95[1]], "note": note}


def _abs_interval(ci, centre=0.0):
    """The range of ``|x - centre|`` for ``x`` in ``ci`` (None ends when ``ci`` is not known)."""
    lo, hi = ci if ci else (None, None)
    if lo is None or hi is None or not (math.isfinite(lo) and math.isfinite(hi)):
        return None, None
    a, b = lo - centre, hi - centre
    return (0.0 if a <= 0 <= b else min(abs(a), abs(b))), max(abs(a), abs(b))


def _worst_interval(cis):
    """95% interval of the largest of several quantities, from each one's interval: every quantity
    inside its interval puts the largest between the largest lower end and the largest upper end."""
    if not cis or any(c[0] is None or c[1] is None for c in cis):
        return None, None
    return max(c[0] for c in cis), max(c[1] for c in cis)


def _judged(name, w, L, ci, note, unit):
    marg = _inside(L, ci)
    return _check(name, w, L, w <= L, marg, note + ("; " + _marginal_note(ci, unit) if marg else ""), ci)


def _unmeasured(name, limit, why):
    return _check(name, None, limit, False, False,
                  f"not measured ({why}); a limit that cannot be checked does not pass")


def _inside(limit, ci) -> bool:
    lo, hi = ci
    if lo is None and hi is None:
        return False
    lo = -math.inf if lo is None else lo
    hi = math.inf if hi is None else hi
    return lo <= limit <= hi


def _marginal_note(ci, unit, digits=3):
    lo, hi = ci
    f = (lambda v: "–" if v is None else f"{v:.{digits}g}")
    return (f"marginal: the limit lies inside the 95% interval {f(lo)} … {f(hi)} {unit}".rstrip()
            + "; more data would be needed to decide with confidence")


def _worst(values):
    vals = [v for v in values if v is not None and math.isfinite(v)]
    return max(vals) if vals else None


def judge(result, spec: Spec) -> tuple[list[dict], str]:
    """Judge an analysis against a spec's limits.

    Parameters
    ----------
    result : AnalysisResult or Readings
        The analysis (its :func:`readings` are taken), or readings made
        otherwise.
    spec : Spec
        The parsed spec.  Nominal tones and rate come from ``spec.link``, else
        from the analysis options.

    Returns
    -------
    checks : list of dict
        One per limit given: ``{name, measured, limit, unit, pass, marginal, note, ci95}``.
        ``marginal`` is True when the limit lies inside the measurement's 95%
        interval ``ci95`` (BER: Clopper-Pearson; Eb/N0 and implementation loss:
        their reported intervals; tone error, imbalance and correlation: the
        interval of the worst burst's value from each burst's interval, see
        :func:`analyzer.estimate.burst_intervals`; symbol-rate error: likewise
        from each burst's rate interval, :func:`analyzer.acquire.measured_rate`).
        A quantity that could not be measured fails with a note saying why.
    verdict : str
        ``"pass"`` when every check passes, ``"fail"`` otherwise, and
        ``"not-judged"`` when the spec gives no limits.

    Notes
    -----
    * tone error: worst ``|measured tone - nominal tone|`` over bursts and tones;
    * symbol-rate error: worst ``|R - R_nom| / R_nom * 1e6`` over bursts;
    * BER, Eb/N0, implementation loss: the pooled summary of all bursts;
    * imbalance: worst ``|E_high/E_low|`` in dB; correlation: worst ``|rho|``.
    With no bit errors the implementation loss has no point estimate; it is
    judged by its 95% upper bound (reported as the measured value).
    """
    r = result if isinstance(result, Readings) else readings(result)
    lim = spec.limits
    tones_nom = spec.link.tones_hz or r.tones_hz
    rate_nom = spec.link.symbol_rate_hz or r.symbol_rate_hz
    checks: list[dict] = []
    if lim.tone_error_hz is not None:
        checks.append(_tone_error(r.bursts, tones_nom, lim.tone_error_hz))
    if lim.symbol_rate_error_ppm is not None:
        checks.append(_rate_error(r.bursts, rate_nom, lim.symbol_rate_error_ppm))
    if lim.max_ber is not None:
        checks.append(_max_ber(r, lim.max_ber))
    if lim.max_implementation_loss_db is not None:
        checks.append(_max_loss(r, lim.max_implementation_loss_db))
    if lim.min_ebn0_db is not None:
        checks.append(_min_ebn0(r, lim.min_ebn0_db))
    if lim.max_tone_imbalance_db is not None:
        checks.append(_max_imbalance(r.bursts, lim.max_tone_imbalance_db))
    if lim.max_tone_correlation is not None:
        checks.append(_max_correlation(r.bursts, lim.max_tone_correlation))
    if not checks:
        return [], "not-judged"
    return checks, "pass" if all(c["pass"] for c in checks) else "fail"


def _no_reason(r: Readings) -> str:
    return r.ber_reason or "no reference pattern found"


def _tone_error(bursts, tones_nom, L) -> dict:
    name = "tone_error_hz"
    if tones_nom is None:
        return _unmeasured(name, L, "no nominal tones")
    errs = [abs(b.tones_hz[i] - tones_nom[i]) for b in bursts for i in (0, 1) if b.tones_hz[i] is not None]
    w = _worst(errs)
    if w is None:
        return _unmeasured(name, L, "no burst with measured tones")
    ci = _worst_interval([_abs_interval(b.tones_hz_ci95[i], tones_nom[i])
                          for b in bursts for i in (0, 1) if b.tones_hz[i] is not None])
    return _judged(name, w, L, ci, f"worst of {len(errs)} tones in {len(bursts)} bursts "
                   f"against {tones_nom[0]:g}, {tones_nom[1]:g} Hz", "Hz")


def _rate_error(bursts, rate_nom, L) -> dict:
    name = "symbol_rate_error_ppm"
    if not rate_nom:
        return _unmeasured(name, L, "no nominal symbol rate")
    measured = [b for b in bursts if b.symbol_rate_hz is not None]
    w = _worst([abs(b.symbol_rate_hz - rate_nom) / rate_nom * 1e6 for b in measured])
    if w is None:
        return _unmeasured(name, L, "no burst with a measured symbol rate")
    ci = _worst_interval([_ppm_interval(b.symbol_rate_hz_ci95, rate_nom) for b in measured])
    return _judged(name, w, L, ci, f"worst burst against {rate_nom:g} Bd", "ppm")


def _ppm_interval(ci, rate_nom: float):
    """The range of ``|R - R_nom| / R_nom`` in ppm for ``R`` in ``ci``."""
    lo, hi = ci if ci else (None, None)
    if lo is None or hi is None:
        return None, None
    return _abs_interval((lo / rate_nom * 1e6, hi / rate_nom * 1e6), 1e6)


def _max_ber(r: Readings, L) -> dict:
    name, ber = "max_ber", r.ber
    if not ber or ber.rate is None:
        return _unmeasured(name, L, "no bit errors counted: " + _no_reason(r))
    rate, ci = ber.rate, ber.ci95
    marg = _inside(L, ci)
    note = f"{ber.errors} errors in {ber.bits} bits"
    if marg:
        note += "; " + _marginal_note(ci, "")
    return _check(name, rate, L, rate <= L, marg, note, tuple(ci))


def _max_loss(r: Readings, L) -> dict:
    name = "max_implementation_loss_db"
    v, ci = r.implementation_loss_db, r.implementation_loss_db_ci95 or (None, None)
    if v is not None:
        marg = _inside(L, ci)
        return _check(name, v, L, v <= L, marg, _marginal_note(ci, "dB") if marg else
                      "measured Eb/N0 minus the Eb/N0 ideal noncoherent BFSK needs for the measured BER", tuple(ci))
    if r.ber and r.ber.errors == 0 and ci[1] is not None:
        hi = ci[1]
        return _check(name, hi, L, hi <= L, hi > L,
                      "no bit errors, so only an upper bound of the loss is known (shown as measured)"
                      + ("" if hi <= L else "; the bound exceeds the limit: more bits are needed"))
    why = ("Eb/N0 could not be estimated" if r.ebn0_db is None else "no bit errors counted: " + _no_reason(r))
    return _unmeasured(name, L, f"needs both Eb/N0 and a bit error count; {why}")


def _min_ebn0(r: Readings, L) -> dict:
    name = "min_ebn0_db"
    v, ci = r.ebn0_db, r.ebn0_db_ci95 or (None, None)
    if v is None:
        return _unmeasured(name, L, "Eb/N0 could not be estimated")
    marg = _inside(L, ci)
    return _check(name, v, L, v >= L, marg, _marginal_note(ci, "dB") if marg else "all bursts pooled", tuple(ci))


def _max_imbalance(bursts, L) -> dict:
    name = "max_tone_imbalance_db"
    w = _worst([abs(b.tone_imbalance_db) for b in bursts if b.tone_imbalance_db is not None])
    ci = _worst_interval([_abs_interval(b.tone_imbalance_db_ci95) for b in bursts
                          if b.tone_imbalance_db is not None])
    return (_unmeasured(name, L, "no burst with both tones measured") if w is None else
            _judged(name, w, L, ci, "worst burst, |E_high/E_low| in dB", "dB"))


def _max_correlation(bursts, L) -> dict:
    name = "max_tone_correlation"
    w = _worst([b.tone_correlation for b in bursts if b.tone_correlation is not None])
    ci = _worst_interval([tuple(b.tone_correlation_ci95 or (None, None)) for b in bursts
                          if b.tone_correlation is not None])
    return (_unmeasured(name, L, "no burst measured") if w is None else
            _judged(name, w, L, ci, "worst burst, |rho| of the measured tones over one symbol", ""))
