"""Spec files (TOML ``[link]`` and ``[limits]``) and the judgement of a result against them."""

from ._spec import judge, load_spec, parse_spec

__all__ = ["judge", "load_spec", "parse_spec"]
