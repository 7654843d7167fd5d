"""The listener's body as the environment defines it: what a policy may know without hard-coding it."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True)
class Embodiment:
    """The sampling, head, headings and feature bands of an environment (``env.unwrapped.embodiment``, and
    ``info["embodiment"]`` at reset).

    Attributes
    ----------
    fs : sampling rate, Hz.
    window_len : samples heard per step (the cross-fade from the previous pose included).
    fade_len : samples of that cross-fade; the observation and the score cover the ``window_len - fade_len``
        samples after it.
    n_headings : headings on the grid (4 or 8); heading k points ``k * heading_step`` counter-clockwise from +x.
    head_radius : m, of the spherical head the ears sit on (at +-90 degrees).
    speed_of_sound : m/s.
    band_edges : (B + 1,) Hz, edges of the observation's frequency bands.
    n_fft, hop : the STFT the features and the built-in separators share (sqrt-Hann frames).
    """

    fs: int
    window_len: int
    fade_len: int
    n_headings: int
    head_radius: float
    speed_of_sound: float
    band_edges: tuple[float, ...]
    n_fft: int
    hop: int

    @property
    def heading_step(self) -> float:
        """Radians one turn changes the heading by."""
        return 2 * np.pi / self.n_headings

    @property
    def n_bands(self) -> int:
        """Frequency bands of the observation."""
        return len(self.band_edges) - 1
