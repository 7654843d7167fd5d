"""Audio features of a window: per-ear band energies, interaural level and phase differences."""

from __future__ import annotations

import numpy as np
import scipy.fft as sfft
from numpy.lib.stride_tricks import sliding_window_view

#: Bounds of the features (the observation space is finite; values are clipped to these).
LEVEL_DB = (-120.0, 40.0)
ILD_DB = (-60.0, 60.0)
LOW_HZ = 100.0


def band_matrix(n_fft: int, fs: float, n_bands: int) -> np.ndarray:
    """(F, B) 0/1 assignment of rfft bins to log-spaced bands from 100 Hz to fs/2 (each band >= 1 bin)."""
    freqs = sfft.rfftfreq(n_fft, 1 / fs)
    edges = np.geomspace(LOW_HZ, fs / 2, n_bands + 1)
    idx = np.clip(np.searchsorted(edges, freqs, side="right") - 1, 0, n_bands - 1)
    m = np.zeros((freqs.size, n_bands), np.float32)
    m[np.arange(freqs.size), idx] = 1.0
    m[freqs < LOW_HZ] = 0.0
    for b in range(n_bands):  # a band narrower than a bin borrows the bin at its centre
        if not m[:, b].any():
            m[int(np.argmin(np.abs(freqs - np.sqrt(edges[b] * edges[b + 1])))), b] = 1.0
    return m


class FeatureExtractor:
    """Band features of windows of a fixed length, on ``n_segments`` equal time segments."""

    def __init__(self, fs: float, window: int, n_bands: int, n_segments: int, n_fft: int = 512, hop: int = 256):
        self.n_fft, self.hop = n_fft, hop
        self.n_frames = 1 + max(0, (window - n_fft) // hop)
        if self.n_frames < n_segments:
            from hearnav.errors import ConfigError

            raise ConfigError(f"n_segments must be at most {self.n_frames} for {window}-sample windows "
                              f"(got {n_segments})")
        self.bands = band_matrix(n_fft, fs, n_bands)
        self.segments = np.array_split(np.arange(self.n_frames), n_segments)
        self.win = np.hanning(n_fft).astype(np.float32)
        self.shape = (n_segments, n_bands)

    def _spec(self, x: np.ndarray) -> np.ndarray:
        frames = sliding_window_view(np.asarray(x, np.float32), self.n_fft, axis=-1)[..., :: self.hop, :]
        return sfft.rfft(frames[..., : self.n_frames, :] * self.win, axis=-1)  # (..., T, F)

    def _segment(self, per_frame: np.ndarray) -> np.ndarray:
        """(..., T, B) -> (..., S, B) means over each segment's frames."""
        return np.stack([per_frame[..., seg, :].mean(axis=-2) for seg in self.segments], axis=-2)

    def binaural(self, x: np.ndarray) -> np.ndarray:
        """(5, S, B) float32: left and right level (dB), ILD (dB), cos and sin of the IPD.

        Parameters
        ----------
        x : (2, n) the two ears.
        """
        spec = self._spec(x)
        power = self._segment((np.abs(spec) ** 2) @ self.bands)  # (2, S, B)
        cross = self._segment((spec[0] * np.conj(spec[1])) @ self.bands)  # (S, B)
        level = 10 * np.log10(power + 1e-12)
        ild = level[0] - level[1]
        phase = np.angle(cross)
        out = np.stack([np.clip(level[0], *LEVEL_DB), np.clip(level[1], *LEVEL_DB), np.clip(ild, *ILD_DB),
                        np.cos(phase), np.sin(phase)])
        return out.astype(np.float32)

    def mono(self, y: np.ndarray) -> np.ndarray:
        """(1, S, B) float32 level in dB of a mono signal (n,)."""
        power = self._segment((np.abs(self._spec(y)) ** 2) @ self.bands)
        return np.clip(10 * np.log10(power + 1e-12), *LEVEL_DB)[None].astype(np.float32)
