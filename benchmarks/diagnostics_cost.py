"""Cost of the per-burst diagnostics (``analyzer.pipeline._diagnose``) and of each of its parts.

Writes the 8 M-sample capture of ``benchmarks/throughput.py`` (50 kBd, 20
samples per symbol, 4000-symbol bursts at Eb/N0 12 dB) into a temporary
folder, analyses it once in this process (one worker, one BLAS thread, as the
pipeline runs) while recording the arguments ``_diagnose`` is called with,
then times ``_diagnose`` and every diagnostic it calls on those arguments,
burst after burst, and prints the minimum over the runs in ms per burst.

The likelihood-ratio gain takes its full path (a root search) only when the
fitted tone imbalance reaches 0.1 dB, which the bursts of this capture seldom
do; it is timed apart on the same bursts at imbalances of 0.15, 0.5 and 2 dB.

Run with ``python benchmarks/diagnostics_cost.py [--repeat N]``.
"""

from __future__ import annotations

import argparse
import sys
import tempfile
import time
from pathlib import Path
from analyzer.pipeline import _pipeline  # private kernel, tested directly

PARTS = ("model_checks", "output_correlations", "cross_branch_check", "ebn0_trend", "measured_pulse",
         "idle_power_check", "leakage", "noise_correlation", "noise_window_outputs", "loss_parts",
         "blind_ber", "decision_gain")
THEORY_PARTS = ("loss_parts", "blind_ber", "decision_gain")     # the pipeline calls these from analyzer.theory


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--repeat", type=int, default=7, help="timed runs (the minimum is printed)")
    args = ap.parse_args()
    sys.path.insert(0, str(Path(__file__).resolve().parent))
    from threadpoolctl import threadpool_limits

    import throughput
    from analyzer import diagnostics, pipeline, theory

    calls = []
    orig = _pipeline._diagnose

    def record(*a):
        calls.append(a)
        return orig(*a)

    with tempfile.TemporaryDirectory() as tmp:
        meta = throughput.write_capture(Path(tmp) / "bursts", 8_000_000)
        _pipeline._diagnose = record
        try:
            pipeline.analyze(meta, tones_hz=throughput.TONES, symbol_rate_hz=throughput.BAUD, workers=1)
        finally:
            _pipeline._diagnose = orig
    print(f"{len(calls)} bursts")

    spent = {name: 0.0 for name in PARTS}
    home = {name: theory if name in THEORY_PARTS else diagnostics for name in PARTS}
    plain = {name: getattr(home[name], name) for name in PARTS}

    def timed(name):
        f = plain[name]

        def run(*a, **k):
            t = time.perf_counter()
            try:
                return f(*a, **k)
            finally:
                spent[name] += time.perf_counter() - t
        return run

    best = {name: float("inf") for name in PARTS + ("_diagnose",)}
    with threadpool_limits(limits=1, user_api="blas"):
        for _ in range(args.repeat):
            for name in PARTS:
                spent[name] = 0.0
                setattr(home[name], name, timed(name))
            try:
                t = time.perf_counter()
                for c in calls:
                    _pipeline._diagnose(*c)
                whole = time.perf_counter() - t
            finally:
                for name in PARTS:
                    setattr(home[name], name, plain[name])
            best["_diagnose"] = min(best["_diagnose"], whole)
            for name in PARTS:
                best[name] = min(best[name], spent[name])
        full = float("inf")
        for _ in range(max(1, args.repeat // 2)):
            t = time.perf_counter()
            for c in calls:
                for imbalance_db in (0.15, 0.5, 2.0):
                    theory.decision_gain(c[7].ebn0, imbalance_db)
            full = min(full, (time.perf_counter() - t) / 3)
    n = len(calls)
    print(f"{'_diagnose':28s} {best['_diagnose'] / n * 1e3:7.3f} ms per burst (min of {args.repeat} runs)")
    for name in PARTS:
        print(f"  {name:26s} {best[name] / n * 1e3:7.3f}")
    print(f"{'decision_gain, full path':28s} {full / n * 1e3:7.3f} ms per call")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
