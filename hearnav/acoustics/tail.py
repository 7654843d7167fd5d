"""Late reverberation: diffuse binaural noise shaped by ray-traced energy envelopes.

Each octave band's tail is its own white Gaussian noise, filtered by the square root of that band's
crossover weight and scaled by the square root of the band's energy envelope. The weights are power
complementary and the bands' noises independent, so the band powers add up: a bin of energy E becomes
samples whose squares sum to E times the band's share of the spectrum, in expectation. (Filtering one shared
noise instead would make neighbouring bands add in amplitude where they overlap: +2.1 dB.)

The two ears are a diffuse field's pressure at two points 2 a apart: a common and an independent noise are
mixed per frequency so that their coherence is sin(kd)/kd (Cook et al. 1955; mixing as Habets & Gannot
2007), and both ears carry the head-shadow filter's diffuse-field power gain. See :mod:`hearnav.physics.diffuse`.
"""

from __future__ import annotations

import functools

import numpy as np
import scipy.fft as sfft

from hearnav.acoustics.bands import band_weights
from hearnav.physics import diffuse
from hearnav.physics.head import HEAD_RADIUS


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
    t = np.arange(length)[None, :] - np.asarray(shift, float)[:, None]  # (Q, length)
    pos = np.clip(t / bin_samples - 0.5, 0, n_bins - 1)
    i0 = np.floor(pos).astype(np.int64)
    i1 = np.minimum(i0 + 1, n_bins - 1)
    w = pos - i0
    outside = (t < 0) | (t > n_bins * bin_samples)  # before the first bin's start or after the last bin's end
    e = np.empty(hist.shape[:2] + (length,))
    for q in range(hist.shape[0]):  # one gather per pair: (B, length), much lighter than one 3-D fancy index
        e[q] = hist[q][:, i0[q]] * (1 - w[q]) + hist[q][:, i1[q]] * w[q]
        e[q][:, outside[q]] = 0.0
    return e / bin_samples


def tail_filters(freqs: np.ndarray, radius: float, c: float) -> np.ndarray:
    """Frequency responses that turn two noises per band into a diffuse pair of ear signals.

    Band b's common ("mid") noise is shaped by sqrt(w_b) a(f) g(f) and its independent ("side") noise by
    sqrt(w_b) b(f) g(f): w_b are the amplitude-complementary crossover weights (so the band powers add up to
    the noise's), a and b mix the two ears to the diffuse-field coherence sin(kd)/kd of ears d = 2 radius
    apart, and g is the head's diffuse-field power gain. The left ear is mid + side, the right mid - side.

    Parameters
    ----------
    freqs : (F,) Hz.
    radius : head radius in metres.
    c : speed of sound in m/s.

    Returns
    -------
    (2, B, F) real gains, index 0 mid, 1 side.
    """
    mid, side = diffuse.coherence_mix(diffuse.diffuse_coherence(freqs, 2.0 * radius, c))
    gain = np.sqrt(diffuse.diffuse_head_gain(2 * np.pi * np.asarray(freqs, float), radius, c))
    return np.stack([mid, side])[:, None, :] * (np.sqrt(band_weights(freqs)) * gain)[None]


@functools.lru_cache(maxsize=8)
def _grid_filters(n_fft: int, fs: int, radius: float, c: float) -> np.ndarray:
    """:func:`tail_filters` on an ``n_fft``-point real FFT grid, float32, read-only; every chunk of a build shares it."""
    filters = tail_filters(sfft.rfftfreq(n_fft, 1 / fs), radius, c).astype(np.float32)
    filters.flags.writeable = False
    return filters


def binaural_tails(hist: np.ndarray, bin_samples: int, length: int, shift: np.ndarray, fs: int,
                   rng: np.random.Generator, air_loss: np.ndarray | None = None,
                   radius: float = HEAD_RADIUS, c: float = 343.0) -> np.ndarray:
    """Diffuse left/right tails for many (receiver, source) pairs.

    Every band gets its own noise, so overlapping neighbours add in power, not in amplitude; bands two apart
    do not overlap and share one noise. Each pair draws 2 x 2 noises: (mid, side) x (even, odd bands).

    Parameters
    ----------
    hist : (Q, B, n_bins) energy per bin of each pair.
    shift : (Q,) envelope delay in samples.
    air_loss : (B,) energy attenuation per sample of travel time (air coefficient * c / fs), or None.
    radius : head radius in metres (the ears are 2 radius apart).
    c : speed of sound in m/s.

    Returns
    -------
    (Q, 2, length) float32, index 0 left ear, 1 right ear.
    """
    q, n_b = hist.shape[:2]
    n_fft = sfft.next_fast_len(length, real=True)
    noise = rng.standard_normal((q, 2, 2, n_fft), dtype=np.float32)  # (pair, mid/side, band parity, time)
    filters = _grid_filters(n_fft, fs, float(radius), float(c))  # (2, B, F)
    spec = sfft.rfft(noise, axis=-1)[:, :, np.arange(n_b) % 2, :]  # (Q, 2, B, F)
    bands = sfft.irfft(spec * filters, n_fft, axis=-1)[..., :length]  # (Q, 2, B, length)
    energy = envelope(hist, bin_samples, length, shift)  # (Q, B, length)
    if air_loss is not None:
        energy = energy * np.exp(-np.asarray(air_loss)[:, None] * np.arange(length))
    env = np.sqrt(energy).astype(np.float32)
    mid_side = np.einsum("qsbn,qbn->qsn", bands, env)  # (Q, 2, length)
    return np.stack([mid_side[:, 0] + mid_side[:, 1], mid_side[:, 0] - mid_side[:, 1]], axis=1).astype(np.float32)
