"""Top-down drawing of a scene: walls, obstacles, doorways, navigable cells, start region and source spots."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import shapely
from matplotlib.figure import Figure
from matplotlib.patches import Polygon, Rectangle

from hearnav import files
from hearnav.errors import ConfigError
from hearnav.scene.grid import Grid
from hearnav.scene.model import Scene

_PLACE = files.Place("the plan", "choose a writable --out path",
                     "free some space there, or choose an --out path on a disk with room", ConfigError)
#: Gaps (m) at a partition's end narrower than this are joints, wider ones are open floor, not doorways
#: (common practice: interior doors are 0.6-1.0 m wide, double doors up to about 2 m).
DOORWAY_MIN_M, DOORWAY_MAX_M = 0.3, 2.5
DOORWAY_LS = (0, (1, 1.2))
DOORWAY_COLOUR = "0.1"  # dotted across the gap: told apart from walls by the pattern, not a colour


def doorways(scene: Scene) -> list[tuple[np.ndarray, np.ndarray]]:
    """The doorways of a scene as (2,) end points: the gap along a partition's line from its end to the next
    wall, partition or full-height obstacle, when that gap is between DOORWAY_MIN_M and DOORWAY_MAX_M wide."""
    found: dict[tuple[float, float], tuple[np.ndarray, np.ndarray]] = {}
    solids = [(k, shapely.Polygon(ob.polygon)) for k, ob in enumerate(scene.obstacles) if ob.full_height]
    wall = shapely.LinearRing(scene.outline)
    for k, spec in enumerate(scene.spec.obstacles):
        if spec.partition is None or not scene.obstacles[k].full_height:
            continue
        a, b = np.asarray(spec.partition.start, float), np.asarray(spec.partition.end, float)
        for end, other in ((a, b), (b, a)):
            direction = (end - other) / np.linalg.norm(end - other)
            ray = shapely.LineString([end, end + DOORWAY_MAX_M * direction])
            hits = [ray.intersection(g) for j, g in solids if j != k] + [ray.intersection(wall)]
            dists = [shapely.Point(end).distance(h) for h in hits if not h.is_empty]
            near = min(dists, default=np.inf)
            if DOORWAY_MIN_M < near <= DOORWAY_MAX_M:
                far = end + near * direction
                key = tuple(np.round((end + far) / 2, 2))
                found.setdefault(key, (end, far))
    return list(found.values())


def draw_plan(ax, scene: Scene, grid: Grid | None = None, label_spots: bool = True, show_spots: bool = True,
              faint: bool = False) -> None:
    """Draw the plan on a matplotlib axis, in metres (source spots as stars unless ``show_spots`` is False).

    ``faint`` draws the navigable cells as light dots and marks the doorways, as a background for paths."""
    ax.add_patch(Polygon(scene.outline, closed=True, fill=False, lw=2.5, ec="0.15"))
    for ob in scene.obstacles:
        ax.add_patch(Polygon(ob.polygon, closed=True, fc="0.35" if ob.full_height else "0.72", ec="0.2", lw=0.8))
    if grid is not None and grid.n_cells:
        c = grid.centres
        ax.scatter(c[:, 0], c[:, 1], s=4 if faint else 6, c="0.6" if faint else "tab:blue",
                   alpha=0.5 if faint else 0.45, lw=0, label="navigable cells", zorder=1)
        if not faint:
            x0, y0, x1, y1 = scene.spec.grid.start_region.box
            ax.add_patch(Rectangle((x0, y0), x1 - x0, y1 - y0, fill=False, ec="tab:green", ls="--", lw=1.2,
                                   label="start region"))
    if faint:
        for k, (p, q) in enumerate(doorways(scene)):
            ax.plot([p[0], q[0]], [p[1], q[1]], ls=DOORWAY_LS, lw=2.5, c=DOORWAY_COLOUR,
                    label="doorway" if k == 0 else None, zorder=2)
    spots = scene.spots_xy
    if show_spots:
        ax.scatter(spots[:, 0], spots[:, 1], marker="*", s=140, c="tab:orange", ec="k", lw=0.5, zorder=5,
                   label="source spots")
    if label_spots and show_spots:
        for s in scene.spots:
            ax.annotate(s.name, s.position[:2], xytext=(4, 4), textcoords="offset points", fontsize=7)
    lo, hi = scene.outline.min(axis=0), scene.outline.max(axis=0)
    ax.set_xlim(lo[0] - 0.3, hi[0] + 0.3)
    ax.set_ylim(lo[1] - 0.3, hi[1] + 0.3)
    ax.set_aspect("equal")
    ax.set_xlabel("x (m)")
    ax.set_ylabel("y (m)")


def save_plan(scene: Scene, grid: Grid | None, path: str | Path) -> Path:
    """Draw a scene's plan to an image file (format from the suffix)."""
    path = Path(path)
    lo, hi = scene.outline.min(axis=0), scene.outline.max(axis=0)
    w, h = hi - lo
    fig = Figure(figsize=(min(12, 2 + w * 0.8), min(12, 1.5 + h * 0.8)))  # no pyplot: the user's backend is left alone
    ax = fig.subplots()
    draw_plan(ax, scene, grid)
    ax.set_title(f"{scene.name} ({scene.split}): {scene.floor_area:.0f} m$^2$, "
                 f"{grid.n_cells if grid else 0} cells, {len(scene.spots)} spots", fontsize=9)
    ax.legend(loc="upper left", bbox_to_anchor=(1.01, 1), fontsize=7, frameon=False)
    fig.tight_layout()
    with files.writing(path.parent, _PLACE):
        path.parent.mkdir(parents=True, exist_ok=True)
        fig.savefig(path, dpi=130)
    return path
