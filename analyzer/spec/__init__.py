"""Spec files (TOML ``[link]`` and ``[limits]``) and the judgement of a result against them."""

from ._judge import BerReading, BurstReading, Readings, judge, readings
from ._parse import LIMIT_UNITS, Limits, Link, Spec, link_options, load_spec, normal_reference, parse_spec

__all__ = ["BerReading", "BurstReading", "Readings", "judge", "readings", "LIMIT_UNITS", "Limits", "Link", "Spec",
           "link_options", "load_spec", "normal_reference", "parse_spec"]
