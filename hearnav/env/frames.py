"""Top-down frames of an episode: the plan, the sources, the listener's pose and path."""

from __future__ import annotations

import numpy as np
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure

from hearnav.plots.plan import draw_plan


def draw_frame(env, size_px: int = 480) -> np.ndarray:
    """(H, W, 3) uint8 picture of the current state of an episode."""
    world, plan = env.world, env.plan
    grid = world.grid
    fig = Figure(figsize=(size_px / 100, size_px / 100), dpi=100)  # its own Agg canvas: the user's backend is left alone
    canvas = FigureCanvasAgg(fig)
    ax = fig.subplots()
    draw_plan(ax, world.scene, grid, label_spots=False, show_spots=False)
    for k, src in enumerate(plan.sources):
        xy = world.scene.spots[src.spot].position[:2]
        ax.scatter(*xy, marker="*", s=260 if k == 0 else 160, c="red" if k == 0 else "0.45", ec="k", zorder=6)
    path = np.array([grid.centres[c] for c, _ in env.path])
    ax.plot(path[:, 0], path[:, 1], "-", c="tab:purple", lw=2, alpha=0.8, zorder=7)
    x, y = grid.centres[env.cell]
    a = grid.heading_angle(env.heading)
    ax.arrow(x, y, 0.35 * np.cos(a), 0.35 * np.sin(a), width=0.06, color="tab:purple", zorder=8)
    ax.set_title(f"step {env.steps}: SI-SDR {env.si_sdr_db:.1f} dB", fontsize=8)
    if ax.get_legend():
        ax.get_legend().remove()
    fig.tight_layout()
    canvas.draw()
    return np.asarray(canvas.buffer_rgba())[..., :3].copy()
