"""The egocentric map: occupancy around the listener and the sources it can see, rotated with its heading."""

from __future__ import annotations

import functools
from dataclasses import dataclass

import numpy as np

from hearnav.physics.geometry import heading_angles
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


def patch_cells(grid: Grid, cell: int, heading: int, size: int) -> np.ndarray:
    """(size, size) int64 id of the navigable cell under each entry of a pose's egocentric patch, -1 where the
    floor is not navigable or off the grid; row 0 is ahead, column 0 is to the left."""
    ij = grid.ij[cell] + patch_offsets(size, grid.heading_angle(heading))  # (size, size, 2)
    shape = grid.index.shape
    inside = (ij[..., 0] >= 0) & (ij[..., 0] < shape[0]) & (ij[..., 1] >= 0) & (ij[..., 1] < shape[1])
    ids = np.full(inside.shape, -1, np.int64)
    ids[inside] = grid.index[ij[..., 0][inside], ij[..., 1][inside]]
    return ids


def patch_values(cells: np.ndarray, per_cell: np.ndarray, fill) -> np.ndarray:
    """A per-cell array under each entry of a patch: (size, size) ``per_cell[cells]``, ``fill`` where ``cells`` (of
    :func:`patch_cells`) is -1, off the navigable floor.

    Parameters
    ----------
    cells : (size, size) int64 cell ids of a pose's patch, -1 off the floor.
    per_cell : (n_cells,) one value per cell of the grid.
    """
    return np.where(cells >= 0, per_cell[np.maximum(cells, 0)], fill)


def occupancy_patch(grid: Grid, cell: int, heading: int, size: int) -> np.ndarray:
    """(size, size) read-only float32: 1 where the floor around the listener is not navigable, and on the four
    neighbours the listener cannot step to; row 0 is ahead, column 0 is to the left."""
    out = (patch_cells(grid, cell, heading, size) < 0).astype(np.float32)
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


@dataclass(frozen=True)
class PoseMaps:
    """Egocentric maps of every pose of a scene: each pose's occupancy and where each spot shows.

    Attributes
    ----------
    occupancy : (n_cells, n_headings, size, size) float32 :func:`occupancy_patch` of every pose.
    pixel : (n_cells, n_headings, n_spots) int64 flat patch index at which each spot shows, -1 where it does not.
    """

    occupancy: np.ndarray
    pixel: np.ndarray

    @classmethod
    def build(cls, grid: Grid, spots_xy: np.ndarray, bearing: np.ndarray, line_of_sight: np.ndarray, size: int,
              fov_rad: float) -> PoseMaps:
        """The maps of a scene.

        Parameters
        ----------
        grid : the scene's grid.
        spots_xy : (n_spots, 2) spot positions (m).
        bearing : (n_cells, n_headings, n_spots) each spot's bearing from each pose, radians in [-pi, pi)
            (:func:`hearnav.tables.poses.spot_directions`).
        line_of_sight : (n_cells, n_spots) bool, a spot in line of sight of a cell centre.
        size : patch side in cells (odd).
        fov_rad : field of view, radians: a spot shows when in line of sight and within half of it of the heading.
        """
        occupancy = np.stack([np.stack([occupancy_patch(grid, c, h, size) for h in range(grid.n_headings)])
                              for c in range(grid.n_cells)])  # (C, H, P, P)
        angles = heading_angles(grid.n_headings)  # (H,)
        seen = line_of_sight[:, None, :] & (np.abs(bearing) <= fov_rad / 2 + 1e-9)
        cells = (np.asarray(spots_xy, float)[None] - grid.centres[:, None]) / grid.spacing  # (C, S, 2)
        cos, sin = np.cos(angles)[None, :, None], np.sin(angles)[None, :, None]
        ahead = cells[:, None, :, 0] * cos + cells[:, None, :, 1] * sin  # (C, H, S) cells ahead
        left = cells[:, None, :, 1] * cos - cells[:, None, :, 0] * sin  # cells to the left
        half = size // 2
        row, col = np.rint(half - ahead).astype(np.int64), np.rint(half - left).astype(np.int64)
        inside = seen & (row >= 0) & (row < size) & (col >= 0) & (col < size)
        return cls(occupancy, np.where(inside, row * size + col, -1))

    @property
    def size(self) -> int:
        """Patch side in cells."""
        return int(self.occupancy.shape[-1])

    def patch(self, cell: int, heading: int, spots: list[int]) -> np.ndarray:
        """(2, size, size) float32, a new array: channel 0 the pose's :func:`occupancy_patch`, channel 1 marks the
        given spots the pose shows."""
        out = np.zeros((2, self.size, self.size), np.float32)
        out[0] = self.occupancy[cell, heading]
        pixel = self.pixel[cell, heading, spots]
        out[1].reshape(-1)[pixel[pixel >= 0]] = 1.0
        return out
