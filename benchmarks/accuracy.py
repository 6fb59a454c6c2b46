"""Accuracy of the blind estimates against their bounds, over Eb/N0 0-20 dB.

For each Eb/N0 the script synthesises ``--seeds`` captures (one burst of
``--symbols`` symbols, 5 kBd at 80 kS/s, random phase per symbol, 0.1 R_s centre
offset, fractional start), analyses each with no hints, and prints the bias and
the spread (standard deviation) of

* each tone (fraction of R_s),
* the symbol rate (ppm),
* the first-symbol instant (samples),
* Eb/N0 (dB),

beside the bound used for each:

* tones: Cramer-Rao bound for the frequency of a tone of unknown phase measured
  symbol by symbol (Rife & Boorstyn, IEEE Trans. Inf. Theory 20(5), 1974 -- from
  memory): var(f)/R_s^2 = 6 L^2 / (4 pi^2 K Es/N0 (L^2 - 1)) for K symbols of that
  tone, L samples each;
* timing: hard keying sampled at whole samples cannot place a start within one
  sample, so the floor is the quantisation spread 1/sqrt(12) sample (a limit of
  the signal model, not a Cramer-Rao bound); the symbol-rate floor is that spread
  carried through a straight-line fit over the ~K/2 tone changes of the burst;
* Eb/N0: Cramer-Rao bound for data-aided SNR estimation on complex samples,
  var(rho) = rho (2 + rho) / N for N symbols (Pauluzzi & Beaulieu, IEEE Trans.
  Commun. 48(10), 2000 -- from memory), mapped to dB.

Run:  .venv/bin/python benchmarks/accuracy.py [--seeds 12] [--symbols 2000]
"""

from __future__ import annotations

import argparse
import time

import numpy as np

from analyzer import pipeline
from analyzer.capture import ArrayCapture
from analyzer.synth import SynthParams, synthesize

FS, RS = 80000.0, 5000.0


def bounds(ebn0_db: float, k: int) -> dict:
    es = 10 ** (ebn0_db / 10)
    L = FS / RS
    tone = np.sqrt(6 * L**2 / (4 * np.pi**2 * (k / 2) * es * (L**2 - 1)))
    t_q = 1 / np.sqrt(12)
    n_tr = k / 2
    slope_sd = t_q * np.sqrt(12.0 / n_tr) / (k * L)            # relative period error
    ebn0_sd = 10 / np.log(10) * np.sqrt(es * (2 + es) / k) / es
    return {"tone": tone, "rate_ppm": slope_sd * 1e6, "start": t_q, "ebn0": ebn0_sd}


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--seeds", type=int, default=12)
    ap.add_argument("--symbols", type=int, default=2000)
    ap.add_argument("--ebn0", type=str, default="0,4,8,12,16,20")
    args = ap.parse_args()
    levels = [float(v) for v in args.ebn0.split(",")]
    print(f"blind estimates, {args.symbols} symbols, {args.seeds} seeds per level, 5 kBd at 80 kS/s")
    head = ("Eb/N0", "found", "tone bias", "tone sd", "tone CRB", "rate bias", "rate sd", "rate floor",
            "start bias", "start sd", "start floor", "Eb/N0 bias", "Eb/N0 sd", "Eb/N0 CRB")
    print(" ".join(f"{h:>11}" for h in head))
    print(" ".join(f"{u:>11}" for u in ("dB", "", "% R_s", "% R_s", "% R_s", "ppm", "ppm", "ppm",
                                         "samples", "samples", "samples", "dB", "dB", "dB")))
    t0 = time.time()
    for eb in levels:
        tone_err, rate_err, start_err, eb_err = [], [], [], []
        found = 0
        for s in range(args.seeds):
            p = SynthParams(continuous_phase=False,
                            ebn0_db=eb, symbols_per_burst=args.symbols, centre_offset_hz=0.1 * RS,
                            start_offset_samples=1500.0 + 0.37 * s, seed=1000 + s)
            res = synthesize(p)
            try:
                out = pipeline.analyze_capture(ArrayCapture(res.samples, FS), pipeline.AnalysisOptions(None, None))
            except Exception:  # noqa: BLE001 - a miss is counted, not fatal
                continue
            if len(out.bursts) != 1:
                continue
            found += 1
            b = out.bursts[0]
            t = res.truth["bursts"][0]
            tone_err.extend((np.array(b.tones_hz) - t["tones_hz"]) / RS)
            rate_err.append((b.symbol_rate_hz / t["symbol_rate_hz"] - 1) * 1e6)
            start_err.append(b.grid.first_start - t["start_sample"])
            eb_err.append(b.stats.ebn0_db - eb)
        bd = bounds(eb, args.symbols)

        def bs(v, scale=1.0):
            v = np.asarray(v, float) * scale
            return (np.mean(v), np.std(v, ddof=1)) if v.size > 1 else (np.nan, np.nan)

        tb, ts = bs(tone_err, 100)
        rb, rsd = bs(rate_err)
        sb, ssd = bs(start_err)
        eb_b, eb_s = bs(eb_err)
        row = (eb, f"{found}/{args.seeds}", tb, ts, 100 * bd["tone"], rb, rsd, bd["rate_ppm"], sb, ssd, bd["start"],
               eb_b, eb_s, bd["ebn0"])
        print(" ".join(f"{v:>11}" if isinstance(v, str) else f"{v:>11.3f}" for v in row), flush=True)
    print(f"({time.time() - t0:.1f} s)")


if __name__ == "__main__":
    main()
