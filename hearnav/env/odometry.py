"""What the listener knows of its own path from odometry: the steps it has spent in each cell this episode, as an
egocentric patch. It is the agent's memory of where it has been, not a view of the world."""

from __future__ import annotations

import numpy as np

from hearnav.tables.maps import patch_values

#: Steps spent in a cell at which its entry of the visit patch reaches 1 (entries are capped there).
VISIT_STEPS = 4


def visit_patch(steps_in: np.ndarray, cells: np.ndarray) -> np.ndarray:
    """(size, size) float32 egocentric visit patch of a pose, row 0 ahead, column 0 left (the layout of
    :func:`hearnav.tables.maps.occupancy_patch`): the steps spent in the cell under each entry over
    :data:`VISIT_STEPS`, capped at 1; 0 off the navigable floor.

    Parameters
    ----------
    steps_in : (n_cells,) steps spent in each cell so far (the start counts as one).
    cells : (size, size) the pose's patch cells (:func:`hearnav.tables.maps.patch_cells`), -1 off the floor.
    """
    return np.minimum(patch_values(cells, steps_in, 0.0) / VISIT_STEPS, 1.0).astype(np.float32)
