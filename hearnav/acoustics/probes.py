"""Probe points for the late tail: a few cells spread over the plan, and each cell's nearest probe.

Distances are walking distances on the grid (breadth-first over the grid's open 4-neighbour moves), so a probe behind a
partition is not taken for a cell in the next room when one on the cell's own side is nearer on foot.
"""

from __future__ import annotations

from collections import deque

import numpy as np

from hearnav.scene.grid import Grid


def walking_distances(grid: Grid, source: int) -> np.ndarray:
    """Moves needed to reach every cell from ``source`` (inf where unreachable).

    Returns
    -------
    (n_cells,) float.
    """
    dist = np.full(grid.n_cells, np.inf)
    dist[source] = 0
    queue = deque([source])
    while queue:
        c = queue.popleft()
        for n in grid.neighbours(c):
            if dist[n] == np.inf:
                dist[n] = dist[c] + 1
                queue.append(n)
    return dist


def choose_probes(grid: Grid, spacing_m: float) -> tuple[np.ndarray, np.ndarray]:
    """Farthest-point probes until every cell is within ``spacing_m`` walking distance of one.

    Returns
    -------
    probes : (n_probes,) cell ids.
    owner : (n_cells,) index into ``probes`` of each cell's nearest probe.
    """
    centroid = grid.centres.mean(axis=0)
    first = int(np.argmin(np.linalg.norm(grid.centres - centroid, axis=1)))
    probes = [first]
    nearest = walking_distances(grid, first)
    owner = np.zeros(grid.n_cells, dtype=np.int64)
    limit = spacing_m / grid.spacing
    while nearest.max() > limit:
        nxt = int(np.argmax(nearest))
        d = walking_distances(grid, nxt)
        owner[d < nearest] = len(probes)
        nearest = np.minimum(nearest, d)
        probes.append(nxt)
    return np.asarray(probes, dtype=np.int64), owner
