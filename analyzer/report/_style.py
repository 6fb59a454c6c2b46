"""The house style shared by the terminal, HTML and PDF reports: words, colours, number formats.

One place decides how a verdict, a check and each kind of number reads, so the
terminal summary, the HTML page and the PDF say the same thing the same way.
Colours have a full-colour value (HTML, PDF) and the nearest of the 16 basic
terminal colours (ANSI SGR codes); piped output carries no colour at all.
"""

from __future__ import annotations

import math

#: ink, muted text, rules and header fill (HTML/PDF)
INK = "#2b3440"
MUTED = "#5a6672"
RULE = "#d8dde3"
HEAD = "#eef1f4"

#: state -> (text colour, background, ANSI SGR code of the nearest basic colour)
STATES = {
    "pass": ("#1d5e33", "#d9efe0", "32"),        # green
    "fail": ("#8a2a1c", "#f6dcd7", "31;1"),      # bold red
    "marginal": ("#7a4b00", "#fff4dc", "33"),    # yellow
    "not-judged": (INK, HEAD, "0"),
    "error": ("#7a4b00", "#fff4dc", "33;1"),
}

#: The words for each verdict, everywhere.
VERDICT_WORDS = {"pass": "PASS", "fail": "FAIL", "not-judged": "NOT JUDGED", "error": "NOT ANALYSED"}

#: Readable names of the spec checks (the JSON keeps the key).
CHECK_NAMES = {
    "tone_error_hz": "tone error",
    "symbol_rate_error_ppm": "symbol-rate error",
    "max_ber": "bit error rate",
    "max_implementation_loss_db": "implementation loss",
    "min_ebn0_db": "Eb/N0",
    "max_tone_imbalance_db": "tone imbalance",
    "max_tone_correlation": "tone correlation |rho|",
}

#: How each check's numbers read: "sci" (a rate), or the digits after the point.
CHECK_DIGITS = {"tone_error_hz": 1, "symbol_rate_error_ppm": 1, "max_ber": "sci",
                "max_implementation_loss_db": 2, "min_ebn0_db": 2, "max_tone_imbalance_db": 2,
                "max_tone_correlation": 3}

DASH = "–"


def fixed(v, digits: int = 2, unit: str = "", sign: bool = False) -> str:
    """A fixed-point number with thousands separators; an en dash when not measured."""
    if v is None or (isinstance(v, float) and not math.isfinite(v)):
        return DASH
    s = f"{v:+,.{digits}f}" if sign else f"{v:,.{digits}f}"
    return f"{s} {unit}".strip()


def sci(v, digits: int = 2) -> str:
    """A rate in scientific notation (``1.26e-03``); ``0`` for zero."""
    if v is None:
        return DASH
    return "0" if v == 0 else f"{v:.{digits}e}"


def check_value(name: str, v) -> str:
    """A check's measured value or limit in the one format of its quantity."""
    d = CHECK_DIGITS.get(name, 3)
    return sci(v) if d == "sci" else fixed(v, d)


def check_name(name: str) -> str:
    return CHECK_NAMES.get(name, name.replace("_", " "))


def check_state(c: dict) -> str:
    """pass, fail or marginal (a marginal check may still pass or fail; it is shown as marginal)."""
    if not c["pass"]:
        return "fail"
    return "marginal" if c.get("marginal") else "pass"


def check_result_word(c: dict) -> str:
    word = "pass" if c["pass"] else "FAIL"
    return word + (", marginal" if c.get("marginal") else "")


def check_measured(c: dict, bursts: list[dict] | None = None, unit: bool = False) -> str:
    """The measured value of a check as a reader compares it with the tables (with its unit if asked).

    A tone imbalance is judged by its magnitude but reported signed, with the
    burst it comes from, so it reads as it does in the bursts table.
    """
    name, v = c["name"], c["measured"]
    u = f" {c['unit']}" if unit and v is not None else ""
    if name == "max_tone_imbalance_db" and v is not None and bursts:
        vals = [(abs(b["tone_imbalance_db"]), b) for b in bursts if b.get("tone_imbalance_db") is not None]
        if vals:
            _, b = max(vals, key=lambda t: t[0])
            lo, hi = c.get("ci95") or (None, None)
            ci = f"; |x| 95% {fixed(lo, 2)} … {fixed(hi, 2)}" if lo is not None and hi is not None else ""
            return f"{fixed(b['tone_imbalance_db'], 2, sign=True)}{u} (burst {b['index']}{ci})"
    if name == "max_implementation_loss_db" and v is not None and "upper bound" in (c.get("note") or ""):
        return f"<= {check_value(name, v)}{u}"
    lo, hi = c.get("ci95") or (None, None)
    if v is not None and lo is not None and hi is not None and name in ("tone_error_hz", "symbol_rate_error_ppm", "max_tone_correlation"):
        return f"{check_value(name, v)}{u} (95% {check_value(name, lo)} … {check_value(name, hi)})"
    return check_value(name, v) + u


def check_note(c: dict, report: dict | None = None, short: bool = False) -> str:
    """The note of a check; a marginal one states its interval in the check's own number format."""
    note = c.get("note") or ""
    if not c.get("marginal") or report is None:
        return note
    s = report.get("summary") or {}
    ci = c.get("ci95")
    if not ci or ci[0] is None or ci[1] is None:
        ci = {"max_ber": (s.get("ber") or {}).get("ci95"), "min_ebn0_db": s.get("ebn0_db_ci95"),
              "max_implementation_loss_db": s.get("implementation_loss_db_ci95")}.get(c["name"])
    if not ci or ci[0] is None or ci[1] is None:
        return note
    lo, hi = (check_value(c["name"], v) for v in ci)
    return (f"marginal: the limit lies inside the 95% interval {lo} … {hi} {c['unit']}"
            + ("" if short else "; more data would be needed to decide with confidence"))


def check_limit(c: dict) -> str:
    name = c["name"]
    if name.startswith("min_"):
        prefix = ">= "
    elif name == "max_tone_imbalance_db":
        prefix = "±"
    else:
        prefix = "<= "
    return prefix + check_value(name, c["limit"])


def ordered_checks(checks: list[dict]) -> list[dict]:
    """Failing checks first, then marginal ones, then those that pass (each group in spec order)."""
    rank = {"fail": 0, "marginal": 1, "pass": 2}
    return sorted(checks, key=lambda c: rank[check_state(c)])


def loss_text(value, ci, ber: dict | None, what: str = "bit") -> tuple[str, str]:
    """Implementation loss and its interval; with no (bit or frame) errors it is only an upper bound."""
    if ber is not None and ber.get("errors") == 0 and ci and ci[1] is not None:
        return f"<= {fixed(ci[1], 2, 'dB')}", f"upper bound (no {what} errors)"
    if value is None:
        return DASH, ""
    lo, hi = ci if ci else (None, None)
    return fixed(value, 2, "dB"), f"{fixed(lo)} … {fixed(hi)} dB"


def failed_check_names(checks: list[dict]) -> list[str]:
    """The names (in words) of the checks that failed, in the order the reports list them."""
    return [check_name(c["name"]) for c in ordered_checks(checks) if not c["pass"]]
