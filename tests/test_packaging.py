"""The lowest-versions constraints file pins every declared lower bound (so `make test-lowest` tests them)."""

from __future__ import annotations

import re
import tomllib
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def _lower_bounds(requirements):
    out = {}
    for req in requirements:
        m = re.fullmatch(r"([A-Za-z0-9_.-]+)(?:\[[^\]]*\])?>=([0-9][0-9.]*)", req.replace(" ", ""))
        assert m, f"{req}: every dependency needs a plain lower bound (NAME>=VERSION)"
        out[m.group(1).lower()] = m.group(2)
    return out


def _release(v):
    parts = [int(p) for p in v.split(".")]
    while parts and parts[-1] == 0:                                # 1.6 == 1.6.0 (PEP 440 release)
        parts.pop()
    return tuple(parts)


def test_constraints_file_pins_each_declared_lower_bound():
    project = tomllib.loads((ROOT / "pyproject.toml").read_text())["project"]
    declared = _lower_bounds(project["dependencies"] + project["optional-dependencies"]["test"])
    pins = {}
    for line in (ROOT / "constraints-lowest.txt").read_text().splitlines():
        line = line.split("#", 1)[0].strip()
        if line:
            name, version = line.split("==")
            pins[name.lower()] = version
    pins.pop("distributed", None)                                  # dask[distributed]'s own package
    assert set(pins) == set(declared)
    for name, low in declared.items():
        assert _release(pins[name]) == _release(low), name
