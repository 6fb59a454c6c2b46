"""The result types of an analysis: options, one burst, the pooled summary, the whole capture."""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from .. import branches, diagnostics, errorcount, estimate, theory
from ..capture import Capture

__all__ = ["AnalysisOptions", "BerCount", "BurstResult", "Summary", "AnalysisResult"]


@dataclass(frozen=True)
class AnalysisOptions:
    """What the user told us about the link.

    Attributes
    ----------
    tones_hz : (float, float) or None
        Nominal tones (hints), Hz.
    symbol_rate_hz : float or None
        Nominal symbol rate (hint), Hz.
    reference : str
        ``"auto"``, ``"none"``, ``"frames"`` (HDLC frames with a valid FCS), an O.150
        name (``"PN9"``...) or ``"bits:FILE"``.
    decision : str
        ``"square-law"`` (default) or ``"likelihood"`` (unequal-energy rule).
    """

    tones_hz: tuple[float, float] | None = None
    symbol_rate_hz: float | None = None
    reference: str = "auto"
    decision: str = "square-law"


@dataclass(frozen=True)
class BerCount:
    """Bit errors against the reference, with the Clopper-Pearson 95% interval."""

    reference: str
    bits: int
    errors: int
    rate: float
    ci95: tuple[float, float]
    slips: int
    tone_for_one: str          # "high" or "low": which tone carries a ONE of the pattern


@dataclass(frozen=True)
class BurstResult:
    """Everything measured on one burst."""

    index: int
    grid: branches.SymbolGrid
    tones_hz: tuple[float, float]
    symbol_rate_hz: float
    timing_quality: float
    outputs: branches.BranchOutputs
    decisions: np.ndarray
    sent: np.ndarray                 # tone index used for the statistics (known or decided)
    stats: estimate.BranchStats
    moments: estimate.GroupMoments
    rho: complex
    ber: BerCount | None
    ber_theory: float
    theory_model: theory.LinkModel
    loss: theory.LossEstimate | None
    power_dbfs: float
    nominal_tones_hz: tuple[float, float] | None
    checks: tuple[diagnostics.ModelCheck, ...] = ()
    trend: diagnostics.Trend | None = None
    loss_parts: theory.LossParts | None = None
    blind_ber: tuple[float, tuple[float, float]] | None = None
    phase_continuity: float = float("nan")
    decision_gain: theory.DecisionGain | None = None
    pulse: diagnostics.PulseShape | None = None
    leakage: diagnostics.Leakage | None = None
    noise_correlation: diagnostics.NoiseCorrelation | None = None
    output_correlation: np.ndarray | None = None      # (2, 4, 4), see diagnostics.output_correlations
    energy: estimate.EnergySums | None = None    # sums behind the physical Eb/N0 (pooled in the summary)
    frames: errorcount.FrameCount | None = None           # HDLC frames, when they are the reference
    frame_theory: errorcount.FrameTheory | None = None
    ber_reason: str | None = None                     # why no bit errors were counted (None when they were)
    keying: str | None = None         # "continuous-phase" / "phase-discontinuous" (estimate.keying_name), None: unknown
    nominal_template_loss_db: float | None = None     # templates at the nominal tones (None without --tones)
    symbol_rate_ci95_hz: tuple[float, float] | None = None   # acquire.measured_rate (None: too short)

    @property
    def n_symbols(self) -> int:
        return self.grid.n_symbols

    @property
    def centre_offset_hz(self) -> float:
        """Mean of the two measured tones minus the nominal centre (0 when no hints)."""
        mid = 0.5 * (self.tones_hz[0] + self.tones_hz[1])
        if self.nominal_tones_hz is None:
            return float(mid)
        return float(mid - 0.5 * (self.nominal_tones_hz[0] + self.nominal_tones_hz[1]))

    @property
    def deviation_hz(self) -> float:
        """Half the measured tone spacing."""
        return 0.5 * (self.tones_hz[1] - self.tones_hz[0])


@dataclass(frozen=True)
class Summary:
    """All bursts pooled."""

    stats: estimate.BranchStats | None
    ber: BerCount | None
    ber_theory: float
    loss: theory.LossEstimate | None
    frames: errorcount.FrameCount | None = None
    frame_theory: errorcount.FrameTheory | None = None
    ber_reason: str | None = None      # why no bit errors were counted in any burst


@dataclass(frozen=True)
class AnalysisResult:
    """The outcome of analysing one capture."""

    capture: Capture
    options: AnalysisOptions
    bursts: tuple[BurstResult, ...]
    summary: Summary
    noise_floor_dbfs: float
    spectrum_hz: np.ndarray
    spectrum_db: np.ndarray
    warnings: tuple[str, ...] = field(default_factory=tuple)
    spectrogram: np.ndarray | None = None      # (frames, cells) power, thinned for figures
    spectrogram_frame: int = 1024              # samples per spectrogram frame before thinning
    band_hz: tuple[float, float] | None = None
    dc_offset: complex = 0j               # mean of the samples, removed before analysis (full scale)
    clipped_fraction: float | None = None  # share of samples at the converter limit (integer formats)

    @property
    def dc_offset_dbfs(self) -> float:
        """Power of the removed DC offset, dB relative to full scale."""
        p = abs(self.dc_offset) ** 2
        return float(10 * np.log10(p)) if p > 0 else float("-inf")

