"""Top-down drawing of a scene: walls, obstacles, navigable cells, start region and source spots."""

from __future__ import annotations

from pathlib import Path

from matplotlib.figure import Figure
from matplotlib.patches import Polygon, Rectangle

from hearnav import files
from hearnav.errors import ConfigError
from hearnav.scene.grid import Grid
from hearnav.scene.model import Scene

_PLACE = files.Place("the plan", "choose a writable --out path",
                     "free some space there, or choose an --out path on a disk with room", ConfigError)


def draw_plan(ax, scene: Scene, grid: Grid | None = None, label_spots: bool = True, show_spots: bool = True) -> None:
    """Draw the plan on a matplotlib axis, in metres (source spots as stars unless ``show_spots`` is False)."""
    ax.add_patch(Polygon(scene.outline, closed=True, fill=False, lw=2.5, ec="0.15"))
    for ob in scene.obstacles:
        ax.add_patch(Polygon(ob.polygon, closed=True, fc="0.35" if ob.full_height else "0.72", ec="0.2", lw=0.8))
    if grid is not None and grid.n_cells:
        c = grid.centres
        ax.scatter(c[:, 0], c[:, 1], s=6, c="tab:blue", alpha=0.45, lw=0, label="navigable cells")
        x0, y0, x1, y1 = scene.spec.grid.start_region.box
        ax.add_patch(Rectangle((x0, y0), x1 - x0, y1 - y0, fill=False, ec="tab:green", ls="--", lw=1.2,
                               label="start region"))
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
