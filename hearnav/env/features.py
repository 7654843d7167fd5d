"""Audio features of a window from its STFT: per-ear band levels, interaural level and phase differences.

The features reuse the STFT the separator works on (:func:`hearnav.separation.stft.stft`, sqrt-Hann frames),
so a step transforms the mixture once. The frames are grouped into ``n_segments`` equal time segments by the
position of their centres; a band's level is the frame-averaged power summed over the band's bins (log-spaced
bands from 100 Hz to fs/2), and interaural phase differences are the angles of the band-summed, frame-averaged
cross-spectra.
"""

from __future__ import annotations

import numpy as np

from hearnav.errors import ConfigError
from hearnav.separation.stft import n_frames, stft, stft_freqs

#: Bounds of the features (the observation space is finite; values are clipped to these).
LEVEL_DB = (-120.0, 40.0)
ILD_DB = (-60.0, 60.0)
LOW_HZ = 100.0
#: Added to band powers before the logarithm, so silence gives the lower level bound instead of -inf.
_POWER_FLOOR = 1e-12


def band_matrix(n_fft: int, fs: float, n_bands: int) -> np.ndarray:
    """(F, B) 0/1 assignment of rfft bins to log-spaced bands from 100 Hz to fs/2 (each band >= 1 bin)."""
    freqs = stft_freqs(n_fft, fs)
    edges = np.geomspace(LOW_HZ, fs / 2, n_bands + 1)
    idx = np.clip(np.searchsorted(edges, freqs, side="right") - 1, 0, n_bands - 1)
    m = np.zeros((freqs.size, n_bands), np.float32)
    m[np.arange(freqs.size), idx] = 1.0
    m[freqs < LOW_HZ] = 0.0
    for b in range(n_bands):  # a band narrower than a bin borrows the bin at its centre
        if not m[:, b].any():
            m[int(np.argmin(np.abs(freqs - np.sqrt(edges[b] * edges[b + 1])))), b] = 1.0
    return m


def segment_matrix(centres: np.ndarray, n: int, n_segments: int) -> np.ndarray:
    """(K, S) averaging weights of K frames, centred on sample ``centres`` of an n-sample signal, over
    ``n_segments`` equal segments: each frame belongs to the segment holding its centre (clipped to the signal),
    and each column sums to 1.

    Raises
    ------
    ConfigError
        A segment holds no frame centre.
    """
    counts = _frame_counts(centres, n, n_segments)
    if (counts == 0).any():
        most = max(k for k in range(1, n_segments + 1) if (_frame_counts(centres, n, k) > 0).all())
        raise ConfigError(f"n_segments too large for {n}-sample windows (expected at most {most} segments of one "
                          f"feature frame or more, got {n_segments}); lower n_segments or raise hop_s")
    m = np.zeros((len(centres), n_segments), np.float32)
    m[np.arange(len(centres)), _segment_of(centres, n, n_segments)] = 1.0
    return m / counts


def _segment_of(centres: np.ndarray, n: int, n_segments: int) -> np.ndarray:
    return np.clip((np.asarray(centres) * n_segments // n).astype(np.int64), 0, n_segments - 1)


def _frame_counts(centres: np.ndarray, n: int, n_segments: int) -> np.ndarray:
    return np.bincount(_segment_of(centres, n, n_segments), minlength=n_segments)


class FeatureExtractor:
    """Band features of n-sample windows on ``n_segments`` equal time segments, from STFT frames.

    The feature frames are every other frame of the separator's STFT (sqrt-Hann ``n_fft``, ``hop``): a Welch
    estimate at twice the hop, half the work for practically the same averaging. :meth:`binaural` picks them
    from the shared STFT; :meth:`mono_signal` computes the same frames of a mono signal directly.
    """

    def __init__(self, fs: float, window: int, n_bands: int, n_segments: int, n_fft: int = 512, hop: int = 128):
        self.n_fft, self.hop = n_fft, hop
        self.stride = 2 if n_fft % (2 * hop) == 0 and 2 * hop < n_fft else 1
        first = 1 if self.stride == 2 else 0  # frame 2k+1 at hop starts where frame k at 2 hop does
        self.picked = slice(first, n_frames(window, n_fft, hop), self.stride)
        starts = np.arange(n_frames(window, n_fft, hop))[self.picked] * hop - (n_fft - hop)
        self.n_picked = len(starts)
        self.bands = band_matrix(n_fft, fs, n_bands)  # (F, B)
        self.bands2 = np.repeat(self.bands, 2, axis=0)  # (2F, B): a bin's real and imaginary parts alike
        parts = np.tile(np.eye(2, dtype=np.float32), (len(self.bands), 1))  # (2F, 2): picks re, im
        self.bands_cross = np.concatenate([self.bands2 * parts[:, :1], self.bands2 * parts[:, 1:]], axis=1)  # (2F, 2B)
        self.frames = segment_matrix(starts + n_fft / 2, window, n_segments)  # (K, S)
        self.shape = (n_segments, n_bands)

    def binaural(self, spec: np.ndarray) -> np.ndarray:
        """(5, S, B) float32: left and right level (dB), ILD (dB), cos and sin of the IPD.

        Parameters
        ----------
        spec : (2, F, T) complex64 STFT of the two ears (:func:`hearnav.separation.stft.stft` at ``hop``).
        """
        v = _interleaved(spec[..., self.picked])  # (2, K, 2F): re, im, re, im, ...
        n_bands = self.shape[1]
        x = np.empty((3, *v.shape[1:]), np.float32)
        np.multiply(v, v, out=x[0:2])  # a bin's pair summed: |L|^2, |R|^2
        tf = v.view(np.complex64)
        np.multiply(tf[0], np.conj(tf[1]), out=x[2].view(np.complex64))  # L R*, interleaved
        y = self.frames.T @ x  # (3, S, 2F) frame averages
        power = y[0:2] @ self.bands2  # (2, S, B)
        cross = y[2] @ self.bands_cross  # (S, 2B): Re then Im of the band-summed L R*
        level = _level_db(power)
        re, im = cross[:, :n_bands], cross[:, n_bands:]
        mag = np.hypot(re, im)
        safe = np.where(mag > 0, mag, 1.0)
        out = np.empty((5, *power.shape[1:]), np.float32)
        np.clip(level, *LEVEL_DB, out=out[0:2])  # the ILD below is of the unclipped levels
        np.clip(level[0] - level[1], *ILD_DB, out=out[2])
        out[3] = np.where(mag > 0, re / safe, 1.0)  # cos and sin of the IPD; a zero cross-spectrum has IPD 0
        out[4] = im / safe
        return out

    def mono(self, spec: np.ndarray) -> np.ndarray:
        """(1, S, B) float32 level in dB of a mono signal from its (F, K) complex64 feature frames."""
        v = _interleaved(spec[None])
        return np.clip(_level_db((self.frames.T @ (v * v)) @ self.bands2), *LEVEL_DB).astype(np.float32)

    def mono_signal(self, y: np.ndarray) -> np.ndarray:
        """(1, S, B) float32 level in dB of a mono (n,) signal, on the feature frames."""
        return self.mono(stft(y, self.n_fft, self.hop * self.stride)[..., : self.n_picked])


def _level_db(power: np.ndarray) -> np.ndarray:
    """Band powers in dB, with the floor that maps silence to a finite value."""
    return 10 * np.log10(power + _POWER_FLOOR)


def _interleaved(spec: np.ndarray) -> np.ndarray:
    """(..., T, 2F) float32 view (or copy) of (..., F, T) complex spectra, real and imaginary parts interleaved."""
    tf = np.swapaxes(spec, -1, -2)  # a view with contiguous bins for hearnav's stft output
    if tf.dtype != np.complex64 or tf.strides[-1] != tf.itemsize:
        tf = np.ascontiguousarray(tf, dtype=np.complex64)
    return tf.view(np.float32)
