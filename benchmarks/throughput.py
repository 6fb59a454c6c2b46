"""Throughput and memory of ``analyzer.analyze`` on long captures.

Writes two SigMF ``cf32_le`` captures (8 M and 32 M samples at 1 Msample/s,
50 kBd bursts of two tones filling about 16% of the time, Eb/N0 12 dB) into a
temporary folder, then in a fresh child process per run times

* ``analyzer.analyze(path, tones_hz=..., symbol_rate_hz=...)``, and
* the reference: ``numpy.fromfile`` of the samples plus one ``numpy.vdot``,

and prints Msample/s, the marginal cost per sample between the two sizes
(``(t(32M) - t(8M)) / 24M``) against the reference's, that cost split by
stage (the pass, the search between pass and bursts, the bursts), the core
time per extra burst the target would leave once the pass and the search are
paid against the time taken, and the growth of the child's peak resident
memory between the two sizes.

Targets: marginal cost at most 4x the reference's; memory growth at most 64 MB.

Then, per burst (``--part bursts`` alone), in this process with one BLAS
thread as the pipeline runs: bursts of 4000 symbols at 8, 16 and 32 samples
per symbol (5 kBd, tones -2500/+2500 Hz, Eb/N0 12 dB, PN9, a random phase
per symbol or with ``--keying continuous`` continuous phase) are analysed once
while the calls of the region analysis are recorded; then, on the same
bursts in the same run, it times

* the full per-burst analysis (``analyzer.pipeline._regions.region_bursts`` on the burst's
  region: timing, tones, decisions, pattern sync, error count, statistics and
  diagnostics),
* the minimum-work floor: the symbol matrix on the final grid (the analysis's
  own first sample and measured tones) times the two tones' mixing templates
  (mix with both tones and sum each symbol window in one product), then the
  square-law decisions,
* the floor with the mixing spelt out (the samples times each tone's
  oscillator, made beforehand, then each window summed),
* the first floor with a brute-force timing search: every offset of the grid
  in whole samples over one symbol, the summed energy of the outputs
  compared, then the decisions at the best offset,

prints the medians of the repeats in ms of CPU time per burst, the ratios of the full
analysis to each floor (goal: at most 10x the first at 16 samples per
symbol) and the growth with samples per symbol (goal: no faster than linear),
and where a burst's time goes: the CPU time of each step of the per-burst
analysis (the step functions of ``analyzer.pipeline._burst`` timed one by one,
the diagnostics apart from the result they feed).

The captures carry no ``core:sha512``: checking a checksum is one more read of
the file that the reference does not make.

Run with ``make bench`` or ``python benchmarks/throughput.py [--sizes 8,32] [--repeat N] [--part all|capture|bursts]``.
"""

from __future__ import annotations

import argparse
import json
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

FS = 1e6
BAUD = 50e3
TONES = (-50e3, 50e3)
EBN0_DB = 12.0
BURST_SYMBOLS = 4000            # 80 000 samples
PERIOD = 500_000                # one burst every 0.5 s: 16% of the time
FIRST = 100_000
AMPLITUDE = 0.25
BLOCK = 1 << 20

ROOT = Path(__file__).resolve().parents[1]


def write_capture(base: Path, n_samples: int, seed: int = 1) -> Path:
    """Write ``base.sigmf-data/-meta`` block by block (never the whole capture in memory)."""
    import sigmf
    from sigmf import sigmffile

    from analyzer import errorcount

    rng = np.random.default_rng(seed)
    sps = int(FS / BAUD)
    sigma = AMPLITUDE * np.sqrt(sps / 10 ** (EBN0_DB / 10))
    starts = np.arange(FIRST, n_samples - BURST_SYMBOLS * sps, PERIOD)
    bits = errorcount.prbs_sequence("PN9", BURST_SYMBOLS * len(starts))
    freq = np.asarray(TONES)[bits]
    phase0 = rng.uniform(0, 2 * np.pi, bits.size)
    data = base.with_name(base.name + ".sigmf-data")
    with open(data, "wb") as fp:
        for pos in range(0, n_samples, BLOCK):
            m = min(BLOCK, n_samples - pos)
            x = (sigma / np.sqrt(2)) * (rng.standard_normal(m) + 1j * rng.standard_normal(m))
            n = pos + np.arange(m)
            k_burst = (n - FIRST) // PERIOD
            offs = (n - FIRST) - k_burst * PERIOD
            on = (n >= FIRST) & (offs < BURST_SYMBOLS * sps) & (k_burst < len(starts))
            sym = k_burst[on] * BURST_SYMBOLS + offs[on] // sps
            x[on] += AMPLITUDE * np.exp(1j * (phase0[sym] + 2 * np.pi * freq[sym] * n[on] / FS))
            fp.write(x.astype(np.complex64).tobytes())
    meta = {"global": {"core:datatype": "cf32_le", "core:version": sigmf.__specification__,
                       "core:sample_rate": FS, "core:description": "throughput benchmark"},
            "captures": [{"core:sample_start": 0}], "annotations": []}
    rec = sigmffile.SigMFFile(metadata=meta)
    rec.validate()
    meta_path = base.with_name(base.name + ".sigmf-meta")
    meta_path.write_text(rec.dumps(pretty=True) + "\n")
    return meta_path


CHILD_ANALYZE = """
import json, resource, sys, time
import analyzer
import analyzer.pipeline            # imported before the clock starts: a fixed cost, not per sample
marks = {}
def progress(pos, total, stage):
    now = time.perf_counter() - t
    marks.setdefault(stage, [now, now])[1] = now
t = time.perf_counter()
r = analyzer.analyze(sys.argv[1], tones_hz=%r, symbol_rate_hz=%r, progress=progress)
dt = time.perf_counter() - t
s = r.summary
print(json.dumps({"seconds": dt, "maxrss_kb": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss, "marks": marks,
                  "bursts": len(r.bursts), "bits": s.ber.bits if s.ber else 0,
                  "errors": s.ber.errors if s.ber else 0, "ebn0_db": float(s.stats.ebn0_db)}))
""" % (TONES, BAUD)

CHILD_REFERENCE = """
import json, resource, sys, time
import numpy as np
t = time.perf_counter()
x = np.fromfile(sys.argv[1], dtype=np.complex64)
v = np.vdot(x, x)
dt = time.perf_counter() - t
print(json.dumps({"seconds": dt, "maxrss_kb": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss,
                  "value": float(v.real)}))
"""


def child(code: str, arg: str) -> dict:
    env = dict(os.environ, PYTHONPATH=str(ROOT) + os.pathsep + os.environ.get("PYTHONPATH", ""),
               MPLBACKEND="Agg")
    out = subprocess.run([sys.executable, "-c", code, arg], check=True, capture_output=True, text=True, env=env)
    return json.loads(out.stdout.strip().splitlines()[-1])


def warm(data: Path) -> None:
    """Read the data file through once, so the timed run finds it in the page cache
    (some machines evict cold pages within seconds)."""
    with open(data, "rb") as fp:
        while fp.read(1 << 24):
            pass


def best(code: str, arg: str, repeat: int, data: Path) -> dict:
    runs = []
    for _ in range(repeat):
        warm(data)
        runs.append(child(code, arg))
    return min(runs, key=lambda r: r["seconds"]) | {"maxrss_kb": max(r["maxrss_kb"] for r in runs),
                                                     "all_seconds": sorted(r["seconds"] for r in runs)}


BURST_BAUD = 5000.0
BURST_TONES = (-2500.0, 2500.0)
BURST_SPS = (8, 16, 32)
BURSTS_PER_SPS = 4
GOAL_BURST_RATIO = 10.0


def _burst_calls(sps: int, continuous: bool = False) -> tuple[list, object, float]:
    """Analyse BURSTS_PER_SPS bursts at ``sps`` samples per symbol, recording each region analysis's
    arguments; returns them, the result and the sample rate."""
    from analyzer import pipeline
    from analyzer.pipeline import _regions  # the per-region step, timed on its own (no public door)
    from analyzer.capture import ArrayCapture
    from analyzer.synth import SynthParams, synthesize

    fs = sps * BURST_BAUD
    res = synthesize(SynthParams(tones_hz=BURST_TONES, symbol_rate_hz=BURST_BAUD, sample_rate_hz=fs,
                                 ebn0_db=EBN0_DB, n_bursts=BURSTS_PER_SPS, symbols_per_burst=BURST_SYMBOLS,
                                 gap_samples=float(2000 * sps), start_offset_samples=500.0 * sps, seed=sps,
                                 continuous_phase=continuous))
    calls, real = [], _regions.region_bursts

    def spy(*args):
        calls.append(args)
        return real(*args)

    _regions.region_bursts = spy
    try:
        out = pipeline.analyze_capture(ArrayCapture(res.samples, fs),
                                       pipeline.AnalysisOptions(BURST_TONES, BURST_BAUD, reference="auto"),
                                       workers=1)
    finally:
        _regions.region_bursts = real
    return [c for c in calls if c[3] is not None], out, fs


def _floor(x: np.ndarray, first: int, n: int, sps: int, templates: np.ndarray) -> np.ndarray:
    """Square-law decisions of ``n`` symbols of ``sps`` samples from sample ``first``: one product of the
    symbol matrix with the two tones' templates (mix and sum each window), then compare the energies."""
    z = x[first:first + n * sps].reshape(n, sps) @ templates
    e = z.real ** 2 + z.imag ** 2
    return e[:, 1] > e[:, 0]


def _floor_mix(x: np.ndarray, first: int, n: int, sps: int, oscillators: np.ndarray) -> np.ndarray:
    """The same decisions with the mixing spelt out: the samples times each tone's oscillator on the
    grid (made beforehand), each symbol window summed, the energies compared."""
    seg = x[first:first + n * sps]
    e = []
    for osc in oscillators:
        z = (seg * osc).reshape(n, sps).sum(axis=1)
        e.append(z.real ** 2 + z.imag ** 2)
    return e[1] > e[0]


def _floor_search(x: np.ndarray, first: int, n: int, sps: int, templates: np.ndarray) -> np.ndarray:
    """The floor with a brute-force timing search: each whole-sample offset over one symbol."""
    lo = max(0, first - sps // 2)
    n1 = min(n, (len(x) - lo - sps) // sps)
    best, at = -1.0, lo
    for d in range(sps):
        z = x[lo + d:lo + d + n1 * sps].reshape(n1, sps) @ templates
        e = float(np.sum(z.real ** 2) + np.sum(z.imag ** 2))
        if e > best:
            best, at = e, lo + d
    return _floor(x, at, n1, sps, templates)


def _median_ms(fn, repeat: int) -> float:
    """Median CPU time of ``fn()`` in ms (this process's CPU time: a busy host disturbs it less than wall time)."""
    times = []
    for _ in range(repeat):
        t = time.process_time()
        fn()
        times.append(time.process_time() - t)
    return 1e3 * float(np.median(times))


#: The per-burst steps timed one by one: names in ``analyzer.pipeline._burst`` in the order
#: ``analyse_burst`` calls them (``_result`` is timed without the diagnostics, shown on their own).
BURST_STEPS = ("_time", "_correlate", "_sync", "_track_tones", "_settle", "_edges", "_known", "_fit",
               "_likelihood", "_theory", "_warn", "_result")


class _StepClock:
    """CPU time spent in each named step while installed (the module attributes wrapped, then restored)."""

    def __init__(self):
        from analyzer import acquire, diagnostics
        from analyzer.pipeline import _burst  # the steps have no public door: timed where they live
        self.spent: dict[str, float] = {}
        self._targets = [(_burst, name, name.lstrip("_")) for name in BURST_STEPS]
        self._targets += [(acquire, "bursts_in_span", "span"), (diagnostics, "diagnose_burst", "diagnose")]
        self._saved = []

    def _wrap(self, fn, label):
        def timed(*args, **kwargs):
            t = time.process_time()
            try:
                return fn(*args, **kwargs)
            finally:
                self.spent[label] = self.spent.get(label, 0.0) + time.process_time() - t
        return timed

    def __enter__(self):
        for mod, name, label in self._targets:
            fn = getattr(mod, name)
            self._saved.append((mod, name, fn))
            setattr(mod, name, self._wrap(fn, label))
        return self

    def __exit__(self, *exc):
        for mod, name, fn in reversed(self._saved):
            setattr(mod, name, fn)
        self._saved.clear()


def step_times(args, repeat: int) -> dict[str, float]:
    """Median CPU ms per step of one region analysis (``region_bursts(*args)``), with ``other``
    the rest of the region analysis (the receiver input) and ``result`` without the diagnostics."""
    from analyzer.pipeline import _regions
    runs = []
    for _ in range(repeat):
        with _StepClock() as clock:
            t = time.process_time()
            _regions.region_bursts(*args)
            total = time.process_time() - t
        spent = dict(clock.spent)
        spent["result"] = spent.get("result", 0.0) - spent.get("diagnose", 0.0)
        spent["other"] = total - sum(spent.values())
        runs.append(spent)
    return {k: 1e3 * float(np.median([r.get(k, 0.0) for r in runs])) for k in runs[0]}


def _print_steps(steps: dict[int, list[dict]]) -> None:
    """The per-step table: mean over the bursts of each step's median ms, per samples per symbol."""
    labels = ["span"] + [n.lstrip("_") for n in BURST_STEPS[:-1]] + ["result", "diagnose", "other"]
    means = {sps: {k: float(np.mean([d.get(k, 0.0) for d in ds])) for k in labels} for sps, ds in steps.items()}
    print("where a burst's time goes (ms of CPU per burst, median per step, mean over the bursts; "
          "span: the span's timing and segmentation before the burst's own steps)")
    print(f"{'step':>12} " + " ".join(f"{f'{s} sps':>9}" for s in steps))
    for k in labels:
        print(f"{k:>12} " + " ".join(f"{means[s][k]:>9.3f}" for s in steps))
    print(f"{'sum':>12} " + " ".join(f"{sum(means[s].values()):>9.3f}" for s in steps))


def burst_table(repeat: int, continuous: bool = False) -> None:
    """Per-burst analysis time against the minimum-work floors, at 8, 16 and 32 samples per symbol."""
    from threadpoolctl import threadpool_limits

    from analyzer.pipeline import _regions

    rows, steps = [], {}
    with threadpool_limits(limits=1, user_api="blas"):
        for sps in BURST_SPS:
            calls, out, fs = _burst_calls(sps, continuous)
            full, floor, mix, search, agree = [], [], [], [], []
            steps[sps] = []
            for args, b in zip(calls, out.bursts):
                ctx, a, stop = args[0], args[1], args[2]
                x = ctx.read(a, stop - a).astype(np.complex64)
                first = int(round(b.grid.first_start)) - a
                n = b.grid.n_symbols
                k = np.arange(sps)
                templates = np.exp(-2j * np.pi * np.outer(k, b.tones_hz) / fs).astype(np.complex64)
                osc = np.exp(-2j * np.pi * np.outer(b.tones_hz, np.arange(n * sps) % sps) / fs).astype(np.complex64)
                _regions.region_bursts(*args)                                      # warm
                full.append(_median_ms(lambda: _regions.region_bursts(*args), repeat))
                steps[sps].append(step_times(args, repeat))
                floor.append(_median_ms(lambda: _floor(x, first, n, sps, templates), 5 * repeat))
                mix.append(_median_ms(lambda: _floor_mix(x, first, n, sps, osc), 5 * repeat))
                search.append(_median_ms(lambda: _floor_search(x, first, n, sps, templates), 3 * repeat))
                agree.append(float(np.mean(_floor(x, first, n, sps, templates) == (b.decisions == 1))))
            rows.append((sps, len(full), float(np.mean(full)), float(np.mean(floor)), float(np.mean(search)),
                         float(np.mean(agree)), float(np.mean(mix))))
    print(f"per burst of {BURST_SYMBOLS} symbols (5 kBd, Eb/N0 {EBN0_DB:g} dB, "
          f"{'continuous phase' if continuous else 'random phase per symbol'}, one process, one BLAS thread; "
          f"CPU time, medians of {repeat} runs, mean over the bursts)")
    print(f"{'sps':>4} {'bursts':>7} {'full ms':>9} {'floor ms':>9} {'full/floor':>11} {'mix ms':>8} "
          f"{'full/mix':>9} {'search ms':>10} {'full/search':>12} {'same decisions':>15}")
    for sps, nb, f, fl, se, ag, mx in rows:
        print(f"{sps:>4} {nb:>7} {f:>9.2f} {fl:>9.3f} {f / fl:>11.1f} {mx:>8.3f} {f / mx:>9.1f} {se:>10.3f} "
              f"{f / se:>12.1f} {ag:>15.4f}")
    print("  floor: symbol matrix times the two tones' templates; mix: samples times each oscillator, windows "
          "summed; search: the floor at each whole-sample offset over one symbol, then at the best; "
          "same decisions: the floor's against the analysis's")
    _print_steps(steps)
    r16 = next(r for r in rows if r[0] == 16)
    print(f"full / floor at 16 samples per symbol: {r16[2] / r16[3]:.1f} (goal <= {GOAL_BURST_RATIO:g}) "
          f"{'ok' if r16[2] / r16[3] <= GOAL_BURST_RATIO else 'OVER'}")
    for (s0, _, f0, *_), (s1, _, f1, *_) in zip(rows, rows[1:]):
        print(f"growth {s0} -> {s1} samples per symbol: full x{f1 / f0:.2f} (linear: x{s1 / s0:g}) "
              f"{'ok' if f1 / f0 <= s1 / s0 else 'OVER'}")


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--sizes", default="8,32", help="two capture sizes in Msamples (default 8,32)")
    ap.add_argument("--repeat", type=int, default=3, help="runs per measurement; the fastest is kept (the "
                    "reference, a few tens of milliseconds and easily upset by the host, runs 3 times as often)")
    ap.add_argument("--part", choices=("all", "capture", "bursts"), default="all",
                    help="the long captures, the per-burst table, or both (default)")
    ap.add_argument("--keying", choices=("random", "continuous"), default="random",
                    help="bursts of the per-burst table: a random phase per symbol (as the long captures; "
                         "default) or continuous phase")
    a = ap.parse_args()
    if a.part != "capture":
        burst_table(max(a.repeat, 5), a.keying == "continuous")
        if a.part == "bursts":
            return 0
    sizes = [int(float(s) * 1_000_000) for s in a.sizes.split(",")]
    if len(sizes) != 2 or sizes[0] >= sizes[1]:
        ap.error("--sizes needs two increasing sizes")
    res = {}
    with tempfile.TemporaryDirectory(prefix="tonepair-bench-") as tmp:
        for n in sizes:
            meta = write_capture(Path(tmp) / f"bench_{n // 1_000_000}M", n)
            data = str(meta).removesuffix("meta") + "data"
            res[n] = {"analyze": best(CHILD_ANALYZE, str(meta), a.repeat, Path(data)),
                      "reference": best(CHILD_REFERENCE, data, 3 * a.repeat, Path(data))}
            Path(data).unlink()                   # keep at most one capture on disk

    print(f"tonepair throughput: {FS / 1e6:g} Msample/s cf32, {BAUD / 1e3:g} kBd bursts, "
          f"{100 * BURST_SYMBOLS * FS / BAUD / PERIOD:.0f}% of the time, Eb/N0 {EBN0_DB:g} dB")
    print(f"{'samples':>10} {'analyze s':>10} {'Msample/s':>10} {'reference s':>12} {'ref Msample/s':>14} "
          f"{'peak RSS MB':>12} {'bursts':>7} {'bits':>9} {'errors':>7} {'Eb/N0 dB':>9}")
    for n, r in res.items():
        an, ref = r["analyze"], r["reference"]
        print(f"{n:>10} {an['seconds']:>10.3f} {n / an['seconds'] / 1e6:>10.2f} {ref['seconds']:>12.3f} "
              f"{n / ref['seconds'] / 1e6:>14.1f} {an['maxrss_kb'] / 1024:>12.1f} {an['bursts']:>7} "
              f"{an['bits']:>9} {an['errors']:>7} {an['ebn0_db']:>9.2f}")
    for n, r in res.items():
        print(f"{n:>10} runs (s): analyze {', '.join(f'{v:.3f}' for v in r['analyze']['all_seconds'])}; "
              f"reference {', '.join(f'{v:.3f}' for v in r['reference']['all_seconds'])}")
    n0, n1 = sizes
    dn = n1 - n0
    m_an = (res[n1]["analyze"]["seconds"] - res[n0]["analyze"]["seconds"]) / dn
    m_ref = (res[n1]["reference"]["seconds"] - res[n0]["reference"]["seconds"]) / dn
    ratio = m_an / m_ref if m_ref > 0 else float("inf")
    grow = (res[n1]["analyze"]["maxrss_kb"] - res[n0]["analyze"]["maxrss_kb"]) / 1024
    print(f"marginal cost: analyze {1e9 * m_an:.2f} ns/sample, reference {1e9 * m_ref:.2f} ns/sample, "
          f"ratio {ratio:.2f} (target <= 4) {'ok' if ratio <= 4 else 'OVER'}")
    # where the marginal time goes (from the progress reports of the fastest runs): up to the end
    # of the pass (opening included), between the pass and the first burst result, the bursts
    stages = []
    for n in sizes:
        mk = res[n]["analyze"]["marks"]
        p_end = max(v[1] for k, v in mk.items() if k != "bursts")
        b_first, b_end = mk["bursts"] if "bursts" in mk else (p_end, p_end)
        stages.append((p_end, b_first - p_end, res[n]["analyze"]["seconds"] - b_first))
    parts = ", ".join(f"{name} {1e9 * (b - a) / dn:.2f}" for name, a, b in
                      zip(("pass", "between", "bursts"), stages[0], stages[1]))
    print(f"marginal cost by stage (ns/sample): {parts}  (the bursts figure runs to the first burst's result)")
    # what the target leaves for the burst analysis, per extra burst and core, against what it takes
    cores = len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else (os.cpu_count() or 1)
    extra = res[n1]["analyze"]["bursts"] - res[n0]["analyze"]["bursts"]
    fixed = sum(b - a for a, b in zip(stages[0][:2], stages[1][:2]))
    took = stages[1][2] - stages[0][2]
    if extra > 0:
        left = 4 * m_ref * dn - fixed
        print(f"burst budget at the target: {1e3 * left * cores / extra:.2f} ms per extra burst on each of "
              f"{cores} cores once the pass and search are paid ({1e3 * fixed:.0f} ms of the "
              f"{1e3 * 4 * m_ref * dn:.0f} ms allowed); taken: {1e3 * took * cores / extra:.2f} ms")
    print(f"peak memory growth {n0 // 1_000_000}M -> {n1 // 1_000_000}M: {grow:.1f} MB "
          f"(target <= 64 MB) {'ok' if grow <= 64 else 'OVER'}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
