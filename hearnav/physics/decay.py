"""Measured reverberation time of rendered responses: octave-band Schroeder T30.

References
----------
- ISO 3382-1:2009, sections 5.3 and A.2: the decay curve is the backward integral of the squared impulse
  response in each octave band; T30 is -60 dB divided by the slope of a least-squares line through the
  curve from -5 dB to -35 dB.
- IEC 61260-1: octave bands centred at 1000 * 2**k Hz with edges at fc / sqrt(2) and fc * sqrt(2).
"""

from __future__ import annotations

import numpy as np
from scipy import signal

from hearnav.physics.reverberation import fit_decay, schroeder_db

#: Bands averaged for the single "mid-frequency" reverberation time (ISO 3382-1, A.2.2: 500 Hz and 1 kHz).
MID_BANDS_HZ: tuple[float, float] = (500.0, 1000.0)
#: Butterworth order of the octave filters (third order per edge: common practice for decay measurements).
FILTER_ORDER = 3
#: Least drop (dB) from a band's loudest stretch to its last one for T30: the fit ends at -35 dB, and ISO 3382-1
#: (5.3.3) wants the bottom of the range 10 dB above what ends the decay. A response cut off earlier would bend
#: its backward integral down and give too short a time.
MIN_RANGE_DB = 45.0
#: Length (s) of the stretches whose mean energy gives the loudest and the last level (common practice).
LEVEL_WINDOW_S = 0.01


def octave_filter(response: np.ndarray, fs: float, centre_hz: float) -> np.ndarray:
    """One octave band of a response.

    Parameters
    ----------
    response : (..., n) samples; filtered along the last axis.
    fs : sample rate in Hz.
    centre_hz : band centre in Hz; the upper edge must lie below fs / 2.

    Returns
    -------
    (..., n) band-passed samples (Butterworth, edges at centre / sqrt(2) and centre * sqrt(2)).
    """
    low, high = centre_hz / np.sqrt(2.0), centre_hz * np.sqrt(2.0)
    if high >= fs / 2:
        raise ValueError(f"octave band at {centre_hz:g} Hz needs a sample rate above {2 * high:.0f} Hz (got {fs:g})")
    sos = signal.butter(FILTER_ORDER, [low, high], btype="bandpass", fs=fs, output="sos")
    return signal.sosfilt(sos, np.asarray(response, float), axis=-1)


def band_t30(response: np.ndarray, fs: float, centre_hz: float) -> float:
    """Schroeder T30 of one octave band, in seconds; NaN when the decay does not reach -35 dB.

    Parameters
    ----------
    response : (n,) or (n_channels, n) samples; channels (e.g. two ears) add their energies.
    fs : sample rate in Hz.
    centre_hz : octave band centre in Hz.

    Returns
    -------
    Reverberation time in seconds (NaN if the response is silent or too short for the -5 to -35 dB range).
    """
    band = octave_filter(response, fs, centre_hz)
    energy = (band ** 2).reshape(-1, band.shape[-1]).sum(axis=0)
    if not np.any(energy > 0) or decay_range_db(energy, fs) < MIN_RANGE_DB:
        return float("nan")
    try:
        return fit_decay(schroeder_db(energy), fs, "T30")
    except ValueError:
        return float("nan")


def decay_range_db(energy: np.ndarray, fs: float) -> float:
    """How far (dB) the last stretch of a response lies below its loudest, in windows of LEVEL_WINDOW_S.

    Parameters
    ----------
    energy : (n,) per-sample energies.
    fs : sample rate in Hz.
    """
    w = max(1, int(round(LEVEL_WINDOW_S * fs)))
    n = energy.size // w
    if n < 2:
        return 0.0
    levels = energy[: n * w].reshape(n, w).mean(axis=1)
    if levels[-1] <= 0:
        return float("inf")
    return float(10 * np.log10(levels.max() / levels[-1]))


def mean_t30(responses: np.ndarray, fs: float, centres_hz: tuple[float, ...]) -> np.ndarray:
    """Per-band T30 averaged over many responses, ignoring those whose decay does not span the range.

    Parameters
    ----------
    responses : (n_responses, n_channels, n) samples.
    fs : sample rate in Hz.
    centres_hz : (n_bands,) octave band centres in Hz.

    Returns
    -------
    (n_bands,) seconds; NaN for a band no response could be measured in (or above fs / 2).
    """
    out = []
    for centre in centres_hz:
        if centre * np.sqrt(2.0) >= fs / 2:
            out.append(float("nan"))
            continue
        values = [band_t30(r, fs, centre) for r in responses]
        finite = [v for v in values if np.isfinite(v)]
        out.append(float(np.mean(finite)) if finite else float("nan"))
    return np.asarray(out)


def mid_t30(per_band: np.ndarray, centres_hz: tuple[float, ...]) -> float:
    """Mean of the 500 Hz and 1 kHz values of a per-band reverberation time (NaN if either is missing)."""
    index = [list(centres_hz).index(c) for c in MID_BANDS_HZ]
    return float(np.mean(np.asarray(per_band, float)[index]))
