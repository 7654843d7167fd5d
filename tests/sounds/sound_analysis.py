"""Signal analysis used by several sound tests (kept independent of the code under test)."""

from __future__ import annotations

import numpy as np
import scipy.signal


def psd(x: np.ndarray, fs: int, resolution_hz: float) -> tuple[np.ndarray, np.ndarray]:
    """Welch power spectral density with about ``resolution_hz`` bin spacing."""
    nperseg = min(x.size, int(round(fs / resolution_hz)))
    return scipy.signal.welch(x.astype(np.float64), fs, nperseg=nperseg)


def autocorr_f0(segment: np.ndarray, fs: int, f_min: float = 60.0, f_max: float = 400.0) -> float:
    """F0 of a voiced segment from the highest normalised autocorrelation peak in [1/f_max, 1/f_min].

    Autocorrelation pitch estimation (textbook method, e.g. Rabiner, IEEE TASSP 1977 [from memory]).
    The segment is low-passed at 1 kHz first so that formants do not create peaks.
    """
    sos = scipy.signal.butter(4, 1000.0, fs=fs, output="sos")
    x = scipy.signal.sosfiltfilt(sos, segment.astype(np.float64))
    x = x - x.mean()
    r = scipy.signal.correlate(x, x, mode="full", method="fft")[x.size - 1 :]
    r = r / r[0]
    lo, hi = int(fs / f_max), int(fs / f_min)
    lag = lo + int(np.argmax(r[lo : hi + 1]))
    # parabolic interpolation around the peak
    a, b, c = r[lag - 1], r[lag], r[lag + 1]
    shift = 0.5 * (a - c) / (a - 2 * b + c) if (a - 2 * b + c) != 0 else 0.0
    return fs / (lag + shift)


def frame_rms(x: np.ndarray, fs: int, frame_s: float) -> np.ndarray:
    """RMS of consecutive non-overlapping frames (the incomplete last frame is dropped)."""
    frame = int(round(frame_s * fs))
    m = x.size // frame
    return np.sqrt(np.mean(x[: m * frame].astype(np.float64).reshape(m, frame) ** 2, axis=1))
