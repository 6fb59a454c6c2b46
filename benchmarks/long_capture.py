"""A long capture read once: ``analyzer.analyze`` on a 1 GB SigMF capture against reading and hashing it.

Writes (with numpy, once, block by block) a SigMF ``cf32_le`` capture of
128 M samples (1 GiB) at 1 Msample/s holding 8 bursts of 4000 symbols at
50 kBd, Eb/N0 12 dB, with its ``core:sha512``, into a temporary folder.  Then,
each in a fresh child process, with the page cache dropped for the file first
(cold: ``posix_fadvise(DONTNEED)``) and with the file just read (warm), times

* ``analyzer.analyze(path, tones_hz=..., symbol_rate_hz=...)`` (its checksum
  checked in the analysis's pass), every core and ``workers=1``,
* the same on the demo capture (the fixed cost: "beyond the demo" is the
  difference),
* the same with metadata that carries no ``core:sha512`` (the cost of the check),
* the floor: reading the file once in 16 MB blocks, and reading it once
  hashing each block with ``hashlib.sha512``; and ``sigmf.hashing``'s
  checksum of the file (4 kB reads: how the check was made before the
  analysis, a second read of the file),

and prints the medians, the time beyond the demo against the read+hash time
(goal: under 1.5x) and each child's peak resident memory (``VmHWM``, which,
unlike ``ru_maxrss``, does not carry this process's peak over to the child).

Run with ``python benchmarks/long_capture.py [--msamples 128] [--repeat 3]``.
"""

from __future__ import annotations

import argparse
import hashlib
import json
import os
import resource
import statistics
import subprocess
import sys
import tempfile
from pathlib import Path

import numpy as np

FS = 1e6
BAUD = 50e3
TONES = (-50e3, 50e3)
EBN0_DB = 12.0
BURST_SYMBOLS = 4000
N_BURSTS = 8
AMPLITUDE = 0.25
BLOCK = 1 << 22
GOAL = 1.5

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "sample_captures" / "beacon_demo.sigmf-meta"


def write_capture(base: Path, n_samples: int, seed: int = 2) -> Path:
    """``base.sigmf-data/-meta``: noise with N_BURSTS evenly spaced bursts, and its SHA-512."""
    import sigmf

    from analyzer import errorcount

    rng = np.random.default_rng(seed)
    sps = int(FS / BAUD)
    sigma = AMPLITUDE * np.sqrt(sps / 10 ** (EBN0_DB / 10))
    period = n_samples // N_BURSTS
    starts = period // 2 + period * np.arange(N_BURSTS)
    bits = errorcount.prbs_sequence("PN9", BURST_SYMBOLS * N_BURSTS)
    freq = np.asarray(TONES)[bits]
    phase0 = rng.uniform(0, 2 * np.pi, bits.size)
    sha = hashlib.sha512()
    data = base.with_name(base.name + ".sigmf-data")
    with open(data, "wb") as fp:
        for pos in range(0, n_samples, BLOCK):
            m = min(BLOCK, n_samples - pos)
            x = np.empty(m, np.complex64)
            x.real = rng.standard_normal(m, dtype=np.float32)
            x.imag = rng.standard_normal(m, dtype=np.float32)
            x *= np.float32(sigma / np.sqrt(2))
            for k, s in enumerate(starts):
                a, b = max(s, pos), min(s + BURST_SYMBOLS * sps, pos + m)
                if a < b:
                    n = np.arange(a, b)
                    sym = k * BURST_SYMBOLS + (n - s) // sps
                    x[a - pos:b - pos] += (AMPLITUDE * np.exp(1j * (phase0[sym] + 2 * np.pi * freq[sym] * n / FS))
                                           ).astype(np.complex64)
            buf = x.tobytes()
            sha.update(buf)
            fp.write(buf)
    meta = {"global": {"core:datatype": "cf32_le", "core:version": sigmf.__specification__,
                       "core:sample_rate": FS, "core:description": "long-capture benchmark",
                       "core:sha512": sha.hexdigest()},
            "captures": [{"core:sample_start": 0}], "annotations": []}
    meta_path = base.with_name(base.name + ".sigmf-meta")
    meta_path.write_text(json.dumps(meta, indent=2) + "\n")
    # the same dataset under metadata without the checksum (core:dataset names the data file)
    del meta["global"]["core:sha512"]
    meta["global"]["core:dataset"] = data.name
    base.with_name(base.name + "_nosha.sigmf-meta").write_text(json.dumps(meta, indent=2) + "\n")
    return meta_path


CHILD_ANALYZE = """
import json, sys, time
import analyzer
import analyzer.pipeline            # imported before the clock starts: a fixed cost
workers = None if sys.argv[2] == "all" else int(sys.argv[2])
t = time.perf_counter()
r = analyzer.analyze(sys.argv[1], tones_hz=tuple(json.loads(sys.argv[3])), symbol_rate_hz=float(sys.argv[4]),
                     workers=workers)
dt = time.perf_counter() - t
hwm = [l for l in open("/proc/self/status") if l.startswith("VmHWM")]
print(json.dumps({"seconds": dt, "maxrss_kb": int(hwm[0].split()[1]) if hwm else 0,
                  "bursts": len(r.bursts), "checksum_warnings": sum("sha512" in w for w in r.warnings),
                  "errors": r.summary.ber.errors if r.summary.ber else -1}))
"""

CHILD_SIGMF_HASH = """
import json, sys, time
from sigmf import hashing
t = time.perf_counter()
h = hashing.calculate_sha512(filename=sys.argv[1])
print(json.dumps({"seconds": time.perf_counter() - t, "maxrss_kb": 0, "digest": h[:16]}))
"""

CHILD_READ = """
import hashlib, json, sys, time
hash_it = sys.argv[2] == "hash"
buf = bytearray(1 << 24)
mv = memoryview(buf)
h = hashlib.sha512()
t = time.perf_counter()
with open(sys.argv[1], "rb", buffering=0) as f:
    while True:
        n = f.readinto(buf)
        if not n:
            break
        if hash_it:
            h.update(mv[:n])
dt = time.perf_counter() - t
hwm = [l for l in open("/proc/self/status") if l.startswith("VmHWM")]
print(json.dumps({"seconds": dt, "maxrss_kb": int(hwm[0].split()[1]) if hwm else 0,
                  "digest": h.hexdigest()[:16]}))
"""


def child(code: str, *args: str, tree: Path = ROOT) -> dict:
    """Run ``code`` in a fresh interpreter (with the ``analyzer`` of source tree ``tree``); its JSON line,
    with its CPU time (user + system, its own workers included) as ``cpu``."""
    env = dict(os.environ, PYTHONPATH=str(tree) + os.pathsep + os.environ.get("PYTHONPATH", ""),
               MPLBACKEND="Agg")
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    out = subprocess.run([sys.executable, "-c", code, *args], check=True, capture_output=True, text=True, env=env,
                         cwd=tree)
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    cpu = (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)
    return json.loads(out.stdout.strip().splitlines()[-1]) | {"cpu": cpu}


def cache(data: Path, cold: bool) -> None:
    """Drop the file's pages from the page cache (cold) or read it through once (warm)."""
    if cold:
        fd = os.open(data, os.O_RDONLY)
        try:
            os.fsync(fd)
            os.posix_fadvise(fd, 0, 0, os.POSIX_FADV_DONTNEED)
        finally:
            os.close(fd)
    else:
        with open(data, "rb", buffering=0) as fp:
            buf = bytearray(1 << 24)
            while fp.readinto(buf):
                pass


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--msamples", type=float, default=128, help="capture length in Msamples (default 128: 1 GiB)")
    ap.add_argument("--repeat", type=int, default=3, help="runs per measurement; medians are shown")
    ap.add_argument("--compare", type=Path, default=None, help="also time the analysis of another source tree "
                    "(e.g. an older checkout made with git archive) in the same run")
    a = ap.parse_args()
    n = int(a.msamples * (1 << 20))
    with tempfile.TemporaryDirectory(prefix="tonepair-long-") as tmp:
        meta = write_capture(Path(tmp) / "long", n)
        data = Path(str(meta).removesuffix("meta") + "data")
        nosha = str(meta).replace("long.sigmf-meta", "long_nosha.sigmf-meta")
        hint = (json.dumps(TONES), str(BAUD))
        demo = (json.dumps([-2500.0, 2500.0]), "5000")
        jobs = {"read": lambda: child(CHILD_READ, str(data), "read"),
                "read+hash": lambda: child(CHILD_READ, str(data), "hash"),
                "analyze": lambda: child(CHILD_ANALYZE, str(meta), "all", *hint),
                "analyze workers=1": lambda: child(CHILD_ANALYZE, str(meta), "1", *hint),
                "analyze, no checksum": lambda: child(CHILD_ANALYZE, nosha, "all", *hint),
                "sigmf.hashing": lambda: child(CHILD_SIGMF_HASH, str(data))}
        if a.compare is not None:
            other = a.compare.resolve()
            jobs["compared: analyze"] = lambda: child(CHILD_ANALYZE, str(meta), "all", *hint, tree=other)
            jobs["compared: workers=1"] = lambda: child(CHILD_ANALYZE, str(meta), "1", *hint, tree=other)
        runs: dict = {}
        load_before = os.getloadavg()
        for _ in range(a.repeat):
            runs.setdefault("demo", []).append(child(CHILD_ANALYZE, str(DEMO), "all", *demo))
            for temp in ("cold", "warm"):
                for name, job in jobs.items():
                    cache(data, cold=temp == "cold")
                    runs.setdefault((name, temp), []).append(job())
    med = {k: statistics.median(r["seconds"] for r in v) for k, v in runs.items()}
    cpu = {k: statistics.median(r["cpu"] for r in v) for k, v in runs.items()}
    rss = {k: max(r["maxrss_kb"] for r in v) / 1024 for k, v in runs.items()}
    print(f"tonepair long capture: {n / 2 ** 20:g} Msamples cf32 ({8 * n / 2 ** 30:.2f} GiB), {N_BURSTS} bursts of "
          f"{BURST_SYMBOLS} symbols, core:sha512 checked; {os.cpu_count()} CPUs, medians of {a.repeat}")
    # other work on the machine takes cores from the two-thread analysis sooner than from the one-thread floor
    print(f"load average (1 min) before {load_before[0]:.2f}, after {os.getloadavg()[0]:.2f}: figures are "
          f"fair only near 0 on an otherwise idle machine")
    if a.compare is not None:
        print(f"compared: the analyzer of {a.compare.resolve()}")
    print(f"demo capture analysis (the fixed cost): {med['demo']:.3f} s wall, {cpu['demo']:.3f} s CPU "
          f"(CPU: the whole child, imports included)")
    print(f"{'':<22} {'cold s':>8} {'warm s':>8} {'cold CPU':>9} {'warm CPU':>9} {'peak RSS MB':>12}")
    for name in jobs:
        print(f"{name:<22} {med[(name, 'cold')]:>8.3f} {med[(name, 'warm')]:>8.3f} {cpu[(name, 'cold')]:>9.3f} "
              f"{cpu[(name, 'warm')]:>9.3f} {max(rss[(name, 'cold')], rss[(name, 'warm')]):>12.1f}")
    for temp in ("cold", "warm"):
        floor = med[("read+hash", temp)]
        for name in [k for k in jobs if k.startswith(("analyze", "compared"))]:
            beyond = med[(name, temp)] - med["demo"]
            ok = "ok" if beyond <= GOAL * floor else "OVER"
            print(f"{temp}: {name} beyond the demo {beyond:.3f} s = {beyond / floor:.2f}x read+hash "
                  f"({floor:.3f} s; goal < {GOAL:g}x) {ok}")
    last = runs[("analyze", "warm")][-1]
    print(f"bursts found {last['bursts']}, bit errors {last['errors']}, checksum warnings "
          f"{last['checksum_warnings']} (expected {N_BURSTS}, -, 0)")
    for k, v in runs.items():
        label = k if isinstance(k, str) else f"{k[0]} {k[1]}"
        times = ", ".join("%.2f" % r["seconds"] for r in v)
        print(f"  {label:<26} runs {times}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
