"""Where each spot of a scene lies from every pose, where its earliest path arrives from, and the delay-and-sum
weights towards that arrival (for the store)."""

from __future__ import annotations

import numpy as np

from hearnav.physics.geometry import bearing as bearing_of
from hearnav.physics.geometry import heading_angles
from hearnav.physics.steering import das_conjugates
from hearnav.scene.grid import Grid
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
    d = np.asarray(spots_xy, float)[None] - grid.centres[:, None]  # (C, S, 2)
    bearing = bearing_of(d[:, None, :, 0], d[:, None, :, 1], heading_angles(grid.n_headings)[None, :, None])
    return np.hypot(d[..., 0], d[..., 1]), bearing


def arrival_bearings(grid: Grid, first_azimuth: np.ndarray) -> np.ndarray:
    """Bearing of each spot's earliest arriving path from each pose: the direction a separator steers at.

    In line of sight it is the spot's own bearing; when the straight line is blocked it is the direction of the
    earliest path that reaches the listener (a reflection), which the responses know.

    Parameters
    ----------
    grid : the scene's grid (C cells, H headings).
    first_azimuth : (C, S) radians, plan frame (``Responses.first_azimuth``).

    Returns
    -------
    (C, H, S) radians in [-pi, pi), counter-clockwise from the heading.
    """
    az = np.asarray(first_azimuth, np.float64)[:, None, :]
    return bearing_of(np.cos(az), np.sin(az), heading_angles(grid.n_headings)[None, :, None])


def fill_das(bearing: np.ndarray, fs: float, n_fft: int, radius: float, c: float, out: np.ndarray) -> None:
    """Write the conjugate delay-and-sum weights towards every bearing (:func:`das_conjugates`) on the bins of an
    ``n_fft`` STFT.

    Parameters
    ----------
    bearing : (C, H, S) radians, counter-clockwise from the heading (:func:`arrival_bearings`).
    fs : sampling rate, Hz. n_fft : STFT frame. radius, c : head radius (m) and speed of sound (m/s).
    out : (C, H, S, 2, n_fft // 2 + 1) complex64, filled one cell at a time (to bound the working memory).
    """
    freqs = stft_freqs(n_fft, fs)
    for cell in range(bearing.shape[0]):
        out[cell] = das_conjugates(bearing[cell], freqs, radius, c)
