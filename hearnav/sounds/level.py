"""Active level of a sound and normalisation to the reference level.

The active level is the RMS over the frames that carry the sound, so the pauses of a talker do not
lower it. Frames of 20 ms are kept when their energy lies within 15.9 dB of the level computed over the
kept frames (the margin of ITU-T P.56 [from memory]); the level and the set of kept frames are refined
together until they no longer change. For a steady sound every frame is kept and the active level is
the plain RMS.
"""

from __future__ import annotations

import numpy as np

from hearnav.errors import SoundError
from hearnav.sounds.common import DEFAULT_FS

#: RMS (active level) every generated or loaded sound is scaled to: 0.05, i.e. -26 dBFS.
REFERENCE_RMS = 0.05
#: Active levels below this (in dBFS) count as silence; 16-bit dither alone is about -96 dBFS.
SILENCE_DBFS = -90.0
FRAME_S = 0.02
MARGIN_DB = 15.9
_MAX_ITERATIONS = 50


def frame_energies(x: np.ndarray, frame: int) -> tuple[np.ndarray, np.ndarray]:
    """Mean square and length of consecutive frames (the last one may be shorter).

    Parameters
    ----------
    x : numpy.ndarray, shape (n,)
    frame : int
        Frame length in samples.

    Returns
    -------
    energy, length : numpy.ndarray, shape (ceil(n / frame),)
    """
    starts = np.arange(0, x.size, frame)
    lengths = np.diff(np.append(starts, x.size))
    sums = np.add.reduceat(np.square(x, dtype=np.float64), starts)
    return sums / lengths, lengths


def active_rms(x: np.ndarray, fs: int = DEFAULT_FS) -> float:
    """Active level (RMS of the active frames) of a mono signal.

    Parameters
    ----------
    x : numpy.ndarray, shape (n,)
        Mono signal, n >= 1, finite.
    fs : int
        Sample rate in Hz (sets the 20 ms frame length).

    Returns
    -------
    float
        The active RMS; 0.0 for an all-zero signal.
    """
    x = np.asarray(x, dtype=np.float64)
    energy, length = frame_energies(x, max(1, int(round(FRAME_S * fs))))
    keep = np.ones(energy.size, dtype=bool)
    level2 = float(np.sum(energy * length) / np.sum(length))
    margin = 10.0 ** (-MARGIN_DB / 10.0)
    for _ in range(_MAX_ITERATIONS):
        new_keep = energy >= level2 * margin
        if not new_keep.any():
            break
        level2 = float(np.sum(energy[new_keep] * length[new_keep]) / np.sum(length[new_keep]))
        if np.array_equal(new_keep, keep):
            break
        keep = new_keep
    return float(np.sqrt(level2))


def is_silent(x: np.ndarray, fs: int = DEFAULT_FS) -> bool:
    """Whether a signal's active level is below :data:`SILENCE_DBFS`."""
    return active_rms(x, fs) < 10.0 ** (SILENCE_DBFS / 20.0)


def describe_level(level: float) -> str:
    """A level in dBFS as text, ``"all samples zero"`` for 0."""
    return "all samples zero" if level <= 0.0 else f"{20.0 * np.log10(level):.1f} dBFS"


def normalise_level(x: np.ndarray, fs: int = DEFAULT_FS) -> np.ndarray:
    """Scale a mono signal so that its active level is :data:`REFERENCE_RMS`.

    Parameters
    ----------
    x : numpy.ndarray, shape (n,)
        Mono signal.
    fs : int
        Sample rate in Hz.

    Returns
    -------
    numpy.ndarray, shape (n,), float32

    Raises
    ------
    SoundError
        If the signal is empty, not one-dimensional, not finite or silent.
    """
    x = np.asarray(x, dtype=np.float64)
    if x.ndim != 1 or x.size == 0:
        raise SoundError(
            f"cannot normalise a sound of shape {x.shape}: expected a non-empty mono array of shape (n,); "
            "mix channels down first"
        )
    if not np.all(np.isfinite(x)):
        raise SoundError("cannot normalise a sound holding NaN or infinite samples: expected finite samples")
    level = active_rms(x, fs)
    if level < 10.0 ** (SILENCE_DBFS / 20.0):
        raise SoundError(
            f"cannot normalise a silent sound: expected an active level above {SILENCE_DBFS:.0f} dBFS, "
            f"got {describe_level(level)}; give a sound that is not silent"
        )
    return (x * (REFERENCE_RMS / level)).astype(np.float32)
