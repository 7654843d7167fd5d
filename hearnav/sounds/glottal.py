"""Glottal excitation: a Rosenberg flow pulse train driven by a pitch contour."""

from __future__ import annotations

import numpy as np

from hearnav.sounds.dsp import phase_cycles

#: Share of the open phase spent opening; Rosenberg's natural pulses open over about 40 % and close
#: over about 16 % of the period (Rosenberg, JASA 1971 [from memory]), a ratio of about 0.71.
RISE_SHARE = 0.71


def rosenberg_flow(position: np.ndarray, rise: float, fall: float) -> np.ndarray:
    """Rosenberg glottal flow pulse (trigonometric opening and closing, then closed).

    Parameters
    ----------
    position : numpy.ndarray, shape (n,)
        Position within the period, in [0, 1).
    rise, fall : float
        Opening and closing durations as fractions of the period; ``rise + fall <= 1``.

    Returns
    -------
    numpy.ndarray, shape (n,)
        Flow in [0, 1]: ``(1 - cos(pi t / rise)) / 2`` while opening, ``cos(pi/2 (t - rise) / fall)``
        while closing, 0 while closed.
    """
    opening = 0.5 * (1.0 - np.cos(np.pi * np.minimum(position / rise, 1.0)))
    closing = np.cos(0.5 * np.pi * np.clip((position - rise) / fall, 0.0, 1.0))
    return np.where(position < rise, opening, closing)


def excitation_rms(open_quotient: float) -> float:
    """RMS over one period of the per-cycle derivative of a Rosenberg pulse (steady pitch, no shimmer)."""
    position = (np.arange(4096) + 0.5) / 4096
    flow = rosenberg_flow(position, RISE_SHARE * open_quotient, (1.0 - RISE_SHARE) * open_quotient)
    return float(np.sqrt(np.mean((np.diff(flow, append=flow[0]) * 4096) ** 2)))


def glottal_excitation(
    f0_hz: np.ndarray,
    fs: float,
    open_quotient: float,
    shimmer: float,
    rng: np.random.Generator,
) -> tuple[np.ndarray, np.ndarray]:
    """Glottal flow and its time derivative (flow derivative = excitation including lip radiation).

    Parameters
    ----------
    f0_hz : numpy.ndarray, shape (n,)
        Fundamental frequency contour, > 0.
    fs : float
    open_quotient : float
        Open part of each period, in (0, 1).
    shimmer : float
        Relative standard deviation of the period-to-period pulse amplitude.
    rng : numpy.random.Generator

    Returns
    -------
    flow, derivative : numpy.ndarray, shape (n,)
        The derivative is taken per cycle (``d flow / d phase``), so its size does not grow with F0.
    """
    phase = phase_cycles(f0_hz, fs, start=rng.uniform(0.0, 1.0))
    period = np.floor(phase).astype(np.int64)
    position = phase - period
    amplitude = 1.0 + shimmer * rng.standard_normal(int(period[-1]) + 1)
    flow = rosenberg_flow(position, RISE_SHARE * open_quotient, (1.0 - RISE_SHARE) * open_quotient)
    flow *= np.clip(amplitude[period], 0.5, 1.5)
    derivative = np.diff(flow, prepend=flow[0]) * (fs / f0_hz)
    return flow, derivative
