"""Geometry checks shared by the scene tests."""

import numpy as np
import shapely


def grid_moves_cross_solids(scene, grid) -> int:
    """How many single grid moves pass through an obstacle or leave the outline."""
    solids = shapely.union_all([shapely.Polygon(ob.polygon) for ob in scene.obstacles])
    room = shapely.Polygon(scene.outline)
    segments = []
    for cell in range(grid.n_cells):
        for heading in range(grid.n_headings):
            target = grid.forward(cell, heading)
            if target >= 0:
                segments.append(shapely.LineString([grid.centres[cell], grid.centres[target]]))
    segments = np.array(segments, dtype=object)
    return int(np.sum(shapely.intersects(solids, segments) | ~shapely.within(segments, room)))
