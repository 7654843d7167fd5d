"""The stand-off ring: cells closer than ``standoff_m`` to a source's spot, which the listener may not enter.

A robot does not walk into a person, and the far-field head model of the responses holds only some way from
a source. The ring of an episode is the union of the discs of radius ``standoff_m`` around the spots of its
sources (target and distractors alike); a cell is in it when its centre is strictly closer than ``standoff_m``
to one of them, so ``standoff_m = 0`` makes no ring.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from hearnav.scene.grid import Grid


def ring_cells(grid: Grid, spots_xy: np.ndarray, standoff_m: float) -> np.ndarray:
    """(n_cells,) bool: the cells whose centre lies closer than ``standoff_m`` to any of the (S, 2) spots."""
    xy = np.asarray(spots_xy, float).reshape(-1, 2)
    if standoff_m <= 0 or xy.size == 0 or grid.n_cells == 0:
        return np.zeros(grid.n_cells, bool)
    d = np.hypot(*(grid.centres[:, None, :] - xy[None]).transpose(2, 0, 1))  # (C, S) as the pose tables measure
    return (d < standoff_m).any(axis=1)


@dataclass(frozen=True)
class StandoffMoves:
    """A grid's moves with the ring's cells closed: a forward move into the ring is blocked like one into a
    wall (:func:`hearnav.env.actions.next_pose` keeps the pose and reports a collision)."""

    grid: Grid
    blocked: np.ndarray  # (n_cells,) bool, :func:`ring_cells`

    @property
    def n_headings(self) -> int:
        """Headings of the grid."""
        return self.grid.n_headings

    def forward(self, cell: int, heading: int) -> int:
        """The cell ahead, or -1 where a wall or the ring is in the way."""
        ahead = self.grid.forward(cell, heading)
        return -1 if ahead < 0 or self.blocked[ahead] else ahead
