"""The egocentric map: occupancy around the listener and the sources it can see, rotated with its heading."""

from __future__ import annotations

import functools

import numpy as np

from hearnav.scene.grid import Grid


@functools.lru_cache(maxsize=64)
def patch_offsets(size: int, heading_angle: float) -> np.ndarray:
    """(size, size, 2) grid offsets (rounded) of each patch entry; row 0 is ahead, column 0 is to the left.

    Entry (r, c) lies (half - r) cells ahead and (half - c) cells to the left of the listener.
    """
    half = size // 2
    ahead = (half - np.arange(size))[:, None] * np.ones(size)[None, :]
    left = np.ones(size)[:, None] * (half - np.arange(size))[None, :]
    f = np.array([np.cos(heading_angle), np.sin(heading_angle)])
    l_ = np.array([-f[1], f[0]])
    out = np.rint(ahead[..., None] * f + left[..., None] * l_).astype(np.int64)
    out.flags.writeable = False
    return out


def occupancy_patch(grid: Grid, cell: int, heading: int, size: int) -> np.ndarray:
    """(size, size) read-only float32: 1 where the floor around the listener is not navigable, and on the four
    neighbours the listener cannot step to; row 0 is ahead, column 0 is to the left."""
    off = patch_offsets(size, grid.heading_angle(heading))
    ij = grid.ij[cell] + off  # (size, size, 2)
    inside = (ij[..., 0] >= 0) & (ij[..., 0] < grid.index.shape[0]) & (ij[..., 1] >= 0) & (ij[..., 1] < grid.index.shape[1])
    ids = np.full(inside.shape, -1, np.int64)
    ids[inside] = grid.index[ij[..., 0][inside], ij[..., 1][inside]]
    out = (ids < 0).astype(np.float32)
    half = size // 2
    # A thin wall between two navigable cells blocks the move without filling either cell: mark the
    # neighbour as blocked when the move to it is, so the map shows every wall the listener can bump into.
    for k in range(0, grid.n_headings, grid.n_headings // 4):
        if grid.forward(cell, (heading + k) % grid.n_headings) < 0:
            r, c = {0: (half - 1, half), 1: (half, half - 1), 2: (half + 1, half), 3: (half, half + 1)}[
                k // (grid.n_headings // 4)]
            out[r, c] = 1.0
    out.flags.writeable = False
    return out


def egocentric_patch(grid: Grid, cell: int, heading: int, occupancy: np.ndarray, visible_xy: np.ndarray) -> np.ndarray:
    """(2, size, size) float32: channel 0 is the :func:`occupancy_patch` of the pose, channel 1 marks visible
    sources.

    Parameters
    ----------
    occupancy : (size, size) the pose's :func:`occupancy_patch`.
    visible_xy : (k, 2) positions (m) of the sources in line of sight and in the field of view.
    """
    size = occupancy.shape[0]
    half = size // 2
    out = np.zeros((2, size, size), np.float32)
    out[0] = occupancy
    angle = grid.heading_angle(heading)
    f = np.array([np.cos(angle), np.sin(angle)])
    for xy in np.asarray(visible_xy, float).reshape(-1, 2):
        d = (xy - grid.centers[cell]) / grid.spacing
        r, c = int(round(half - d @ f)), int(round(half - d @ np.array([-f[1], f[0]])))
        if 0 <= r < size and 0 <= c < size:
            out[1, r, c] = 1.0
    return out


def visible_sources(listener_xy: np.ndarray, heading_angle: float, sources_xy: np.ndarray,
                    line_of_sight: np.ndarray, fov_rad: float) -> np.ndarray:
    """(n_sources,) bool: in line of sight and within half the field of view of the heading."""
    d = sources_xy - listener_xy
    bearing = np.arctan2(d[:, 1], d[:, 0]) - heading_angle
    off_axis = np.abs((bearing + np.pi) % (2 * np.pi) - np.pi)
    return line_of_sight & (off_axis <= fov_rad / 2 + 1e-9)
