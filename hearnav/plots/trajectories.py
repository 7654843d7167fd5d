"""Trajectory figures: one per episode, the policies side by side on the plan, optionally over a score map."""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence

import numpy as np
from matplotlib.lines import Line2D
from matplotlib.patches import Circle

from hearnav.plots import style
from hearnav.plots.episodes import SourceMark
from hearnav.plots.plan import DOORWAY_COLOUR, DOORWAY_LS, draw_plan
from hearnav.plots.scoremap import ScoreMap, draw_score_map

#: Panels per row of an episode's figure.
COLUMNS = 3
#: Length (m) of a heading tick, as a share of the grid spacing.
TICK = 0.45


def missing_poses_message(folder: str) -> str:
    """The one line for a run whose rows carry no poses (written before poses were recorded)."""
    return (f"RUN_DIR {folder!r}: expected rows with 'poses' (the pose after every step), found rows without them "
            f"(written by an older hearnav); rerun 'hearnav bench' into a new folder to plot trajectories")


def _path(ax, grid, poses: Sequence[Sequence[int]], collided: Sequence[int], colour: str) -> None:
    """The listener's path: a line through the cells, a heading tick at every pose, start, end and collisions."""
    cells = np.array([p[0] for p in poses], int)
    xy = grid.centres[cells]
    ax.plot(xy[:, 0], xy[:, 1], "-", c=colour, lw=2, alpha=0.85, zorder=6)
    length = TICK * grid.spacing
    for (cell, heading), (x, y) in zip(poses, xy):
        a = grid.heading_angle(int(heading))
        ax.plot([x, x + length * math.cos(a)], [y, y + length * math.sin(a)], "-", c=colour, lw=1.2, zorder=6)
    ax.scatter(*xy[0], marker=style.START_MARKER, s=70, fc="white", ec=colour, lw=2, zorder=8)
    ax.scatter(*xy[-1], marker=style.END_MARKER, s=60, fc=colour, ec="k", lw=0.8, zorder=8)
    hit = [int(s) for s in collided if 0 < int(s) < len(poses)]
    if hit:
        ax.scatter(xy[hit, 0], xy[hit, 1], marker=style.COLLISION_MARKER, s=60, c="k", lw=1.8, zorder=9, gid="blocked")


def draw_sources(ax, sources: Sequence[SourceMark], standoff_m: float) -> None:
    """Target and distractors with their stand-off rings; shapes differ by role."""
    for s in sources:
        target = s.role == "target"
        colour = style.TARGET_COLOUR if target else style.DISTRACTOR_COLOUR
        ax.add_patch(Circle(tuple(s.xy), standoff_m, fill=False, ec=colour, ls="--", lw=1.1, zorder=4))
        ax.scatter(*s.xy, marker=style.TARGET_MARKER if target else style.DISTRACTOR_MARKER, s=220 if target else 110,
                   c=colour, ec="k", lw=0.6, zorder=7)
        ax.annotate(s.category, tuple(s.xy), xytext=(6, -10), textcoords="offset points", fontsize=7, color="0.1")


def legend_handles(policies: Sequence[str], with_bound: bool) -> list[Line2D]:
    """Proxy artists for the figure legend: roles by shape, policies by colour."""
    def mark(marker, label, **kw):
        return Line2D([], [], ls="none", marker=marker, label=label, **kw)

    handles = [mark(style.TARGET_MARKER, "target", ms=13, mfc=style.TARGET_COLOUR, mec="k"),
               mark(style.DISTRACTOR_MARKER, "distractor", ms=9, mfc=style.DISTRACTOR_COLOUR, mec="k"),
               Line2D([], [], ls="--", c="0.3", label="stand-off ring"),
               Line2D([], [], ls=DOORWAY_LS, lw=2.5, c=DOORWAY_COLOUR, label="doorway"),
               mark(".", "navigable cell", ms=5, mfc="0.6", mec="none"),
               mark(style.START_MARKER, "start", ms=8, mfc="white", mec="k"),
               mark(style.END_MARKER, "end", ms=7, mfc="0.5", mec="k"),
               mark(style.COLLISION_MARKER, "blocked move", ms=8, mec="k", mew=1.8)]
    if with_bound:
        handles.append(mark(style.BOUND_MARKER, "bound's pose", ms=9, mfc="white", mec=style.BOUND_COLOUR, mew=2))
    handles += [Line2D([], [], c=style.policy_colour(k), lw=2, label=p) for k, p in enumerate(policies)]
    return handles


def episode_figure(scene, grid, index: int, seed: int, rows: Mapping[str, dict], colours: Mapping[str, str],
                   sources: Sequence[SourceMark], standoff_m: float, smap: ScoreMap | None = None,
                   bound_pose: tuple[int, int] | None = None, all_policies: Sequence[str] = ()):
    """One episode's figure: a panel per policy (its path, gain and collisions) on the plan.

    ``smap`` adds the score map underlay with a colour bar in dB, ``bound_pose`` marks the oracle bound's pose.
    """
    names = list(rows)
    n = max(1, len(names))
    cols = min(COLUMNS, n)
    nrows = math.ceil(n / cols)
    lo, hi = scene.outline.min(axis=0), scene.outline.max(axis=0)
    w, h = hi - lo
    panel = 3.6
    fig, axes = style.new_figure(cols * panel * max(0.7, min(1.4, w / h)) + 1.6, nrows * panel + 1.3,
                                 nrows=nrows, ncols=cols, squeeze=False)
    vmin = vmax = None
    if smap is not None and np.isfinite(smap.score_db).any():
        vmin, vmax = np.nanpercentile(smap.score_db, [2, 98])
    artist = None
    for k, ax in enumerate(axes.flat):
        if k >= len(names):
            ax.set_visible(False)
            continue
        name = names[k]
        row = rows[name]
        draw_plan(ax, scene, grid, label_spots=False, show_spots=False, faint=True)
        if smap is not None:
            artist = draw_score_map(ax, grid, smap, vmin=vmin, vmax=vmax)
        draw_sources(ax, sources, standoff_m)
        _path(ax, grid, row["poses"], row.get("collided_steps") or [], colours[name])
        if bound_pose is not None:
            bx, by = grid.centres[bound_pose[0]]
            ax.scatter(bx, by, marker=style.BOUND_MARKER, s=80, fc="white", ec=style.BOUND_COLOUR, lw=2, zorder=9,
                       gid="bound")
        gain = row.get("gain_db")
        bound = row.get("oracle_gain_db")
        gain_text = "n/a" if gain is None else f"{gain:+.1f} dB"
        bound_text = "" if bound is None else f" (bound {bound:+.1f} dB)"
        n_hit = len(row.get("collided_steps") or [])
        ax.set_title(f"{name}: gain {gain_text}{bound_text}\n{len(row['poses']) - 1} steps, {n_hit} blocked",
                     fontsize=8.5, color=colours[name])
        ax.tick_params(labelsize=7)
    first = next(iter(rows.values()), {})
    target = next((s for s in sources if s.role == "target"), None)
    what = f"target {target.category} at {target.spot}" if target else "target"
    n_dist = sum(s.role != "target" for s in sources)
    fig.suptitle(f"Episode {index} ({first.get('scene', '?')}, seed {seed}): each policy's path, {what}, "
                 f"{n_dist} distractor(s)", fontsize=10)
    fig.legend(handles=legend_handles(all_policies or names, bound_pose is not None), loc="outside right center",
               fontsize=7.5, frameon=False)
    if artist is not None:
        bar = fig.colorbar(artist, ax=list(axes.flat), shrink=0.8, pad=0.02)
        bar.set_label(f"separator score, best heading, mean of {smap.n_windows} windows (dB)", fontsize=8)
        bar.ax.tick_params(labelsize=7)
    return fig


def arrangement_figure(scene, grid, sources: Sequence[SourceMark], standoff_m: float, smap: ScoreMap, title: str):
    """The score map of one arrangement on the plan, the best cell marked, with a colour bar in dB."""
    lo, hi = scene.outline.min(axis=0), scene.outline.max(axis=0)
    w, h = hi - lo
    fig, ax = style.new_figure(2.8 + 0.75 * w, 1.2 + 0.75 * h)
    draw_plan(ax, scene, grid, label_spots=False, show_spots=False, faint=True)
    ok = np.isfinite(smap.score_db)
    vmin, vmax = np.nanpercentile(smap.score_db, [2, 98]) if ok.any() else (None, None)
    artist = draw_score_map(ax, grid, smap, vmin=vmin, vmax=vmax)
    draw_sources(ax, sources, standoff_m)
    if ok.any():
        best = int(np.nanargmax(smap.score_db))
        bx, by = grid.centres[best]
        a = grid.heading_angle(int(smap.heading[best]))
        ax.scatter(bx, by, marker=style.BOUND_MARKER, s=80, fc="white", ec=style.BOUND_COLOUR, lw=2, zorder=9)
        ax.plot([bx, bx + TICK * grid.spacing * math.cos(a)], [by, by + TICK * grid.spacing * math.sin(a)],
                c=style.BOUND_COLOUR, lw=2, zorder=9)
    ax.set_title(title, fontsize=9.5)
    bar = fig.colorbar(artist, ax=ax, shrink=0.85, pad=0.02)
    bar.set_label(f"separator score, best heading, mean of {smap.n_windows} windows (dB)", fontsize=8)
    handles = [h for h in legend_handles([], with_bound=True) if h.get_label() not in ("start", "end", "blocked move")]
    handles[-1].set_label("best cell (its heading)")
    fig.legend(handles=handles, loc="outside right center", fontsize=7.5, frameon=False)
    return fig
