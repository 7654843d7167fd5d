"""Vowel formant targets and a time-varying cascade of formant resonators."""

from __future__ import annotations

import numpy as np
import scipy.signal

from hearnav.sounds.dsp import ALIAS_LIMIT

#: F1-F3 in Hz of ten American English vowels, average adult male speakers
#: (Peterson & Barney, JASA 1952, table II [from memory]).
VOWELS: dict[str, tuple[float, float, float]] = {
    "iy": (270.0, 2290.0, 3010.0),
    "ih": (390.0, 1990.0, 2550.0),
    "eh": (530.0, 1840.0, 2480.0),
    "ae": (660.0, 1720.0, 2410.0),
    "ah": (520.0, 1190.0, 2390.0),
    "aa": (730.0, 1090.0, 2440.0),
    "ao": (570.0, 840.0, 2410.0),
    "uh": (440.0, 1020.0, 2240.0),
    "uw": (300.0, 870.0, 2240.0),
    "er": (490.0, 1350.0, 1690.0),
}
#: F4 in Hz for a 17.5 cm tract: the 4th quarter-wave resonance 7c / 4L with c = 350 m/s (textbook
#: uniform-tube model).
F4_HZ = 3500.0
#: Formant bandwidths in Hz for F1-F4 (common practice: typical values used in cascade synthesis).
BANDWIDTHS_HZ: tuple[float, ...] = (80.0, 100.0, 150.0, 250.0)


def vowel_table() -> np.ndarray:
    """Formant targets F1-F4 of every vowel in :data:`VOWELS`.

    Returns
    -------
    numpy.ndarray, shape (n_vowels, 4)
        Frequencies in Hz, in the order of :data:`VOWELS`.
    """
    f123 = np.array(list(VOWELS.values()))
    return np.column_stack([f123, np.full(len(f123), F4_HZ)])


def resonator_sos(freq_hz: np.ndarray, bw_hz: np.ndarray, fs: float) -> np.ndarray:
    """Second-order sections of digital resonators with unity gain at 0 Hz.

    Each resonator is ``y[n] = A x[n] + B y[n-1] + C y[n-2]`` with ``C = -exp(-2 pi bw / fs)``,
    ``B = 2 exp(-pi bw / fs) cos(2 pi f / fs)`` and ``A = 1 - B - C`` (Klatt, JASA 1980 [from memory]).
    A resonator whose frequency lies above :data:`~hearnav.sounds.dsp.ALIAS_LIMIT` times ``fs`` is
    replaced by a pass-through section.

    Parameters
    ----------
    freq_hz, bw_hz : numpy.ndarray, shape (m, k)
        Centre frequency and bandwidth of ``k`` resonators in each of ``m`` frames.
    fs : float

    Returns
    -------
    numpy.ndarray, shape (m, k, 6)
        ``[b0, b1, b2, a0, a1, a2]`` per section, as :func:`scipy.signal.sosfilt` expects.
    """
    radius = np.exp(-np.pi * bw_hz / fs)
    b = 2.0 * radius * np.cos(2.0 * np.pi * freq_hz / fs)
    c = -radius**2
    sos = np.zeros((*freq_hz.shape, 6))
    sos[..., 0] = 1.0 - b - c
    sos[..., 3] = 1.0
    sos[..., 4] = -b
    sos[..., 5] = -c
    bypass = freq_hz > ALIAS_LIMIT * fs
    sos[bypass] = (1.0, 0.0, 0.0, 1.0, 0.0, 0.0)
    return sos


def time_varying_filter(x: np.ndarray, sos_frames: np.ndarray, frame: int) -> np.ndarray:
    """Filter ``x`` frame by frame with per-frame sections, carrying the filter state across frames.

    Parameters
    ----------
    x : numpy.ndarray, shape (n,)
    sos_frames : numpy.ndarray, shape (m, k, 6)
        Sections of frame ``i``, used for samples ``i * frame`` to ``(i + 1) * frame``;
        ``m >= ceil(n / frame)``.
    frame : int
        Frame length in samples.

    Returns
    -------
    numpy.ndarray, shape (n,)
    """
    y = np.empty_like(x)
    state = np.zeros((sos_frames.shape[1], 2))
    for i, start in enumerate(range(0, x.size, frame)):
        stop = start + frame
        y[start:stop], state = scipy.signal.sosfilt(sos_frames[i], x[start:stop], zi=state)
    return y
