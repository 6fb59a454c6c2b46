"""Accuracy of tonepair's estimates on the signals radios emit, with hints and blind.

For every cell of phase model (continuous, random) x frequency pulse
(rectangular, Gaussian BT 0.5, Gaussian BT 0.3) x Eb/N0 (4, 7, 10, 14, 20,
30 dB) the script synthesises ``--captures`` independent captures (one burst of
``--symbols`` symbols, 2400 Bd at 48 kS/s, tones -2400/+2400 Hz, a 60 Hz
transmitter offset, a fractional start that differs per capture, 0 ... 0.96
samples past 800.3), analyses
each with the hints (``--tones -2400,2400 --baud 2400``) and without, and
prints per cell:

* bursts found as one burst of the right length, and edges misplaced (the
  share of captures whose symbol count is off) beside the optimum: the error
  probability of the one-symbol presence test at that Eb/N0, twice (two
  edges) -- the likelihood-ratio test of a tone of known energy in noise,
  computed from ``scipy.stats.rice`` and ``scipy.stats.rayleigh``;
* Eb/N0 bias and spread (dB) and the share of 95% intervals that hold the
  truth (binomial 99% band for the share beside it, ``scipy.stats.binom``);
* tone bias and RMS error (% of R_s, both tones), symbol-rate bias and spread
  (ppm) and the share of its 95% intervals that hold the truth, start bias and
  spread (samples).

``--extra`` adds the receiver cases: 1200 Bd AFSK audio (1200/2200 Hz at 48 kHz)
plain, and through a receiver chain (300-3000 Hz band-pass, 75 us or 750 us
de-emphasis, -2 dB tilt), and I/Q behind a 6 kHz channel filter.

Goals (with hints): |Eb/N0 bias| <= 0.1 dB and coverage 0.90-0.99 in every
cell; tones within 0.5% of R_s at 10 dB and above.

Run:  .venv/bin/python benchmarks/accuracy.py [--captures 40] [--symbols 1500] [--extra]
      [--levels 4,7,10,14,20,30] [--workers 2]
"""

from __future__ import annotations

import argparse
import os
import time
import warnings
from multiprocessing import Pool

import numpy as np
from scipy import optimize, special, stats

from analyzer import pipeline
from analyzer.capture import ArrayCapture
from analyzer.synth import SynthParams, synthesize

FS, RS = 48000.0, 2400.0
TONES = (-2400.0, 2400.0)


def presence_error(ebn0_db: float) -> float:
    """Error probability of the likelihood-ratio presence test of one symbol of known energy.

    Envelope ``r`` of the sent tone's correlator, complex noise variance ``s2``,
    signal amplitude ``g``: the test ``ln I0(2 g r / s2) > g^2 / s2`` (equal
    priors).  Noise alone gives a Rayleigh envelope, the tone a Rice envelope
    (scipy.stats.rayleigh / rice with scale sqrt(s2/2)).
    """
    es = 10 ** (ebn0_db / 10)            # Es/N0 with s2 = N0 = 1, g^2 = Es
    g = np.sqrt(es)
    f = lambda r: np.log(special.i0e(2 * g * r)) + 2 * g * r - es
    r_star = optimize.brentq(f, 1e-9, 10 * g + 10)
    scale = np.sqrt(0.5)
    p_false = stats.rayleigh.sf(r_star, scale=scale)
    p_miss = stats.rice.cdf(r_star, g / scale, scale=scale)
    return float(p_false + p_miss)


def _one(task):
    kind, kw, hints, seed = task
    # a fractional start that differs per capture (the sample grid meets the symbols anywhere)
    p = SynthParams(**{**kw, "seed": seed, "start_offset_samples": kw["start_offset_samples"] + 0.137 * (seed % 8)})
    res = synthesize(p)
    x = res.samples
    if p.real:
        from scipy.signal import hilbert
        x = hilbert(x)
    opts = pipeline.AnalysisOptions(tuple(float(v) for v in p.tones_hz), p.symbol_rate_hz) if hints \
        else pipeline.AnalysisOptions(None, None)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        try:
            out = pipeline.analyze_capture(ArrayCapture(x, p.sample_rate_hz, kind="audio" if p.real else "iq"),
                                           opts, workers=1)
        except Exception:  # noqa: BLE001 - a capture not analysed is counted as not found
            return None
    if len(out.bursts) != 1:
        return None
    b = out.bursts[0]
    t = res.truth
    tb = t["bursts"][0]
    truth_db = t["ebn0_db"]
    lo, hi = b.stats.ebn0_db_ci95
    rs = p.symbol_rate_hz
    return dict(eb=b.stats.ebn0_db - truth_db, cov=bool(lo <= truth_db <= hi),
                tone=(np.array(b.tones_hz) - np.array(t["tones_hz"])) / rs * 100,
                rate=(b.symbol_rate_hz / tb["symbol_rate_hz"] - 1) * 1e6,
                rcov=b.symbol_rate_ci95_hz is not None
                and b.symbol_rate_ci95_hz[0] <= tb["symbol_rate_hz"] <= b.symbol_rate_ci95_hz[1],
                start=b.grid.first_start - tb["start_sample"], edges=b.n_symbols != tb["n_symbols"])


def _cell(pool, name, kw, level, hints, captures, base_seed):
    kw = {**kw, "ebn0_db": level}
    got = pool.map(_one, [(name, kw, hints, base_seed + s) for s in range(captures)])
    ok = [g for g in got if g is not None]
    n = len(ok)
    if n < 2:
        return f"{name:<22} {level:5.0f} {'hints' if hints else 'blind':>6} {n:>3}/{captures}  (too few found)"
    e = np.array([g["eb"] for g in ok])
    cov = np.mean([g["cov"] for g in ok])
    band = stats.binom.ppf([0.005, 0.995], n, 0.95) / n
    tone = np.array([g["tone"] for g in ok])
    rate = np.array([g["rate"] for g in ok])
    rcov = np.mean([g["rcov"] for g in ok])
    start = np.array([g["start"] for g in ok])
    edges = np.mean([g["edges"] for g in ok])
    return (f"{name:<22} {level:5.0f} {'hints' if hints else 'blind':>6} {n:>3}/{captures} "
            f"{edges:6.2f} {min(2 * presence_error(level), 1):6.3f} "
            f"{e.mean():+7.3f} {e.std(ddof=1):6.3f} {cov:5.2f} [{band[0]:.2f},{band[1]:.2f}] "
            f"{tone.mean():+6.2f} {np.sqrt(np.mean(tone ** 2)):5.2f} "
            f"{rate.mean():+7.1f} {rate.std(ddof=1):6.1f} {rcov:5.2f} {start.mean():+6.2f} {start.std(ddof=1):5.2f}")


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--captures", type=int, default=40)
    ap.add_argument("--symbols", type=int, default=1500)
    ap.add_argument("--levels", type=str, default="4,7,10,14,20,30")
    ap.add_argument("--workers", type=int, default=os.cpu_count() or 1)
    ap.add_argument("--extra", action="store_true", help="also the receiver-audio and channel-filter cases")
    ap.add_argument("--no-blind", action="store_true", help="hints only")
    args = ap.parse_args()
    levels = [float(v) for v in args.levels.split(",")]
    base = dict(tones_hz=TONES, symbol_rate_hz=RS, sample_rate_hz=FS, centre_offset_hz=60.0,
                symbols_per_burst=args.symbols, start_offset_samples=800.3)
    cases = []
    for phase in ("continuous", "random"):
        for pulse, extra in (("rect", {}), ("gauss0.5", dict(pulse="gaussian", bt=0.5)),
                             ("gauss0.3", dict(pulse="gaussian", bt=0.3))):
            cases.append((f"{phase[:4]} {pulse}", {**base, **extra, "continuous_phase": phase == "continuous"}))
    if args.extra:
        audio = dict(real=True, tones_hz=(1200.0, 2200.0), symbol_rate_hz=1200.0, sample_rate_hz=FS,
                     symbols_per_burst=args.symbols, start_offset_samples=800.3)
        cases += [("audio 1200 Bd", audio),
                  ("audio chain 75us", {**audio, "receiver_audio": True, "deemphasis_us": 75.0, "tilt_db": -2.0}),
                  ("audio chain 750us", {**audio, "receiver_audio": True, "deemphasis_us": 750.0, "tilt_db": -2.0}),
                  ("cont rect filt 6k", {**base, "channel_filter_hz": 6000.0})]
    print(f"{args.captures} captures a cell, {args.symbols} symbols; truth from the generator")
    head = ("case", "Eb/N0", "mode", "found", "edges", "optim", "bias", "sd", "cov", "99% band",
            "tone b", "rms", "rate b", "sd", "cov", "start", "sd")
    print(f"{head[0]:<22} {head[1]:>5} {head[2]:>6} {head[3]:>6} {head[4]:>6} {head[5]:>6} {head[6]:>7} "
          f"{head[7]:>6} {head[8]:>5} {head[9]:>11} {head[10]:>6} {head[11]:>5} {head[12]:>7} {head[13]:>6} "
          f"{head[14]:>5} {head[15]:>6} {head[16]:>5}")
    print(f"{'':<22} {'dB':>5} {'':>6} {'':>6} {'share':>6} {'share':>6} {'dB':>7} {'dB':>6} {'':>5} {'':>11} "
          f"{'%R_s':>6} {'%R_s':>5} {'ppm':>7} {'ppm':>6} {'':>5} {'samp':>6} {'samp':>5}")
    t0 = time.time()
    with Pool(args.workers) as pool:
        for name, kw in cases:
            for level in levels:
                for hints in ((True,) if args.no_blind else (True, False)):
                    print(_cell(pool, name, kw, level, hints, args.captures, 1000), flush=True)
    print(f"({time.time() - t0:.0f} s)")


if __name__ == "__main__":
    main()
