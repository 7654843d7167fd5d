"""The navigable grid: cell centres on free floor, connected to the start region by 4-neighbour moves.

A move between two neighbouring cells is open only when the listener (a disc of LISTENER_RADIUS) can slide
along the segment between their centres without touching a surface, so a thin wall that runs between two
lattice rows separates them even though the cells on both sides are clear.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass

import numpy as np
import shapely
from scipy.sparse import coo_matrix
from scipy.sparse.csgraph import connected_components

from hearnav.physics.geometry import heading_angles
from hearnav.scene.model import Scene

#: A cell counts when its centre is at least this far (m) from every surface: the listener's radius.
LISTENER_RADIUS = 0.2
#: Headings supported by the grid.
HEADING_COUNTS = (4, 8)

# Forward steps for 8 headings, counter-clockwise from +x; 4 headings use every second one.
_STEPS8 = np.array([(1, 0), (1, 1), (0, 1), (-1, 1), (-1, 0), (-1, -1), (0, -1), (1, -1)])
# Moves whose openness is stored (the reverse moves share it): east, north, north-east, south-east.
_STORED_MOVES = ((1, 0), (0, 1), (1, 1), (1, -1))


@dataclass(frozen=True)
class Grid:
    """Navigable cells of a scene and the moves between them."""

    spacing: float
    origin: np.ndarray  # (2,) centre of grid index (0, 0)
    index: np.ndarray  # (nx, ny) cell id or -1
    ij: np.ndarray  # (n_cells, 2) grid indices of each cell
    n_headings: int
    start_cells: np.ndarray  # (n_start,) ids of cells inside the start region
    # (4, nx, ny) bool: whether the move from (i, j) by each of _STORED_MOVES is open; None: open when both free
    open_moves: np.ndarray | None = None

    @property
    def n_cells(self) -> int:
        return int(self.ij.shape[0])

    @functools.cached_property
    def centres(self) -> np.ndarray:
        """(n_cells, 2) cell centres in metres (read-only)."""
        out = self.origin + self.ij * self.spacing
        out.flags.writeable = False
        return out

    def heading_angle(self, heading: int) -> float:
        """Heading in radians, counter-clockwise from +x."""
        return float(heading_angles(self.n_headings)[heading])

    def step(self, heading: int) -> np.ndarray:
        """Grid offset (di, dj) of a forward move."""
        return _STEPS8[heading * (8 // self.n_headings)]

    def forward(self, cell: int, heading: int) -> int:
        """The cell one forward move away, or -1 when the move is blocked."""
        di, dj = (int(v) for v in self.step(heading))
        i0, j0 = (int(v) for v in self.ij[cell])
        ok = self._open(i0, j0, di, dj)
        if ok and di and dj:
            # no cutting corners on a diagonal move: both L-shaped paths around it must be open too
            ok = (self._open(i0, j0, di, 0) and self._open(i0 + di, j0, 0, dj) and
                  self._open(i0, j0, 0, dj) and self._open(i0, j0 + dj, di, 0))
        return int(self.index[i0 + di, j0 + dj]) if ok else -1

    def neighbours(self, cell: int) -> list[int]:
        """Cells one open 4-neighbour move away from ``cell``."""
        i, j = (int(v) for v in self.ij[cell])
        return [int(self.index[i + di, j + dj]) for di, dj in ((1, 0), (-1, 0), (0, 1), (0, -1))
                if self._open(i, j, di, dj)]

    def _free(self, i: int, j: int) -> bool:
        return 0 <= i < self.index.shape[0] and 0 <= j < self.index.shape[1] and self.index[i, j] >= 0

    def _open(self, i: int, j: int, di: int, dj: int) -> bool:
        """Whether the move (i, j) -> (i + di, j + dj) joins two cells without bringing the listener into a surface."""
        if not (self._free(i, j) and self._free(i + di, j + dj)):
            return False
        if self.open_moves is None:
            return True
        if (di, dj) not in _STORED_MOVES:  # the reverse of a stored move
            i, j, di, dj = i + di, j + dj, -di, -dj
        return bool(self.open_moves[_STORED_MOVES.index((di, dj)), i, j])

    def cell_at(self, xy: np.ndarray) -> int:
        """The cell whose centre is nearest to ``xy`` among navigable cells."""
        d = np.linalg.norm(self.centres - np.asarray(xy, dtype=float), axis=1)
        return int(np.argmin(d))


def free_floor(scene: Scene) -> shapely.Geometry:
    """The floor not covered by any obstacle, as a shapely geometry."""
    floor = shapely.Polygon(scene.outline)
    if not scene.obstacles:
        return floor
    # one union, one difference: subtracting obstacles one by one grows quadratically with their number
    return floor.difference(shapely.union_all([shapely.Polygon(ob.polygon) for ob in scene.obstacles]))


def surfaces_2d(scene: Scene) -> shapely.Geometry:
    """Every vertical surface in plan: the outline's and the obstacles' boundaries."""
    lines = [shapely.LinearRing(scene.outline)] + [shapely.LinearRing(ob.polygon) for ob in scene.obstacles]
    return shapely.union_all(lines)


def candidate_mask(scene: Scene, spacing: float) -> tuple[np.ndarray, np.ndarray]:
    """Which lattice points lie on free floor at least LISTENER_RADIUS from every surface.

    Returns
    -------
    origin : (2,) position of lattice point (0, 0).
    mask : (nx, ny) bool.
    """
    lo = scene.outline.min(axis=0) + spacing / 2
    hi = scene.outline.max(axis=0)
    nx, ny = (np.floor((hi - lo) / spacing).astype(int) + 1).tolist()
    gi, gj = np.meshgrid(np.arange(nx), np.arange(ny), indexing="ij")
    x, y = lo[0] + gi * spacing, lo[1] + gj * spacing
    floor = free_floor(scene)
    inside = shapely.contains_xy(floor, x, y)
    points = shapely.points(x[inside], y[inside])
    clear = np.zeros_like(inside)
    clear[inside] = shapely.distance(surfaces_2d(scene), points) >= LISTENER_RADIUS
    return lo, clear


def open_moves(scene: Scene, origin: np.ndarray, mask: np.ndarray, spacing: float) -> np.ndarray:
    """Which moves between candidate lattice points keep the listener clear of every surface.

    Returns
    -------
    (4, nx, ny) bool: entry [k, i, j] tells whether the move from (i, j) by ``_STORED_MOVES[k]`` is open.
    """
    walls = surfaces_2d(scene)
    nx, ny = mask.shape
    out = np.zeros((len(_STORED_MOVES),) + mask.shape, dtype=bool)
    for k, (di, dj) in enumerate(_STORED_MOVES):
        j0, j1 = max(0, -dj), ny - max(0, dj)  # rows whose neighbour (i + di, j + dj) exists
        both = np.zeros_like(mask)
        both[: nx - di, j0:j1] = mask[: nx - di, j0:j1] & mask[di:, j0 + dj: j1 + dj]
        gi, gj = np.nonzero(both)
        a = origin + np.stack([gi, gj], axis=1) * spacing
        b = a + np.array([di, dj]) * spacing
        segments = shapely.linestrings(np.stack([a, b], axis=1))
        # the endpoints are already LISTENER_RADIUS clear; 1e-9 absorbs rounding for walls parallel to the move
        out[k, gi, gj] = shapely.distance(walls, segments) >= LISTENER_RADIUS - 1e-9
    return out


def build_grid(scene: Scene, n_headings: int = 4) -> Grid:
    """The navigable grid of a scene: candidate cells connected to the start region."""
    if n_headings not in HEADING_COUNTS:
        from hearnav.errors import ConfigError

        raise ConfigError(f"n_headings must be one of {HEADING_COUNTS} (got {n_headings})")
    spacing = scene.spec.grid.spacing
    origin, mask = candidate_mask(scene, spacing)
    x0, y0, x1, y1 = scene.spec.grid.start_region.box
    gi, gj = np.nonzero(mask)
    px, py = origin[0] + gi * spacing, origin[1] + gj * spacing
    in_start = (px >= x0) & (px <= x1) & (py >= y0) & (py <= y1)
    moves = open_moves(scene, origin, mask, spacing)
    ids = np.full(mask.shape, -1, dtype=np.int64)
    ids[gi, gj] = np.arange(gi.size)
    ei, ej = np.nonzero(moves[0])
    ni, nj = np.nonzero(moves[1])
    rows = np.concatenate([ids[ei, ej], ids[ni, nj]])
    cols = np.concatenate([ids[ei + 1, ej], ids[ni, nj + 1]])
    graph = coo_matrix((np.ones(rows.size), (rows, cols)), shape=(gi.size, gi.size))
    _, component = connected_components(graph, directed=False)  # cells joined by open 4-neighbour moves
    kept = np.isin(component, np.unique(component[in_start]))
    keep = np.zeros(mask.shape, dtype=bool)
    keep[gi[kept], gj[kept]] = True
    index = np.full(mask.shape, -1, dtype=np.int64)
    ki, kj = np.nonzero(keep)
    index[ki, kj] = np.arange(ki.size)
    ij = np.stack([ki, kj], axis=1)
    cx, cy = origin[0] + ki * spacing, origin[1] + kj * spacing
    start = np.nonzero((cx >= x0) & (cx <= x1) & (cy >= y0) & (cy <= y1))[0]
    return Grid(spacing, origin, index, ij, n_headings, start, moves & keep)
