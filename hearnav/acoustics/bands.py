"""Octave-band crossover weights on a frequency axis.

Band b is centred at 125 * 2**b Hz (b = 0..6). Neighbouring bands cross over with cos^2 / sin^2 weights in
log2-frequency, so the weights sum to one at every frequency (amplitude complementary): a path whose damping
is equal in every band passes unchanged. Their square roots are power complementary, for shaping noise.
"""

from __future__ import annotations

import numpy as np

from hearnav.scene.materials import BAND_CENTERS_HZ


def band_weights(freqs: np.ndarray) -> np.ndarray:
    """Amplitude-complementary octave-band weights.

    Parameters
    ----------
    freqs : (F,) frequencies in Hz, >= 0.

    Returns
    -------
    (n_bands, F) weights in [0, 1] that sum to 1 over bands at every frequency.
    """
    n = len(BAND_CENTERS_HZ)
    x = np.log2(np.maximum(np.asarray(freqs, dtype=float), 1e-6) / BAND_CENTERS_HZ[0])
    x = np.clip(x, 0.0, n - 1.0)
    b = np.arange(n)[:, None]
    t = x[None, :] - b
    return np.where(np.abs(t) < 1.0, np.cos(np.pi / 2 * t) ** 2, 0.0)


def interpolate_bands(values: np.ndarray, freqs: np.ndarray) -> np.ndarray:
    """Per-band values spread over frequency with the crossover weights.

    Parameters
    ----------
    values : (..., n_bands).
    freqs : (F,) Hz.

    Returns
    -------
    (..., F).
    """
    return np.asarray(values) @ band_weights(freqs)
