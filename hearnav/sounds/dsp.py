"""Small signal-building blocks shared by the sound generators (pure functions, float64)."""

from __future__ import annotations

from collections.abc import Callable

import numpy as np
import scipy.fft
import scipy.signal

#: Harmonics above this fraction of the sample rate are left out, to keep clear of aliasing
#: (common practice: a margin below the Nyquist frequency 0.5 fs).
ALIAS_LIMIT = 0.45


def cosine_interp(knot_t: np.ndarray, knot_v: np.ndarray, t: np.ndarray) -> np.ndarray:
    """Interpolate between knots with raised-cosine segments (smooth, zero slope at every knot).

    Parameters
    ----------
    knot_t : numpy.ndarray, shape (k,)
        Increasing knot positions.
    knot_v : numpy.ndarray, shape (k,) or (k, m)
        Values at the knots.
    t : numpy.ndarray, shape (n,)
        Positions to evaluate; outside the knots the end values are held.

    Returns
    -------
    numpy.ndarray, shape (n,) or (n, m)
    """
    knot_t = np.asarray(knot_t, dtype=float)
    knot_v = np.asarray(knot_v, dtype=float)
    if knot_t.size == 1:
        return np.broadcast_to(knot_v[0], (t.size, *knot_v.shape[1:])).copy()
    i = np.clip(np.searchsorted(knot_t, t, side="right") - 1, 0, knot_t.size - 2)
    width = np.maximum(knot_t[i + 1] - knot_t[i], 1e-12)
    frac = np.clip((t - knot_t[i]) / width, 0.0, 1.0)
    w = 0.5 - 0.5 * np.cos(np.pi * frac)
    if knot_v.ndim == 2:
        w = w[:, None]
    return knot_v[i] * (1.0 - w) + knot_v[i + 1] * w


def random_curve(rng: np.random.Generator, n: int, fs: float, rate_hz: float) -> np.ndarray:
    """A slowly varying random curve in [-1, 1]: uniform knots every ``1 / rate_hz`` s, cosine-joined.

    Returns
    -------
    numpy.ndarray, shape (n,)
    """
    duration = n / fs
    n_knots = int(np.ceil(duration * rate_hz)) + 2
    knot_t = (np.arange(n_knots) - rng.uniform(0.0, 1.0)) / rate_hz
    return cosine_interp(knot_t, rng.uniform(-1.0, 1.0, n_knots), np.arange(n) / fs)


def phase_cycles(freq_hz: np.ndarray, fs: float, start: float = 0.0) -> np.ndarray:
    """Running phase, in cycles, of an oscillator with instantaneous frequency ``freq_hz``.

    Parameters
    ----------
    freq_hz : numpy.ndarray, shape (n,)
    fs : float
    start : float
        Phase at the first sample, in cycles.

    Returns
    -------
    numpy.ndarray, shape (n,)
    """
    return start + np.concatenate(([0.0], np.cumsum(freq_hz[:-1]))) / fs


def harmonic_sum(
    phase: np.ndarray,
    amps: np.ndarray,
    freq_hz: np.ndarray | float,
    fs: float,
    decay: np.ndarray | None = None,
    offsets: np.ndarray | None = None,
) -> np.ndarray:
    """Sum of harmonics ``sum_k amps[k-1] * decay**(k-1) * sin(2 pi k phase + offsets[k-1])``, alias-free.

    Uses the Chebyshev recurrence ``sin((k+1)x) = 2 cos(x) sin(kx) - sin((k-1)x)``, so only one sine
    and one cosine are evaluated. Harmonic ``k`` is muted wherever ``k * freq_hz`` exceeds
    :data:`ALIAS_LIMIT` times ``fs``; the fundamental is always kept.

    Parameters
    ----------
    phase : numpy.ndarray, shape (n,)
        Fundamental phase in cycles.
    amps : numpy.ndarray, shape (K,)
        Amplitude of harmonics 1..K.
    freq_hz : numpy.ndarray, shape (n,), or float
        Instantaneous fundamental frequency.
    fs : float
    decay : numpy.ndarray, shape (n,), optional
        Per-sample factor applied once more for each harmonic above the first (faster decay of the
        upper harmonics, as in plucked strings).
    offsets : numpy.ndarray, shape (K,), optional
        Starting phase of each harmonic in radians (all zero if omitted).

    Returns
    -------
    numpy.ndarray, shape (n,)
    """
    x = 2.0 * np.pi * phase
    s_prev, s_k = np.zeros_like(x), np.sin(x)
    cos_x = np.cos(x)
    c_prev, c_k = np.ones_like(x), cos_x
    two_cos = 2.0 * cos_x
    freq = np.asarray(freq_hz, dtype=float)
    sin_off = np.zeros(len(amps)) if offsets is None else np.sin(offsets)
    cos_off = np.ones(len(amps)) if offsets is None else np.cos(offsets)

    def harmonic(k: int) -> np.ndarray:
        if offsets is None:
            return amps[k - 1] * s_k
        return amps[k - 1] * (cos_off[k - 1] * s_k + sin_off[k - 1] * c_k)

    out = harmonic(1)
    weight = np.ones_like(x) if decay is not None else None
    for k in range(2, len(amps) + 1):
        s_prev, s_k = s_k, two_cos * s_k - s_prev
        if offsets is not None:
            c_prev, c_k = c_k, two_cos * c_k - c_prev
        if weight is not None:
            weight = weight * decay
        if np.all(k * freq > ALIAS_LIMIT * fs):
            break
        if amps[k - 1] == 0.0:
            continue
        term = harmonic(k)
        if freq.ndim:
            term = term * (k * freq <= ALIAS_LIMIT * fs)
        if weight is not None:
            term = term * weight
        out = out + term
    return out


def shaped_noise(
    rng: np.random.Generator, n: int, fs: float, gain: Callable[[np.ndarray], np.ndarray]
) -> np.ndarray:
    """Gaussian noise whose amplitude spectrum is ``gain(f)``, scaled to unit standard deviation.

    White noise is shaped in the frequency domain (one FFT of a fast length, then cut to ``n``).

    Parameters
    ----------
    rng : numpy.random.Generator
    n : int
    fs : float
    gain : callable
        Maps frequencies in Hz, shape (m,), to amplitude gains, shape (m,).

    Returns
    -------
    numpy.ndarray, shape (n,)
    """
    m = scipy.fft.next_fast_len(max(n, 2), real=True)
    spectrum = scipy.fft.rfft(rng.standard_normal(m))
    spectrum *= gain(scipy.fft.rfftfreq(m, 1.0 / fs))
    y = scipy.fft.irfft(spectrum, m)[:n]
    std = y.std()
    return y / std if std > 0 else y


def power_law_gain(beta: float, f_low: float = 20.0) -> Callable[[np.ndarray], np.ndarray]:
    """Amplitude gain for a power spectrum proportional to ``f**-beta``, flat below ``f_low`` Hz.

    ``beta`` 0 is white, 1 pink, 2 brown (red) noise.
    """

    def gain(f: np.ndarray) -> np.ndarray:
        return np.maximum(f, f_low) ** (-beta / 2.0)

    return gain


def smooth_gate(gate: np.ndarray, ramp: int) -> np.ndarray:
    """Soften the edges of an on/off gate by convolving it with a Hann window of ``ramp`` samples.

    Parameters
    ----------
    gate : numpy.ndarray, shape (n,)
    ramp : int
        Rise time in samples (at least 1).

    Returns
    -------
    numpy.ndarray, shape (n,)
    """
    if ramp < 2:
        return gate.astype(float)
    window = np.hanning(ramp + 2)[1:-1]
    return scipy.signal.oaconvolve(gate, window / window.sum(), mode="same")


def lowpass(x: np.ndarray, fs: float, cutoff_hz: float, order: int = 2) -> np.ndarray:
    """Butterworth low-pass filter (causal).

    Parameters
    ----------
    x : numpy.ndarray, shape (n,)

    Returns
    -------
    numpy.ndarray, shape (n,)
    """
    sos = scipy.signal.butter(order, min(cutoff_hz, ALIAS_LIMIT * fs), fs=fs, output="sos")
    return scipy.signal.sosfilt(sos, x)
