"""Audio features of a window: per-ear band energies, interaural level and phase differences.

The window is cut into ``n_segments`` equal segments; each segment's Hann-windowed periodogram is summed into
log-spaced bands. Interaural phase differences are the angles of the band-summed cross-spectra.
"""

from __future__ import annotations

import numpy as np
import scipy.fft as sfft

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

    def __init__(self, fs: float, window: int, n_bands: int, n_segments: int):
        self.seg_len = window // n_segments
        if self.seg_len < 2 * n_bands:
            from hearnav.errors import ConfigError

            raise ConfigError(f"n_segments too large for {window}-sample windows (expected segments of at least "
                              f"{2 * n_bands} samples, got {self.seg_len}); lower n_segments or n_bands")
        self.n_used = self.seg_len * n_segments
        self.bands = band_matrix(self.seg_len, fs, n_bands)
        self.win = np.hanning(self.seg_len).astype(np.float32)
        self.shape = (n_segments, n_bands)

    def _spec(self, x: np.ndarray) -> np.ndarray:
        """(..., S, F) spectra of the segments."""
        segs = np.asarray(x, np.float32)[..., : self.n_used].reshape(*np.shape(x)[:-1], self.shape[0], self.seg_len)
        return sfft.rfft(segs * self.win, axis=-1)

    def binaural(self, x: np.ndarray) -> np.ndarray:
        """(5, S, B) float32: left and right level (dB), ILD (dB), cos and sin of the IPD.

        Parameters
        ----------
        x : (2, n) the two ears.
        """
        spec = self._spec(x)
        level = 10 * np.log10((spec.real ** 2 + spec.imag ** 2) @ self.bands + 1e-12)  # (2, S, B)
        cross = (spec[0] * np.conj(spec[1])) @ self.bands
        phase = np.angle(cross)
        return np.stack([np.clip(level[0], *LEVEL_DB), np.clip(level[1], *LEVEL_DB),
                         np.clip(level[0] - level[1], *ILD_DB), np.cos(phase), np.sin(phase)]).astype(np.float32)

    def mono(self, y: np.ndarray) -> np.ndarray:
        """(1, S, B) float32 level in dB of a mono signal (n,)."""
        spec = self._spec(y)
        return np.clip(10 * np.log10((spec.real ** 2 + spec.imag ** 2) @ self.bands + 1e-12), *LEVEL_DB)[None].astype(np.float32)
