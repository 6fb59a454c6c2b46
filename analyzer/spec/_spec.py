"""Spec files (TOML) and judging a report against them.

A spec names the link (``[link]``: nominal tones, symbol rate, test pattern) and
the limits it must meet (``[limits]``, each optional)::

    [link]
    tones_hz = [-2500.0, 2500.0]
    symbol_rate_hz = 5000.0
    reference = "PN9"

    [limits]
    tone_error_hz = 150.0
    symbol_rate_error_ppm = 200.0
    max_ber = 1e-2
    max_implementation_loss_db = 1.5
    min_ebn0_db = 8.0
    max_tone_imbalance_db = 1.0
    max_tone_correlation = 0.1

Unknown tables or keys are errors that name the key: a typo must never let a
radio pass silently.  :func:`parse_spec` and :func:`judge` are pure;
:func:`load_spec` only reads the file and hands its text to :func:`parse_spec`.
"""

from __future__ import annotations

import math
import tomllib
from dataclasses import dataclass, fields
from pathlib import Path

from ..errors import InputError

__all__ = ["Link", "Limits", "Spec", "parse_spec", "load_spec", "judge", "LIMIT_UNITS"]

_HINT = "see \"Spec files\" in README.md for the format"

#: Unit of each limit (also the ``unit`` of its check).
LIMIT_UNITS = {
    "tone_error_hz": "Hz",
    "symbol_rate_error_ppm": "ppm",
    "max_ber": "per bit",
    "max_implementation_loss_db": "dB",
    "min_ebn0_db": "dB",
    "max_tone_imbalance_db": "dB",
    "max_tone_correlation": "|rho|",
}


@dataclass(frozen=True)
class Link:
    """The ``[link]`` table: what the capture should contain (each may be None)."""

    tones_hz: tuple[float, float] | None = None
    symbol_rate_hz: float | None = None
    reference: str | None = None


@dataclass(frozen=True)
class Limits:
    """The ``[limits]`` table; None = not checked."""

    tone_error_hz: float | None = None
    symbol_rate_error_ppm: float | None = None
    max_ber: float | None = None
    max_implementation_loss_db: float | None = None
    min_ebn0_db: float | None = None
    max_tone_imbalance_db: float | None = None
    max_tone_correlation: float | None = None


@dataclass(frozen=True)
class Spec:
    """A parsed spec file."""

    link: Link
    limits: Limits
    path: str | None = None


# --------------------------------------------------------------------------- parsing
def _number(value, key: str, path) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise InputError(f"{key} must be a number, got {type(value).__name__} {value!r}", path, _HINT)
    v = float(value)
    if not math.isfinite(v):
        raise InputError(f"{key} must be a finite number, got {value!r}", path, _HINT)
    return v


def _parse_link(table, path) -> Link:
    from ..errorcount import PATTERNS

    if not isinstance(table, dict):
        raise InputError("[link] must be a table", path, _HINT)
    allowed = {"tones_hz", "symbol_rate_hz", "reference"}
    for key in table:
        if key not in allowed:
            raise InputError(f"unknown key link.{key}", path, "known keys: " + ", ".join(sorted(allowed)))
    tones = None
    if "tones_hz" in table:
        t = table["tones_hz"]
        if not isinstance(t, list) or len(t) != 2:
            raise InputError(f"link.tones_hz must be a list of two numbers [f0, f1], got {t!r}", path, _HINT)
        f0, f1 = (_number(v, "link.tones_hz", path) for v in t)
        if not f0 < f1:
            raise InputError(f"link.tones_hz must be [f0, f1] with f0 < f1, got [{f0:g}, {f1:g}]", path, _HINT)
        tones = (f0, f1)
    rate = None
    if "symbol_rate_hz" in table:
        rate = _number(table["symbol_rate_hz"], "link.symbol_rate_hz", path)
        if rate <= 0:
            raise InputError(f"link.symbol_rate_hz must be positive, got {rate:g}", path, _HINT)
    ref = None
    if "reference" in table:
        ref = table["reference"]
        if not isinstance(ref, str):
            raise InputError(f"link.reference must be a string, got {ref!r}", path, _HINT)
        if ref.startswith("bits:"):
            bits = Path(ref[5:])
            if path is not None and not bits.is_absolute():
                bits = Path(path).parent / bits      # relative to the spec file
            ref = f"bits:{bits}"
        elif ref not in ("auto", "none", "frames") and ref not in PATTERNS:
            raise InputError(f"link.reference {ref!r} is not a known pattern", path,
                             "use auto, none, frames, " + ", ".join(PATTERNS) + " or bits:FILE")
    return Link(tones, rate, ref)


def _parse_limits(table, path) -> Limits:
    if not isinstance(table, dict):
        raise InputError("[limits] must be a table", path, _HINT)
    known = [f.name for f in fields(Limits)]
    vals = {}
    for key, value in table.items():
        if key not in known:
            raise InputError(f"unknown key limits.{key}", path, "known keys: " + ", ".join(known))
        v = _number(value, f"limits.{key}", path)
        if key == "max_ber":
            if not 0.0 < v <= 0.5:
                raise InputError(f"limits.max_ber must lie in (0, 0.5], got {v:g}", path, _HINT)
        elif key == "max_tone_correlation":
            if not 0.0 <= v <= 1.0:
                raise InputError(f"limits.max_tone_correlation must lie in [0, 1], got {v:g}", path, _HINT)
        elif key != "min_ebn0_db" and v < 0:
            raise InputError(f"limits.{key} must not be negative, got {v:g}", path, _HINT)
        vals[key] = v
    return Limits(**vals)


def parse_spec(text: str, path: str | Path | None = None) -> Spec:
    """Parse the TOML text of a spec.

    Parameters
    ----------
    text : str
        TOML document with optional tables ``[link]`` and ``[limits]``.
    path : str or Path, optional
        Where the text came from (named in errors; ``bits:FILE`` references
        are resolved relative to its folder).

    Returns
    -------
    Spec

    Raises
    ------
    InputError
        TOML syntax errors, unknown tables or keys, wrong types and impossible
        values, each naming the key.
    """
    try:
        doc = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise InputError(f"spec is not valid TOML ({exc})", path, _HINT) from None
    for key in doc:
        if key not in ("link", "limits"):
            raise InputError(f"unknown table or key {key!r}", path, "a spec has only [link] and [limits]")
    return Spec(link=_parse_link(doc.get("link", {}), path),
                limits=_parse_limits(doc.get("limits", {}), path),
                path=None if path is None else str(path))


def load_spec(path: str | Path) -> Spec:
    """Read and parse a spec file (see :func:`parse_spec`)."""
    p = Path(path)
    try:
        text = p.read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError) as exc:
        raise InputError(f"cannot read the spec file ({getattr(exc, 'strerror', None) or exc})", p,
                         "give --spec SPEC.toml") from None
    return parse_spec(text, p)


# --------------------------------------------------------------------------- judging
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


def judge(report, spec: Spec) -> tuple[list[dict], str]:
    """Judge an analysis against a spec's limits.

    Parameters
    ----------
    report : dict or AnalysisResult
        The JSON-ready report (:func:`analyzer.report.json_report.build_report`)
        or the analysis result itself (then its report is built first), so the
        numbers judged are exactly those reported.
    spec : Spec
        The parsed spec.  Nominal tones and rate come from ``spec.link``, else
        from the report's ``options``.

    Returns
    -------
    checks : list of dict
        One per limit given: ``{name, measured, limit, unit, pass, marginal, note}``.
        ``marginal`` is True when the limit lies inside the measurement's 95%
        interval ``ci95`` (BER: Clopper-Pearson; Eb/N0 and implementation loss:
        their reported intervals; tone error, imbalance and correlation: the
        interval of the worst burst's value from each burst's interval, see
        :mod:`analyzer.intervals`); the symbol rate carries no interval yet and
        is never marginal.  A quantity that could not be measured fails with a
        note saying why.
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
    if not isinstance(report, dict):
        from ..report.json_report import build_report

        report = build_report(report)
    lim = spec.limits
    opts = report.get("options") or {}
    bursts = report.get("bursts") or []
    summ = report.get("summary") or {}
    tones_nom = spec.link.tones_hz or (tuple(opts["tones_hz"]) if opts.get("tones_hz") else None)
    rate_nom = spec.link.symbol_rate_hz or opts.get("symbol_rate_hz")
    checks: list[dict] = []

    if lim.tone_error_hz is not None:
        name, L = "tone_error_hz", lim.tone_error_hz
        if tones_nom is None:
            checks.append(_unmeasured(name, L, "no nominal tones"))
        else:
            errs = [abs(b["tones_hz"][i] - tones_nom[i]) for b in bursts for i in (0, 1)
                    if b["tones_hz"][i] is not None]
            w = _worst(errs)
            if w is None:
                checks.append(_unmeasured(name, L, "no burst with measured tones"))
            else:
                ci = _worst_interval([_abs_interval((b.get("tones_hz_ci95") or [None, None])[i], tones_nom[i])
                                      for b in bursts for i in (0, 1) if b["tones_hz"][i] is not None])
                checks.append(_judged(name, w, L, ci, f"worst of {len(errs)} tones in {len(bursts)} bursts "
                                      f"against {tones_nom[0]:g}, {tones_nom[1]:g} Hz", "Hz"))

    if lim.symbol_rate_error_ppm is not None:
        name, L = "symbol_rate_error_ppm", lim.symbol_rate_error_ppm
        if not rate_nom:
            checks.append(_unmeasured(name, L, "no nominal symbol rate"))
        else:
            w = _worst([abs(b["symbol_rate_hz"] - rate_nom) / rate_nom * 1e6 for b in bursts
                        if b["symbol_rate_hz"] is not None])
            if w is None:
                checks.append(_unmeasured(name, L, "no burst with a measured symbol rate"))
            else:
                checks.append(_check(name, w, L, w <= L, note=f"worst burst against {rate_nom:g} Bd"))

    ber = summ.get("ber")
    if lim.max_ber is not None:
        name, L = "max_ber", lim.max_ber
        if not ber or ber.get("rate") is None:
            checks.append(_unmeasured(name, L, "no bit errors counted: "
                                      + (summ.get("ber_reason") or "no reference pattern found")))
        else:
            rate, ci = ber["rate"], ber["ci95"]
            marg = _inside(L, ci)
            note = f"{ber['errors']} errors in {ber['bits']} bits"
            if marg:
                note += "; " + _marginal_note(ci, "")
            checks.append(_check(name, rate, L, rate <= L, marg, note, tuple(ci)))

    if lim.max_implementation_loss_db is not None:
        name, L = "max_implementation_loss_db", lim.max_implementation_loss_db
        v, ci = summ.get("implementation_loss_db"), summ.get("implementation_loss_db_ci95") or [None, None]
        if v is not None:
            marg = _inside(L, ci)
            checks.append(_check(name, v, L, v <= L, marg, _marginal_note(ci, "dB") if marg else
                                 "measured Eb/N0 minus the Eb/N0 ideal noncoherent BFSK needs for the measured BER",
                                 tuple(ci)))
        elif ber and ber.get("errors") == 0 and ci[1] is not None:
            hi = ci[1]
            checks.append(_check(name, hi, L, hi <= L, hi > L,
                                 "no bit errors, so only an upper bound of the loss is known (shown as measured)"
                                 + ("" if hi <= L else "; the bound exceeds the limit: more bits are needed")))
        else:
            why = ("Eb/N0 could not be estimated" if summ.get("ebn0_db") is None else
                   "no bit errors counted: " + (summ.get("ber_reason") or "no reference pattern found"))
            checks.append(_unmeasured(name, L, f"needs both Eb/N0 and a bit error count; {why}"))

    if lim.min_ebn0_db is not None:
        name, L = "min_ebn0_db", lim.min_ebn0_db
        v, ci = summ.get("ebn0_db"), summ.get("ebn0_db_ci95") or [None, None]
        if v is None:
            checks.append(_unmeasured(name, L, "Eb/N0 could not be estimated"))
        else:
            marg = _inside(L, ci)
            checks.append(_check(name, v, L, v >= L, marg, _marginal_note(ci, "dB") if marg else
                                 "all bursts pooled", tuple(ci)))

    if lim.max_tone_imbalance_db is not None:
        name, L = "max_tone_imbalance_db", lim.max_tone_imbalance_db
        w = _worst([abs(b["tone_imbalance_db"]) for b in bursts if b["tone_imbalance_db"] is not None])
        ci = _worst_interval([_abs_interval(b.get("tone_imbalance_db_ci95")) for b in bursts
                              if b["tone_imbalance_db"] is not None])
        checks.append(_unmeasured(name, L, "no burst with both tones measured") if w is None else
                      _judged(name, w, L, ci, "worst burst, |E_high/E_low| in dB", "dB"))

    if lim.max_tone_correlation is not None:
        name, L = "max_tone_correlation", lim.max_tone_correlation
        w = _worst([b["tone_correlation"] for b in bursts if b["tone_correlation"] is not None])
        ci = _worst_interval([tuple(b.get("tone_correlation_ci95") or (None, None)) for b in bursts
                              if b["tone_correlation"] is not None])
        checks.append(_unmeasured(name, L, "no burst measured") if w is None else
                      _judged(name, w, L, ci, "worst burst, |rho| of the measured tones over one symbol", ""))

    if not checks:
        return [], "not-judged"
    return checks, "pass" if all(c["pass"] for c in checks) else "fail"
