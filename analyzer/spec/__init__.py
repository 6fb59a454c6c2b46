"""Spec files (TOML ``[link]`` and ``[limits]``) and the judgement of a result against them."""

from ._judge import BerReading, BurstReading, Readings, judge, readings
from ._parse import Spec, link_options, load_spec, parse_spec

__all__ = ["BerReading", "BurstReading", "Readings", "judge", "readings", "Spec", "link_options", "load_spec",
           "parse_spec"]
