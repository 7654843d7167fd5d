"""Short-time Fourier transform with a sqrt-Hann window and exact overlap-add inversion.

The same periodic sqrt-Hann window analyses and synthesises, so analysis times synthesis is a periodic Hann
window. The signal is padded with ``n_fft - hop`` zeros in front (and enough behind) that every input sample is
covered by the same number of frames, and the inverse divides by the summed squared window, so
``istft(stft(x), len(x)) == x`` to rounding for any length and any hop that divides ``n_fft``.
"""

from __future__ import annotations

from functools import lru_cache

import numpy as np
import scipy.fft as sfft
from numpy.lib.stride_tricks import sliding_window_view

from hearnav.errors import ConfigError


def check_stft_settings(n_fft: int, hop: int) -> None:
    """Raise ConfigError unless ``n_fft`` is a positive even integer and ``hop`` divides it (hop < n_fft)."""
    for name, value in (("n_fft", n_fft), ("hop", hop)):
        if isinstance(value, bool) or not isinstance(value, (int, np.integer)) or value <= 0:
            raise ConfigError(f"{name} must be a positive integer, got {value!r}")
    if n_fft % 2:
        raise ConfigError(f"n_fft must be even, got {n_fft}; use e.g. 512")
    if hop >= n_fft or n_fft % hop:
        raise ConfigError(f"hop must divide n_fft and be smaller than it, got hop={hop} for n_fft={n_fft}; use "
                          f"e.g. hop={n_fft // 4}")


@lru_cache(maxsize=16)
def sqrt_hann(n_fft: int, dtype: type = np.float64) -> np.ndarray:
    """(n_fft,) periodic sqrt-Hann window, sqrt(0.5 - 0.5 cos(2 pi k / n_fft)), in ``dtype``. Read-only."""
    w = np.sqrt(0.5 - 0.5 * np.cos(2 * np.pi * np.arange(n_fft) / n_fft)).astype(dtype)
    w.flags.writeable = False
    return w


def n_frames(n: int, n_fft: int, hop: int) -> int:
    """Number of frames :func:`stft` makes of ``n`` samples."""
    return (n_fft - hop + n - 1) // hop + 1


def stft_freqs(n_fft: int, fs: float) -> np.ndarray:
    """(n_fft // 2 + 1,) bin centre frequencies in Hz."""
    return np.arange(n_fft // 2 + 1) * (fs / n_fft)


def stft(x: np.ndarray, n_fft: int = 512, hop: int = 128) -> np.ndarray:
    """Short-time spectra of real signals.

    Parameters
    ----------
    x : (..., n) real signals, n >= 1.
    n_fft, hop : frame length and hop in samples (hop divides n_fft).

    Returns
    -------
    (..., F, T) complex spectra, F = n_fft // 2 + 1, T = :func:`n_frames` (n, n_fft, hop).
    """
    x = np.asarray(x)
    n = x.shape[-1]
    pad = n_fft - hop
    total = (n_frames(n, n_fft, hop) - 1) * hop + n_fft
    padded = np.zeros(x.shape[:-1] + (total,), dtype=np.result_type(x.dtype, np.float32))
    padded[..., pad : pad + n] = x
    frames = sliding_window_view(padded, n_fft, axis=-1)[..., ::hop, :] * sqrt_hann(n_fft, padded.dtype.type)
    return np.swapaxes(sfft.rfft(frames, axis=-1), -1, -2)


@lru_cache(maxsize=32)
def _inverse_envelope(n: int, n_fft: int, hop: int, dtype: type = np.float64) -> np.ndarray:
    """(n,) reciprocal of the summed squared window over the kept samples, in ``dtype``. Read-only."""
    frames = np.broadcast_to(sqrt_hann(n_fft) ** 2, (n_frames(n, n_fft, hop), n_fft))
    env = _overlap_add(frames, hop)[n_fft - hop : n_fft - hop + n]
    inv = (1.0 / env).astype(dtype)
    inv.flags.writeable = False
    return inv


def _overlap_add(frames: np.ndarray, hop: int) -> np.ndarray:
    """Overlap-add (..., T, n_fft) frames spaced ``hop`` apart into (..., (T - 1) hop + n_fft) samples."""
    *lead, t, n_fft = frames.shape
    k = n_fft // hop
    blocks = frames.reshape(*lead, t, k, hop)
    out = np.zeros((*lead, t + k - 1, hop), dtype=frames.dtype)
    for j in range(k):  # k = n_fft / hop (4 by default) vectorised passes, not a loop over frames
        out[..., j : j + t, :] += blocks[..., :, j, :]
    return out.reshape(*lead, (t + k - 1) * hop)


def istft(spec: np.ndarray, n: int, n_fft: int = 512, hop: int = 128) -> np.ndarray:
    """Inverse of :func:`stft`.

    Parameters
    ----------
    spec : (..., F, T) complex spectra, F = n_fft // 2 + 1, T = :func:`n_frames` (n, n_fft, hop).
    n : length of the signal to return.

    Returns
    -------
    (..., n) real signals.
    """
    frames = sfft.irfft(np.swapaxes(spec, -1, -2), n_fft, axis=-1)
    frames *= sqrt_hann(n_fft, frames.dtype.type)
    start = n_fft - hop
    return _overlap_add(frames, hop)[..., start : start + n] * _inverse_envelope(n, n_fft, hop, frames.dtype.type)
