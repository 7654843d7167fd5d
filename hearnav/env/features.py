"""Audio features of a window from its STFT: per-ear band levels, interaural level and phase differences.

The features reuse the STFT the separator works on (:func:`hearnav.separation.stft.stft`, sqrt-Hann frames),
so a step transforms the mixture once. The frames are grouped into ``n_segments`` equal time segments by the
position of their centres; a band's level is the frame-averaged power summed over the band's bins (log-spaced
bands from 100 Hz to fs/2), and interaural phase differences are the angles of the band-summed, frame-averaged
cross-spectra.
"""

from __future__ import annotations

import math

import numba
import numpy as np

from hearnav.errors import ConfigError
from hearnav.separation.stft import n_frames, stft, stft_freqs

#: Bounds of the features (the observation space is finite; values are clipped to these).
LEVEL_DB = (-120.0, 40.0)
ILD_DB = (-60.0, 60.0)
LOW_HZ = 100.0
#: Added to band powers before the logarithm, so silence gives the lower level bound instead of -inf.
_POWER_FLOOR = 1e-12


def band_edges(fs: float, n_bands: int) -> np.ndarray:
    """(B + 1,) edges in Hz of ``n_bands`` log-spaced bands from 100 Hz to fs/2."""
    return np.geomspace(LOW_HZ, fs / 2, n_bands + 1)


def band_matrix(n_fft: int, fs: float, n_bands: int) -> np.ndarray:
    """(F, B) 0/1 assignment of rfft bins to the bands of :func:`band_edges` (each band >= 1 bin)."""
    freqs = stft_freqs(n_fft, fs)
    edges = band_edges(fs, n_bands)
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
                          f"feature frame or more, got {n_segments}); lower n_segments or raise step_s")
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
    from the shared STFT; :meth:`mono_signal` computes the same frames of a mono signal directly. One compiled
    pass (:func:`_band_features`) reads each frame once and accumulates in double precision.
    """

    def __init__(self, fs: float, window: int, n_bands: int, n_segments: int, n_fft: int = 512, hop: int = 128):
        self.n_fft, self.hop = n_fft, hop
        self.stride = 2 if n_fft % (2 * hop) == 0 and 2 * hop < n_fft else 1
        first = 1 if self.stride == 2 else 0  # frame 2k+1 at hop starts where frame k at 2 hop does
        self.picked = slice(first, n_frames(window, n_fft, hop), self.stride)
        starts = np.arange(n_frames(window, n_fft, hop))[self.picked] * hop - (n_fft - hop)
        self.n_picked = len(starts)
        self.bands = band_matrix(n_fft, fs, n_bands)  # (F, B)
        self.frames = segment_matrix(starts + n_fft / 2, window, n_segments)  # (K, S)
        self.shape = (n_segments, n_bands)
        seg = _segment_of(starts + n_fft / 2, window, n_segments)
        self._segment = seg  # (K,) segment of each picked frame
        self._inverse_counts = 1.0 / np.bincount(seg, minlength=n_segments)  # (S,)
        bins = [np.flatnonzero(self.bands[:, b]) for b in range(n_bands)]  # the bands as lists of bins
        self._band_bins = np.concatenate(bins)
        self._band_starts = np.concatenate([[0], np.cumsum([len(b) for b in bins])])  # (B + 1,)
        self._picked_frames = np.ascontiguousarray(np.arange(n_frames(window, n_fft, hop))[self.picked])  # (K,)
        self._no_ears = np.zeros((0, 1, len(self.bands)), np.complex64)

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
        return self._features(_frame_major(np.swapaxes(ears, -1, -2)), [m.T for m in monos], self._picked_frames)

    def mono(self, spec: np.ndarray) -> np.ndarray:
        """(1, S, B) float32 level in dB of a mono signal from its (F, T) complex STFT at ``hop``."""
        return self._features(self._no_ears, [spec.T], self._picked_frames)[1]

    def mono_signal(self, y: np.ndarray) -> np.ndarray:
        """(1, S, B) float32 level in dB of a mono (n,) signal, on the feature frames (transformed directly at
        the feature hop)."""
        spec = stft(np.asarray(y, np.float32), self.n_fft, self.hop * self.stride)
        return self._features(self._no_ears, [spec.T], np.arange(self.n_picked))[1]

    def _features(self, ears: np.ndarray, monos: list[np.ndarray], frames: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """:func:`_band_features` of (2 or 0, T, F) ear frames and (T, F) mono frames on feature frames ``frames``."""
        if len(monos) == 1:
            stacked = _frame_major(monos[0])[None]
        else:
            stacked = _frame_major(np.stack(monos)) if monos else np.zeros((0, 1, ears.shape[-1]), np.complex64)
        return _band_features(ears, stacked, frames, self._segment, self._inverse_counts,
                              self._band_starts, self._band_bins, *LEVEL_DB, *ILD_DB)


def _frame_major(z: np.ndarray) -> np.ndarray:
    """``z`` as a C-contiguous complex64 array (itself when it is one already: our STFT's frames are)."""
    return z if z.dtype == np.complex64 and z.flags.c_contiguous else np.ascontiguousarray(z, np.complex64)


@numba.njit(cache=True, inline="always")
def _level_db(power):  # pragma: no cover (compiled)
    """A band power in dB, with the floor that maps silence to a finite value."""
    return 10.0 * math.log10(power + _POWER_FLOOR)


@numba.njit(cache=True, nogil=True)
def _band_features(ears, monos, frames, segment, inverse_counts, band_starts, band_bins, low, high, ild_low,
                   ild_high):  # pragma: no cover (compiled; tested through FeatureExtractor)
    """Welch band features in one pass over the feature frames.

    Parameters
    ----------
    ears : (2, T, F) complex64 frame-major ear spectra, or (0, 1, F) for none.
    monos : (M, T, F) complex64 frame-major mono spectra.
    frames : (K,) indices of the feature frames; segment : (K,) the segment of each.
    inverse_counts : (S,) 1 / frames per segment.
    band_starts, band_bins : band b holds bins ``band_bins[band_starts[b]:band_starts[b + 1]]``.
    low, high, ild_low, ild_high : clip bounds of the levels and of the ILD (dB).

    Returns
    -------
    (5, S, B) float32 left and right level, ILD, cos and sin of the IPD (zeros without ears), and (M, S, B)
    float32 mono levels. Levels are :func:`_level_db` of frame-mean band powers; the IPD is the angle of the
    band-summed, frame-averaged L R* (0 where it is zero).
    """
    n_seg, n_bands = inverse_counts.shape[0], band_starts.shape[0] - 1
    n_ears, n_mono, n_bins = ears.shape[0], monos.shape[0], monos.shape[2] if monos.shape[0] else ears.shape[2]
    acc = np.zeros((n_seg, 4 + n_mono, n_bins))  # per bin: |L|^2, |R|^2, Re L R*, Im L R*, |E_m|^2
    for k in range(frames.shape[0]):
        t, a = frames[k], acc[segment[k]]
        if n_ears:
            left, right = ears[0, t], ears[1, t]
            a0, a1, a2, a3 = a[0], a[1], a[2], a[3]
            for f in range(n_bins):
                lr, li = np.float64(left[f].real), np.float64(left[f].imag)
                rr, ri = np.float64(right[f].real), np.float64(right[f].imag)
                a0[f] += lr * lr + li * li
                a1[f] += rr * rr + ri * ri
                a2[f] += lr * rr + li * ri
                a3[f] += li * rr - lr * ri
        for m in range(n_mono):
            frame, am = monos[m, t], a[4 + m]
            for f in range(n_bins):
                er, ei = np.float64(frame[f].real), np.float64(frame[f].imag)
                am[f] += er * er + ei * ei
    out = np.zeros((5, n_seg, n_bands), np.float32)
    mono = np.empty((n_mono, n_seg, n_bands), np.float32)
    sums = np.empty(4 + n_mono)
    for s in range(n_seg):
        for b in range(n_bands):
            for c in range(sums.shape[0]):
                sums[c] = 0.0
                for j in range(band_starts[b], band_starts[b + 1]):
                    sums[c] += acc[s, c, band_bins[j]]
            for m in range(n_mono):
                mono[m, s, b] = min(max(_level_db(sums[4 + m] * inverse_counts[s]), low), high)
            if n_ears:
                left, right = _level_db(sums[0] * inverse_counts[s]), _level_db(sums[1] * inverse_counts[s])
                out[0, s, b] = min(max(left, low), high)
                out[1, s, b] = min(max(right, low), high)
                out[2, s, b] = min(max(left - right, ild_low), ild_high)  # the ILD is of the unclipped levels
                ipd = math.atan2(sums[3], sums[2] + 0.0)  # + 0.0: a real part of -0.0 gives 0, not pi
                out[3, s, b] = math.cos(ipd)
                out[4, s, b] = math.sin(ipd)
    return out, mono
