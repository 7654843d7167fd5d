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


def band_shares(n: int, fs: float) -> np.ndarray:
    """Each band's share of a white signal's energy on an ``n``-point real FFT grid.

    Returns
    -------
    (n_bands,) fractions that sum to 1.
    """
    weights = band_weights(np.fft.rfftfreq(n, 1 / fs))
    return weights @ _parseval_weights(n) / n


def band_energies(x: np.ndarray, fs: float) -> np.ndarray:
    """Energy of a signal per octave band, on the scale where a unit impulse has energy 1 in every band.

    The power spectrum is weighted by each band's crossover weight and divided by the band's share
    (:func:`band_shares`), so a white signal of energy E reads E in every band; a band-limited one reads its
    energy density in the band.

    Parameters
    ----------
    x : (..., n) samples.
    fs : sample rate in Hz.

    Returns
    -------
    (..., n_bands).
    """
    n = np.shape(x)[-1]
    power = np.abs(np.fft.rfft(x, axis=-1)) ** 2 * _parseval_weights(n) / n  # sums to sum(x ** 2)
    return power @ band_weights(np.fft.rfftfreq(n, 1 / fs)).T / band_shares(n, fs)


def _parseval_weights(n: int) -> np.ndarray:
    """(n // 2 + 1,) weights of a real FFT's bins in Parseval's sum: 1 for 0 Hz and Nyquist, else 2."""
    w = np.full(n // 2 + 1, 2.0)
    w[0] = 1.0
    if n % 2 == 0:
        w[-1] = 1.0
    return w
