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
        self._low = np.array([LEVEL_DB[0], LEVEL_DB[0], ILD_DB[0]], np.float32)[:, None, None]  # clip of rows 0-2
        self._high = np.array([LEVEL_DB[1], LEVEL_DB[1], ILD_DB[1]], np.float32)[:, None, None]
        # Each segment's frames go to a slot of equal width (empty slots stay zero), so one reshaped sum
        # averages them all: numpy sums a reshaped axis far faster than it multiplies by a (K, S) matrix.
        seg = _segment_of(starts + n_fft / 2, window, n_segments)
        counts = np.bincount(seg, minlength=n_segments)
        self._width = int(counts.max())
        first_of = np.concatenate([[0], np.cumsum(counts)[:-1]])
        self._slots = seg * self._width + np.arange(len(seg)) - first_of[seg]  # (K,) slot of each picked frame
        self._inverse_counts = (1.0 / counts).astype(np.float32)[:, None]  # (S, 1)
        self._spare = np.setdiff1d(np.arange(n_segments * self._width), self._slots)  # slots no frame fills

    def binaural(self, spec: np.ndarray) -> np.ndarray:
        """(5, S, B) float32: left and right level (dB), ILD (dB), cos and sin of the IPD.

        Parameters
        ----------
        spec : (2, F, T) complex64 STFT of the two ears (:func:`hearnav.separation.stft.stft` at ``hop``).
        """
        return self.observe(spec)[0]

    def observe(self, ears: np.ndarray, *monos: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """:meth:`binaural` of the ears and :meth:`mono` of each mono spectrum, in one pass.

        Parameters
        ----------
        ears : (2, F, T) complex STFT of the two ears at ``hop``.
        monos : (F, T) complex STFTs at ``hop`` of mono signals (the separator's estimate).

        Returns
        -------
        (5, S, B) float32 binaural features and (len(monos), S, B) float32 levels in dB.
        """
        n = 2 + len(monos)
        v = self._empty_slots(n, ears.shape[-2])  # (n, S * width, 2F): re, im, re, im, ...
        cv = v.view(np.complex64)
        cv[0:2, self._slots] = np.swapaxes(ears[..., self.picked], -1, -2)
        for i, mono in enumerate(monos):
            cv[2 + i, self._slots] = mono[..., self.picked].T
        x = np.empty((n + 1, *v.shape[1:]), np.float32)
        np.multiply(v, v, out=x[:n])  # a bin's pair summed later: |L|^2, |R|^2, |E|^2
        np.multiply(cv[0], np.conj(cv[1]), out=x[n].view(np.complex64))  # L R*, interleaved
        y = self._band_means(x)  # (n + 1, S, 2B): re-part and im-part band sums, frame-averaged
        n_seg, n_bands = self.shape
        levels = self._band_levels(y[:n])  # (n, S, B), unclipped
        out = np.empty((5, n_seg, n_bands), np.float32)
        np.subtract(levels[0], levels[1], out=out[2])  # the ILD is of the unclipped levels
        out[0:2] = levels[0:2]
        _clip(out[0:3], self._low, self._high)
        cross = y[n].reshape(n_seg, 2, n_bands).transpose(1, 0, 2)  # (2, S, B): Re, Im of the band-summed L R*
        mag = np.hypot(cross[0], cross[1])
        silent = mag == 0  # a zero cross-spectrum has IPD 0: cos 1, sin 0
        mag += silent
        np.divide(cross, mag, out=out[3:5])  # cos and sin of the IPD
        out[3] += silent
        return out, _clip(levels[2:], *LEVEL_DB)

    def mono(self, spec: np.ndarray) -> np.ndarray:
        """(1, S, B) float32 level in dB of a mono signal from its (F, T) complex STFT at ``hop``."""
        return self._mono_levels(spec, self.picked)

    def mono_signal(self, y: np.ndarray) -> np.ndarray:
        """(1, S, B) float32 level in dB of a mono (n,) signal, on the feature frames (transformed directly at
        the feature hop)."""
        spec = stft(np.asarray(y, np.float32), self.n_fft, self.hop * self.stride)
        return self._mono_levels(spec, slice(0, self.n_picked))

    def _mono_levels(self, spec: np.ndarray, frames: slice) -> np.ndarray:
        """(1, S, B) float32 level in dB from the feature frames ``frames`` of an (F, T) complex STFT."""
        v = self._empty_slots(1, spec.shape[-2])
        v.view(np.complex64)[0, self._slots] = spec[:, frames].T
        return _clip(self._band_levels(self._band_means(v * v)).astype(np.float32), *LEVEL_DB)

    def _band_levels(self, y: np.ndarray) -> np.ndarray:
        """(C, S, B) unclipped levels in dB of (C, S, 2B) :meth:`_band_means` of powers (re and im parts summed)."""
        n_bands = self.shape[1]
        return _level_db(y[..., :n_bands] + y[..., n_bands:])

    def _empty_slots(self, channels: int, n_bins: int) -> np.ndarray:
        """(channels, S * width, 2 n_bins) float32 slots for feature frames, real and imaginary parts
        interleaved: frame k of the picked frames goes to slot ``_slots[k]``; the slots left over are zero, the
        others are left for the caller to fill."""
        out = np.empty((channels, self._slots[-1] + 1, 2 * n_bins), np.float32)
        out[:, self._spare] = 0.0
        return out

    def _band_means(self, x: np.ndarray) -> np.ndarray:
        """(C, S, 2B) frame-averaged band sums of (C, S * width, 2F) slotted powers, real-part bins in the first
        B columns and imaginary-part bins in the last B."""
        c, _, n = x.shape
        sums = x.reshape(c, -1, self._width, n).sum(axis=2)  # (C, S, 2F)
        return (sums.reshape(-1, n) @ self.bands_cross).reshape(c, -1, self.bands_cross.shape[1]) * \
            self._inverse_counts


def _clip(x: np.ndarray, low: float | np.ndarray, high: float | np.ndarray) -> np.ndarray:
    """Clip ``x`` to [low, high] in place (two ufunc calls: numpy's clip is slower on small arrays)."""
    np.maximum(x, low, out=x)
    return np.minimum(x, high, out=x)


def _level_db(power: np.ndarray, out: np.ndarray | None = None) -> np.ndarray:
    """Band powers in dB, with the floor that maps silence to a finite value (``power`` is overwritten)."""
    power += _POWER_FLOOR
    out = np.log10(power, out=out)
    out *= 10
    return out
