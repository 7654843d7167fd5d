"""The early part of a binaural response: the target reference of the score.

The early image of a source at an ear is its dry signal through that ear's response cut ``EARLY_S`` after the
response's first arrival, with a short raised-cosine taper centred on the boundary; the late part is the rest,
so early + late is the response exactly. The boundary is that of the clarity index C50 (ISO 3382-1:2009,
annex A); 50 ms early-reflection targets are common practice in dereverberation corpora. The first arrival
is the onset of ISO 3382-1:2009: the first sample whose level rises to 20 dB below the response's peak.
One boundary, at the earlier ear's onset, serves both ears, so the interaural delay of the early image is the
response's own.

References
----------
- ISO 3382-1:2009, Acoustics - Measurement of room acoustic parameters - Part 1: Performance spaces
  (C50 early/late split at 50 ms; onset of the impulse response 20 dB below its maximum).
"""

from __future__ import annotations

import numpy as np

#: Early/late boundary after the first arrival, seconds (C50's, ISO 3382-1).
EARLY_S = 0.05
#: Length of the raised-cosine taper centred on the boundary, seconds (short; common practice).
TAPER_S = 0.002
#: Onset level below the response's peak, dB (ISO 3382-1:2009).
ONSET_DB = 20.0


def onsets(responses: np.ndarray) -> np.ndarray:
    """Index of the first arrival of binaural responses (ISO 3382-1 onset, the earlier of the two ears).

    Parameters
    ----------
    responses : (..., 2, L) real responses, ears on the second-last axis.

    Returns
    -------
    (...) int: the first sample whose energy at either ear is at least the peak energy of both ears times
    10^(-ONSET_DB / 10) (0 for a silent response).
    """
    power = np.square(np.asarray(responses, np.float64)).max(axis=-2)  # (..., L)
    peak = power.max(axis=-1, keepdims=True)
    return np.where(peak[..., 0] > 0, np.argmax(power >= peak * 10.0 ** (-ONSET_DB / 10), axis=-1), 0)


def cut_length(first: int | np.ndarray, fs: float, early_s: float = EARLY_S, taper_s: float = TAPER_S) -> int:
    """Samples a response's early part spans (its last non-zero weight is before this), for the latest onset."""
    return int(np.max(first)) + int(np.ceil((early_s + taper_s / 2) * fs)) + 1


def early_window(length: int, first: int | np.ndarray, fs: float, early_s: float = EARLY_S,
                 taper_s: float = TAPER_S) -> np.ndarray:
    """The early/late weighting of responses: 1 before the boundary, 0 after, a raised cosine across it.

    Parameters
    ----------
    length : samples of the responses.
    first : (...) sample(s) of the first arrival (:func:`onsets`).
    fs : sampling rate, Hz.
    early_s, taper_s : boundary after the first arrival and taper length, seconds.

    Returns
    -------
    (..., length) float64 weights w in [0, 1]; the early part is w h and the late part (1 - w) h.
    """
    boundary = np.asarray(first, np.float64)[..., None] + early_s * fs
    half = 0.5 * taper_s * fs
    t = np.arange(length, dtype=np.float64)
    x = np.clip((t - (boundary - half)) / max(2 * half, 1e-9), 0.0, 1.0)
    return 0.5 + 0.5 * np.cos(np.pi * x)


def split_response(responses: np.ndarray, fs: float, early_s: float = EARLY_S,
                   taper_s: float = TAPER_S) -> tuple[np.ndarray, np.ndarray]:
    """Early and late parts of binaural responses, each cut at one boundary after its first arrival.

    Parameters
    ----------
    responses : (..., 2, L) responses, ears on the second-last axis.
    fs : sampling rate, Hz.

    Returns
    -------
    (early, late), each of the responses' shape and dtype; early + late == responses.
    """
    responses = np.asarray(responses)
    w = early_window(responses.shape[-1], onsets(responses), fs, early_s, taper_s).astype(responses.dtype)
    early = responses * w[..., None, :]
    return early, responses - early
