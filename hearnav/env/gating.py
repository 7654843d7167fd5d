"""Which windows are scored: a window in which the target is far below its typical level gives no score.

A window whose target is more than ``QUIET_DB`` below the median window of its episode is not scored: it gives
no reward and is left out of every mean. Its SI-SDR would measure the distractors, not the listener's pose.
The level is that of the target's dry signal over the window's scored part. At a fixed pose the room scales every
window of a source alike, so a pose-independent level gates the same windows for every policy. Gating at 20 dB
below the median is common practice for excluding near-silent target segments from speech-enhancement scores.
"""

from __future__ import annotations

import numpy as np

#: A window more than this many dB below the episode's median window level is not scored.
QUIET_DB = 20.0


def window_energies(signal: np.ndarray, start: int, window_len: int, skip: int, count: int) -> np.ndarray:
    """Energy of a dry signal in each of ``count`` consecutive windows, over each window's scored part.

    Parameters
    ----------
    signal : (n,) dry signal.
    start : first sample of the first window.
    window_len : samples per window.
    skip : samples at the head of each window that are not scored (the cross-fade).
    count : number of windows.

    Returns
    -------
    (count,) float64 sums of squares of ``signal[start + k window_len + skip : start + (k + 1) window_len]``
    (samples past the signal's end count as zero).
    """
    x = np.zeros(count * window_len, np.float64)
    part = np.asarray(signal[start:start + count * window_len], np.float64)
    x[:part.size] = part
    frames = x.reshape(count, window_len)[:, skip:]
    return np.einsum("kn,kn->k", frames, frames)


def scored_windows(energies: np.ndarray, quiet_db: float = QUIET_DB) -> np.ndarray:
    """(count,) bool: which windows are scored, those with energy above 0 and at most ``quiet_db`` below the median
    of ``energies`` (count,)."""
    floor = np.median(energies) * 10.0 ** (-quiet_db / 10.0)
    return (energies > 0) & (energies >= floor)
