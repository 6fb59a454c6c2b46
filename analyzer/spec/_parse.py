"""Spec files (TOML): what a link should be and the limits it must meet.

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
radio pass silently.  :func:`parse_spec` is pure; :func:`load_spec` only
reads the file and hands its text to :func:`parse_spec`; :func:`link_options`
fills the options a command was not given from a spec's ``[link]``.  Judging a
result against the limits is :func:`analyzer.spec.judge`.
"""

from __future__ import annotations

import math
import tomllib
from dataclasses import dataclass, fields
from pathlib import Path

from ..errors import InputError

__all__ = ["Link", "Limits", "Spec", "parse_spec", "load_spec", "link_options", "normal_reference",
           "LIMIT_UNITS"]

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


def link_options(spec_path: Path | None, tones, baud, reference: str | None):
    """The spec (None without ``spec_path``) and the tones, symbol rate and reference to analyse with:
    options given on the command line win; the spec's ``[link]`` fills the rest."""
    spec = load_spec(spec_path) if spec_path is not None else None
    if spec is not None:
        tones = tones if tones is not None else spec.link.tones_hz
        baud = baud if baud is not None else spec.link.symbol_rate_hz
        reference = reference if reference is not None else spec.link.reference
    return spec, tones, baud, normal_reference(reference)


def normal_reference(reference: str | None) -> str:
    """``pn9`` reads as ``PN9``, ``AUTO`` as ``auto``: pattern names are not case-sensitive (a bits:FILE is)."""
    if not reference:
        return "auto"
    if reference[:5].lower() == "bits:":
        return "bits:" + reference[5:]
    low = reference.strip().lower()
    return low if low in ("auto", "none", "frames") else low.upper()
