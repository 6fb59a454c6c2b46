"""Symbol decisions from the correlator outputs.

Square-law: decide tone 1 when ``|z1|^2 > |z0|^2``; optimal for equal tone
energies and orthogonal tones.

Likelihood ratio for unequal energies: with complex noise variance ``s2`` on
each branch and signal amplitudes ``g_i``, the envelope ``r_i = |z_i|`` of the
sent tone is Rician and the other Rayleigh, so the log-likelihood of "tone i
sent" is, up to a common term, ``ln I0(2 g_i r_i / s2) - g_i^2 / s2``.  The rule
picks the larger of the two.

References
----------
.. [1] J. G. Proakis and M. Salehi, *Digital Communications*, 5th ed.,
   McGraw-Hill, 2008, noncoherent detection of binary signals (from memory).
"""

from __future__ import annotations

import numpy as np
from scipy import special

__all__ = ["square_law", "likelihood_ratio", "log_i0"]


def square_law(z: np.ndarray) -> np.ndarray:
    """Tone index (uint8) per symbol: 1 where ``|z1|^2 > |z0|^2``.

    Parameters
    ----------
    z : numpy.ndarray
        (n_symbols, 2) complex correlator outputs.
    """
    p = np.abs(z) ** 2
    return (p[:, 1] > p[:, 0]).astype(np.uint8)


def log_i0(x: np.ndarray) -> np.ndarray:
    """``ln I0(x)`` without overflow (exponentially scaled Bessel function)."""
    x = np.abs(np.asarray(x, dtype=float))
    return np.log(special.i0e(x)) + x


def likelihood_ratio(z: np.ndarray, gains: tuple[float, float], noise_var_complex: float) -> np.ndarray:
    """Tone index per symbol by the noncoherent likelihood-ratio rule.

    Parameters
    ----------
    z : numpy.ndarray
        (n_symbols, 2) complex correlator outputs.
    gains : (float, float)
        Signal amplitudes g0, g1 on the branches (``sqrt`` of the symbol energy
        seen by each correlator).
    noise_var_complex : float
        ``E|n|^2`` of the noise on one complex branch (``2 x`` the variance of
        each real output).
    """
    r = np.abs(z)
    s2 = float(noise_var_complex)
    g0, g1 = (float(g) for g in gains)
    l0 = log_i0(2 * g0 * r[:, 0] / s2) - g0**2 / s2
    l1 = log_i0(2 * g1 * r[:, 1] / s2) - g1**2 / s2
    return (l1 > l0).astype(np.uint8)
