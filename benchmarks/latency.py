"""What the user waits for: ``tonepair analyze`` on the demo capture against a floor.

Times, in fresh processes and in the same run (rounds interleaved, so a busy
host slows every command alike),

* the floor: ``python -c`` importing numpy, scipy.signal and matplotlib.pyplot
  and writing one small PNG (what any Python tool that draws one figure pays),
* (a) ``tonepair analyze`` on the demo capture with its spec, JSON and HTML
  reports (the terminal summary included), and
* (b) the same with ``--pdf``,

and prints the medians of the repeats, wall and CPU time (the child's user +
system time, its worker processes included), and the ratios against the
goals: (a) at most 2.5x the floor, (b) at most 3.5x.

Then an import-time breakdown of (a) from ``python -X importtime``: the
modules' own import times summed by package (``scipy.stats``, ``matplotlib``,
``analyzer.pipeline`` ...), largest first, and the cumulative import time of
``import analyzer`` and ``import analyzer.pipeline`` alone.

Run with ``python benchmarks/latency.py [--repeat N] [--compare OLD_TREE]``.
"""

from __future__ import annotations

import argparse
import os
import re
import resource
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
CAPTURE = ROOT / "sample_captures" / "beacon_demo.sigmf-meta"
SPEC = ROOT / "sample_captures" / "beacon_demo.spec.toml"
GOALS = {"html": 2.5, "pdf": 3.5}
#: the source tree whose ``analyzer`` runs (``--tree``: another checkout, to compare)
TREE = {"root": ROOT}

FLOOR = """
import sys
import numpy as np
import scipy.signal
import matplotlib
matplotlib.use("Agg")
import matplotlib.pyplot as plt
fig, ax = plt.subplots(figsize=(3, 2))
ax.plot(np.arange(10), np.arange(10) ** 2)
fig.savefig(sys.argv[1], dpi=72)
"""

# the console script's own code (analyzer.cli:main), so the command runs in this interpreter
TONEPAIR = "import sys; sys.argv[0] = 'tonepair'; from analyzer.cli import main; sys.exit(main())"


def _env(tree: Path | None = None) -> dict:
    tree = tree or TREE["root"]
    return dict(os.environ, PYTHONPATH=str(tree) + os.pathsep + os.environ.get("PYTHONPATH", ""),
                MPLBACKEND="Agg")


def commands(tmp: Path) -> dict[str, list[str]]:
    """The three timed command lines (reports go to ``tmp``)."""
    analyze = [sys.executable, "-c", TONEPAIR, "analyze", str(CAPTURE), "--spec", str(SPEC),
               "--out", str(tmp), "--overwrite"]
    return {"floor": [sys.executable, "-c", FLOOR, str(tmp / "floor.png")],
            "html": analyze + ["--name", "a"],
            "pdf": analyze + ["--name", "b", "--pdf", str(tmp / "b.pdf")]}


def timed(cmd: list[str], tree: Path | None = None) -> tuple[float, float]:
    """Wall and CPU seconds (user + system of the child and its waited-for children) of one run
    (with the ``analyzer`` of ``tree``, default the timed tree)."""
    tree = tree or TREE["root"]
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    t = time.perf_counter()
    out = subprocess.run(cmd, capture_output=True, text=True, env=_env(tree), cwd=tree)
    wall = time.perf_counter() - t
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    if out.returncode not in (0, 1):             # 1: analysed, a spec check failed
        raise SystemExit(f"command failed ({out.returncode}): {' '.join(cmd[3:])}\n{out.stderr}")
    cpu = (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)
    return wall, cpu


_LINE = re.compile(r"import time:\s+(\d+) \|\s+(\d+) \| (\s*)(\S+)")


def import_times(cmd: list[str]) -> list[tuple[int, int, int, str]]:
    """``(self_us, cumulative_us, depth, module)`` for each module ``cmd`` imports (``-X importtime``)."""
    out = subprocess.run([cmd[0], "-X", "importtime"] + cmd[1:], capture_output=True, text=True, env=_env(),
                         cwd=TREE["root"])
    rows = []
    for line in out.stderr.splitlines():
        m = _LINE.match(line)
        if m:
            rows.append((int(m.group(1)), int(m.group(2)), len(m.group(3)) // 2, m.group(4)))
    return rows


def package(module: str) -> str:
    """The group a module's import time is counted in: two name levels for the big packages."""
    parts = module.split(".")
    if parts[0] in ("scipy", "matplotlib", "analyzer", "numpy") and len(parts) > 1:
        return ".".join(parts[:2])
    return parts[0]


def import_breakdown(cmd: list[str], top: int) -> None:
    rows = import_times(cmd)
    total = sum(r[0] for r in rows)
    groups: dict[str, int] = {}
    for self_us, _cum, _depth, mod in rows:
        groups[package(mod)] = groups.get(package(mod), 0) + self_us
    print(f"import time of (a), one run: {total / 1e3:.0f} ms in {len(rows)} modules; by package "
          f"(own time of its modules, ms):")
    ranked = sorted(groups.items(), key=lambda kv: -kv[1])
    for name, us in ranked[:top]:
        print(f"  {name:<28} {us / 1e3:>7.1f}")
    rest = sum(us for _n, us in ranked[top:])
    print(f"  {'(the rest)':<28} {rest / 1e3:>7.1f}")
    heavy = ("scipy.stats", "scipy.signal", "scipy.optimize", "matplotlib", "jinja2", "pypdf", "sigmf",
             "jsonschema", "soundfile")
    for stmt in ("import analyzer", "import analyzer.pipeline", "import analyzer.cli._commands"):
        rows = import_times([sys.executable, "-c", stmt])
        mods = {r[3] for r in rows}
        cum = max((r[1] for r in rows if r[3] == stmt.split()[1]), default=0)
        present = [h for h in heavy if h in mods or any(m.startswith(h + ".") for m in mods)]
        print(f"  {stmt:<28} {cum / 1e3:>7.1f} ms cumulative; heavy packages imported: "
              f"{', '.join(present) if present else 'none'}")


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--repeat", type=int, default=5, help="rounds (each runs the three commands once; default 5)")
    ap.add_argument("--top", type=int, default=14, help="packages listed in the import breakdown")
    ap.add_argument("--tree", type=Path, default=ROOT, help="source tree whose analyzer is timed (default: this "
                    "one; e.g. an older checkout made with git archive, to compare)")
    ap.add_argument("--compare", type=Path, default=None, help="also run (a) and (b) with the analyzer of this "
                    "source tree, in the same rounds (before/after figures under the same load)")
    a = ap.parse_args()
    TREE["root"] = a.tree.resolve()
    with tempfile.TemporaryDirectory(prefix="tonepair-latency-") as tmp:
        cmds = commands(Path(tmp))
        trees = {k: None for k in cmds}
        if a.compare is not None:
            for k in ("html", "pdf"):
                cmds[k + " compared"] = cmds[k]
                trees[k + " compared"] = a.compare.resolve()
        for k, c in cmds.items():                 # once untimed: byte-code compiled, files in the page cache
            timed(c, trees[k])
        runs: dict[str, list[tuple[float, float]]] = {k: [] for k in cmds}
        for _ in range(a.repeat):
            for k, c in cmds.items():
                runs[k].append(timed(c, trees[k]))
        med = {k: (statistics.median(w for w, _ in v), statistics.median(c for _, c in v)) for k, v in runs.items()}
        print(f"tonepair latency ({TREE['root']}): demo capture with its spec, {a.repeat} rounds, medians "
              f"({os.cpu_count()} CPUs, load average {os.getloadavg()[0]:.1f} at the end)")
        print(f"{'':<24} {'wall s':>8} {'CPU s':>8} {'wall x':>8} {'CPU x':>8} {'goal':>6}")
        fw, fc = med["floor"]
        labels = {"floor": "floor (import + 1 PNG)", "html": "(a) analyze, HTML", "pdf": "(b) analyze, --pdf",
                  "html compared": "(a) compared tree", "pdf compared": "(b) compared tree"}
        if a.compare is not None:
            print(f"compared tree: {a.compare.resolve()}")
        for k in cmds:
            w, c = med[k]
            goal = GOALS.get(k.split()[0])
            verdict = "" if goal is None else f"<= {goal:g} {'ok' if w / fw <= goal and c / fc <= goal else 'OVER'}"
            print(f"{labels[k]:<24} {w:>8.3f} {c:>8.3f} {w / fw:>8.2f} {c / fc:>8.2f}  {verdict}")
        for k, v in runs.items():
            print(f"  {k:<6} runs wall {', '.join(f'{w:.2f}' for w, _ in v)}; CPU {', '.join(f'{c:.2f}' for _, c in v)}")
        import_breakdown(cmds["html"], a.top)
    return 0


if __name__ == "__main__":
    sys.exit(main())
