"""Where each spot of a scene lies from every pose, and the delay-and-sum weights towards it, computed once."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from hearnav.scene.grid import Grid
from hearnav.physics.geometry import bearing as bearing_of, heading_angles
from hearnav.physics.steering import das_conjugates
from hearnav.separation.stft import stft_freqs


def spot_directions(grid: Grid, spots_xy: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Distance and bearing of each spot from each pose.

    Parameters
    ----------
    grid : the scene's grid (C cells, H headings).
    spots_xy : (S, 2) spot positions (m).

    Returns
    -------
    distance : (C, S) metres from each cell centre to each spot.
    bearing : (C, H, S) radians in [-pi, pi), counter-clockwise from the heading.
    """
    d = np.asarray(spots_xy, float)[None] - grid.centers[:, None]  # (C, S, 2)
    bearing = bearing_of(d[:, None, :, 0], d[:, None, :, 1], heading_angles(grid.n_headings)[None, :, None])
    return np.hypot(d[..., 0], d[..., 1]), bearing


@dataclass(frozen=True)
class ScenePoses:
    """Every spot's distance (C, S) and bearing (C, H, S) from every pose of a scene, and the conjugate
    delay-and-sum weights (C, H, S, 2, F) towards it (:func:`hearnav.physics.steering.das_conjugates`).
    All read-only."""

    distance: np.ndarray
    bearing: np.ndarray
    das: np.ndarray

    @classmethod
    def build(cls, grid: Grid, spots_xy: np.ndarray, fs: float, n_fft: int, radius: float, c: float) -> ScenePoses:
        """The tables of a scene, its weights on the bins of an ``n_fft`` STFT (one cell at a time, to bound the
        working memory)."""
        distance, bearing = spot_directions(grid, spots_xy)
        das = np.empty((*bearing.shape, 2, n_fft // 2 + 1), np.complex64)
        freqs = stft_freqs(n_fft, fs)
        for cell in range(grid.n_cells):
            das[cell] = das_conjugates(bearing[cell], freqs, radius, c)
        for table in (distance, bearing, das):
            table.flags.writeable = False
        return cls(distance, bearing, das)
