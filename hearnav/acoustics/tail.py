"""Late reverberation: decorrelated binaural noise shaped by ray-traced energy envelopes.

Each octave band's tail is white Gaussian noise filtered by the square root of that band's crossover
weight (power complementary, so the band shares add up to the noise's energy) and scaled by the square
root of the band's energy envelope. Both ears get independent noise: the late field is diffuse. The energy
of each histogram bin is kept: a bin of energy E becomes samples whose squares sum to about E times the
band's share of the spectrum, as in pyroomacoustics' own tail synthesis.
"""

from __future__ import annotations

import numpy as np
import scipy.fft as sfft

from hearnav.acoustics.bands import band_weights


def smooth_histogram(hist: np.ndarray) -> np.ndarray:
    """Light [1/4, 1/2, 1/4] smoothing over time bins, to tame ray-count noise.

    Parameters
    ----------
    hist : (..., n_bins) energies.
    """
    padded = np.concatenate([hist[..., :1], hist, hist[..., -1:]], axis=-1)
    return 0.25 * padded[..., :-2] + 0.5 * padded[..., 1:-1] + 0.25 * padded[..., 2:]


def envelope(hist: np.ndarray, bin_samples: int, length: int, shift: np.ndarray) -> np.ndarray:
    """Per-sample energy density from binned energies, linearly interpolated between bin centres.

    Parameters
    ----------
    hist : (Q, B, n_bins) energy per bin.
    bin_samples : samples per bin.
    length : output samples.
    shift : (Q,) delay in samples applied to each envelope (a later arrival at the listener than at the probe).

    Returns
    -------
    (Q, B, length) energy per sample.
    """
    n_bins = hist.shape[-1]
    centres = (np.arange(n_bins) + 0.5) * bin_samples
    t = np.arange(length)[None, :] - np.asarray(shift, float)[:, None]  # (Q, length)
    pos = np.clip(t / bin_samples - 0.5, 0, n_bins - 1)
    i0 = np.floor(pos).astype(np.int64)
    i1 = np.minimum(i0 + 1, n_bins - 1)
    w = (pos - i0)[:, None, :]
    q = np.arange(hist.shape[0])[:, None, None]
    b = np.arange(hist.shape[1])[None, :, None]
    e = (1 - w) * hist[q, b, i0[:, None, :]] + w * hist[q, b, i1[:, None, :]]
    e[np.broadcast_to((t < 0)[:, None, :] | (t > centres[-1] + bin_samples / 2)[:, None, :], e.shape)] = 0.0
    return e / bin_samples


def binaural_tails(hist: np.ndarray, bin_samples: int, length: int, shift: np.ndarray, fs: int,
                   rng: np.random.Generator, air_loss: np.ndarray | None = None) -> np.ndarray:
    """Independent left/right tails for many (receiver, source) pairs.

    Parameters
    ----------
    hist : (Q, B, n_bins) energy per bin of each pair.
    shift : (Q,) envelope delay in samples.
    air_loss : (B,) energy attenuation per sample of travel time (air coefficient * c / fs), or None.

    Returns
    -------
    (Q, 2, length) float32.
    """
    q, n_b = hist.shape[:2]
    n_fft = sfft.next_fast_len(length, real=True)
    noise = rng.standard_normal((q, 2, n_fft))
    shaping = np.sqrt(band_weights(sfft.rfftfreq(n_fft, 1 / fs)))  # (B, F)
    bands = sfft.irfft(sfft.rfft(noise, axis=-1)[:, :, None, :] * shaping, n_fft, axis=-1)[..., :length]
    energy = envelope(hist, bin_samples, length, shift)  # (Q, B, length)
    if air_loss is not None:
        energy = energy * np.exp(-np.asarray(air_loss)[:, None] * np.arange(length))
    env = np.sqrt(energy)
    return np.einsum("qebn,qbn->qen", bands, env).astype(np.float32)
