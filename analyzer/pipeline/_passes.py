"""The passes over a capture: the survey (checks, DC offset, spectra, power trace; the SHA-512 in
the same pass), the band and its power trace when blind, and the DC-offset warning."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .. import acquire, survey
from ..capture import Capture, verify_sha512
from ..errors import InputError, warn
from ..parallel import fork_workers
from . import _regions
from ._results import AnalysisOptions

__all__ = ["BLOCK_SAMPLES", "QUANTUM", "DC_NEGLIGIBLE_DB", "Progress", "Scanned", "scan_capture", "warn_dc",
           "thin_spectrogram"]

#: Samples read per block in the passes over the capture (rounded up to a
#: multiple of :data:`QUANTUM` and of every frame length used).  The results do
#: not depend on it: every sum is formed per quantum, frames never straddle a
#: block, and the per-quantum sums are added up in one go at the end.  A block
#: of 2 MB (complex64) keeps a block's temporaries in cache for two workers at
#: once; much smaller blocks pay a fixed cost per block.
BLOCK_SAMPLES = 1 << 18
#: Samples per partial sum (see :mod:`analyzer.survey`).
QUANTUM = survey.QUANTUM
#: A DC offset this far below the rest of the signal (dB) is not worth a warning, however
#: significant: a nearly noiseless capture makes even a rounding-level mean "significant".
DC_NEGLIGIBLE_DB = -60.0


def _checked_survey(cap: Capture, strict: bool, **kw) -> survey.Survey:
    """The survey pass; with a SigMF checksum still to check, the file's SHA-512 formed in the same
    pass and compared (a mismatch warns, or with ``strict`` is an error, as when checked on opening)."""
    expected = getattr(cap, "sha512_unchecked", None)
    if not expected:
        return survey.survey(**kw)
    from ..capture import CaptureDigest

    # the hashing keeps one core busy: one process fewer for the pass (on two cores the pass
    # stays in this process, beside the hashing thread)
    kw["workers"] = max(1, kw.get("workers", 1) - 1)
    digest = CaptureDigest(cap.data_path, cap.sample_bytes)
    try:
        scan = survey.survey(digest=digest, **kw)
    except InputError:
        # checked on opening, a strict mismatch came before any problem the pass finds
        if strict:
            verify_sha512(cap.data_path, expected, digest.hexdigest(), strict)
        raise
    finally:
        digest.close()
    verify_sha512(cap.data_path, expected, digest.hexdigest(), strict)
    return scan

def thin_spectrogram(sg: np.ndarray, max_frames: int = 600) -> np.ndarray:
    """At most ``max_frames`` rows (block means) for the report figure: fewer rows than the
    figure's axes have pixels, so that drawing them drops none (a short burst would vanish)."""
    if sg.shape[0] <= max_frames:
        return sg
    k = int(np.ceil(sg.shape[0] / max_frames))
    n = sg.shape[0] // k
    return sg[:n * k].reshape(n, k, -1).mean(axis=1)

def _block_size(block: int | None, *frames: int) -> int:
    return survey.block_size(block, BLOCK_SAMPLES, *frames)


class Progress:
    """``progress(done, total, stage)`` over ``n_passes`` passes of ``n_samples`` each: one
    callback per pass, numbered in the order they are asked for."""

    def __init__(self, progress, n_samples: int, n_passes: int):
        self.progress, self.n_samples, self.n_passes, self.passes = progress, n_samples, n_passes, 0

    def stage(self, name: str):
        """The callback ``cb(pos, n[, stage])`` of the next pass (None without a progress callback)."""
        if self.progress is None:
            return None
        k = self.passes
        self.passes += 1
        return lambda pos, n, stage=name: self.progress(k * self.n_samples + int(pos * self.n_samples / max(n, 1)),
                                                        self.n_passes * self.n_samples, stage)


@dataclass(frozen=True)
class Scanned:
    """The passes over the capture: the survey, and the power trace in the band found."""

    scan: survey.Survey
    band: tuple[float, float]
    spec: survey.TraceSpec
    trace: object                  # the survey's (or the second pass's) power trace
    nfft_psd: int
    clipped_fraction: float | None


def scan_capture(cap: Capture, opts: AnalysisOptions, block, workers, strict, steps: Progress) -> Scanned:
    """The survey (checks, DC, spectra, and the power trace when the band is known from the
    hints), then, blind, the band from the spectrogram and a second pass for its power trace."""
    fs = cap.sample_rate_hz
    nfft_psd = int(min(survey.SPECTROGRAM_NFFT, 2 ** np.floor(np.log2(max(cap.n_samples, 16)))))
    rs = opts.symbol_rate_hz
    known: survey.TraceSpec | None = None
    if opts.tones_hz is not None:
        # the band to watch is known from the hints: one pass gives spectra and power trace
        f0, f1 = opts.tones_hz
        guard = rs if rs is not None else f1 - f0
        band = (f0 - guard, f1 + guard)
        known = survey.TraceSpec(band, *_regions.trace_frame(cap, band, rs))
    blk = _block_size(block, nfft_psd, survey.SPECTROGRAM_NFFT, known.frame if known else 1)
    stage = "spectrum and power" if known else "spectrum"
    scan = _checked_survey(cap, strict, read=cap.read, n_samples=cap.n_samples, sample_rate_hz=fs, block=blk,
                           nfft_psd=nfft_psd, kind=cap.kind, clip_level=getattr(cap, "clip_level", None),
                           path=cap.path, trace=known,
                           stride=survey.spectrogram_stride(cap.n_samples, every_frame=known is None),
                           progress=steps.stage(stage), stage=stage, workers=fork_workers(workers))
    if cap.n_samples == 0 or not scan.any_signal:
        raise InputError("the capture holds no signal (all samples are zero)", cap.path,
                         "check the recording chain")
    clipped_fraction = None
    if getattr(cap, "clip_level", None) is not None:
        clipped_fraction = scan.clipped / cap.n_samples
        if scan.clipped:
            warn(f"{cap.path}: {scan.clipped} samples ({100 * clipped_fraction:.3g}%) are at the converter "
                 f"limit (|I| or |Q| >= {cap.clip_level:.4g} of full scale): the capture is clipped, so "
                 "tone energies and Eb/N0 are biased; lower the receiver gain")
    if known is not None:
        return Scanned(scan, band, known, scan.trace, nfft_psd, clipped_fraction)
    sgram = scan.spectrogram
    band = acquire.occupied_band(sgram, fs, positive_only=cap.kind == "audio")
    if band is None:
        floor_db = 10 * np.log10(max(float(np.median(sgram)) * nfft_psd / nfft_psd, 1e-30)) \
            if sgram.size else float("-inf")
        raise InputError(f"no tone bursts found above the noise floor ({floor_db:.1f} dBFS per "
                         f"sample)", cap.path, "check that the capture holds a transmission, or give "
                         "--tones and --baud")
    spec = survey.TraceSpec(band, *_regions.trace_frame(cap, band, rs))
    trace = survey.trace_pass(cap.read, cap.n_samples, fs, _block_size(block, spec.frame), spec, scan.mean,
                              steps.stage("power trace"))
    return Scanned(scan, band, spec, trace, nfft_psd, clipped_fraction)


def warn_dc(cap: Capture, scan: survey.Survey) -> None:
    """Warn of a DC offset that noise and signal alone would give with a probability under
    ``survey.DC_FALSE_ALARM`` (a significance test against the spectrum near 0 Hz) and that is
    large enough to matter: a mean 60 dB or more below the signal changes no figure."""
    dc_power = abs(scan.mean) ** 2
    ac_power = max(scan.power - dc_power, 0.0)
    _, dc_p = survey.dc_offset_test(scan.mean, cap.n_samples, scan.freqs, scan.psd, real=cap.kind == "audio")
    rel = 10 * np.log10(dc_power / ac_power) if ac_power > 0 and dc_power > 0 else float("inf")
    if dc_power > 0 and dc_p < survey.DC_FALSE_ALARM and rel > DC_NEGLIGIBLE_DB:
        level = (f"mean sample value {scan.mean.real:.4g} of full scale" if cap.kind == "audio" else
                 f"I {scan.mean.real:.4g}, Q {scan.mean.imag:.4g} of full scale")
        warn(f"{cap.path}: DC offset of {10 * np.log10(dc_power):.1f} dBFS "
             f"({level}, {rel:.1f} dB against the rest of the signal); removed before analysis")
