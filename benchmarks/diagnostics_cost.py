"""Cost of the per-burst diagnostics (``analyzer.diagnostics.diagnose_burst``) and of each of its parts.

Writes the 8 M-sample capture of ``benchmarks/throughput.py`` (50 kBd, 20
samples per symbol, 4000-symbol bursts at Eb/N0 12 dB) into a temporary
folder, analyses it once in this process (one worker, one BLAS thread, as the
pipeline runs) while recording the arguments ``diagnose_burst`` is called with,
then times ``diagnose_burst`` and every diagnostic it calls on those arguments,
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

PARTS = ("model_checks", "output_correlations", "cross_branch_check", "ebn0_trend", "measured_pulse",
         "idle_power_check", "leakage", "noise_correlation", "noise_window_outputs", "loss_parts",
         "blind_ber", "decision_gain")


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--repeat", type=int, default=7, help="timed runs (the minimum is printed)")
    args = ap.parse_args()
    sys.path.insert(0, str(Path(__file__).resolve().parent))
    from threadpoolctl import threadpool_limits

    import throughput
    from analyzer import diagnostics, pipeline, theory
    from analyzer.diagnostics import _burst_diagnosis  # the parts (theory's too) timed where the step looks them up

    calls = []
    orig = diagnostics.diagnose_burst

    def record(*a):
        calls.append(a)
        return orig(*a)

    with tempfile.TemporaryDirectory() as tmp:
        meta = throughput.write_capture(Path(tmp) / "bursts", 8_000_000)
        diagnostics.diagnose_burst = record
        try:
            pipeline.analyze(meta, tones_hz=throughput.TONES, symbol_rate_hz=throughput.BAUD, workers=1)
        finally:
            diagnostics.diagnose_burst = orig
    print(f"{len(calls)} bursts")

    spent = {name: 0.0 for name in PARTS}
    plain = {name: getattr(_burst_diagnosis, name) for name in PARTS}

    def timed(name):
        f = plain[name]

        def run(*a, **k):
            t = time.perf_counter()
            try:
                return f(*a, **k)
            finally:
                spent[name] += time.perf_counter() - t
        return run

    best = {name: float("inf") for name in PARTS + ("diagnose_burst",)}
    with threadpool_limits(limits=1, user_api="blas"):
        for _ in range(args.repeat):
            for name in PARTS:
                spent[name] = 0.0
                setattr(_burst_diagnosis, name, timed(name))
            try:
                t = time.perf_counter()
                for c in calls:
                    orig(*c)
                whole = time.perf_counter() - t
            finally:
                for name in PARTS:
                    setattr(_burst_diagnosis, name, plain[name])
            best["diagnose_burst"] = min(best["diagnose_burst"], whole)
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
    print(f"{'diagnose_burst':28s} {best['diagnose_burst'] / n * 1e3:7.3f} ms per burst (min of {args.repeat} runs)")
    for name in PARTS:
        print(f"  {name:26s} {best[name] / n * 1e3:7.3f}")
    print(f"{'decision_gain, full path':28s} {full / n * 1e3:7.3f} ms per call")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
