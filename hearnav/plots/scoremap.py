"""Score maps: the separator's score at every cell (its best heading), averaged over K windows."""

from __future__ import annotations

from dataclasses import dataclass
from collections.abc import Callable

import numpy as np
from matplotlib.collections import PatchCollection
from matplotlib.patches import Rectangle

#: Cells scored per call of the environment, so progress can be reported between calls.
CHUNK = 32


@dataclass(frozen=True)
class ScoreMap:
    """Per cell: the best heading's mean score (dB) over the scored windows, that heading, and the window count."""

    score_db: np.ndarray  # (n_cells,), NaN where no window was scored
    heading: np.ndarray  # (n_cells,) int
    n_windows: int
    offset: int


def score_map(env, n_windows: int, offset: int, progress: Callable[[int, int], None] | None = None) -> ScoreMap:
    """Score every pose of the current episode on the ``n_windows`` windows that start ``offset`` windows after
    the next one (:meth:`hearnav.env.HearNavEnv.scores_ahead`) and keep each cell's best heading.

    Parameters
    ----------
    env : HearNavEnv
        An environment after ``reset``; nothing moves.
    n_windows, offset : int
        The windows scored; the benchmark scores end poses on ``eval_windows`` windows at offset ``budget``.
    progress : callable, optional
        ``progress(done_cells, n_cells)`` after each chunk of cells.

    Returns
    -------
    ScoreMap
        The mean over windows is the same mean as the benchmark's: windows not scored (NaN) are left out.
    """
    grid = env.world.grid
    n_cells, n_headings = grid.n_cells, grid.n_headings
    means = np.full((n_cells, n_headings), np.nan)
    for start in range(0, n_cells, CHUNK):
        cells = range(start, min(n_cells, start + CHUNK))
        poses = [(c, h) for c in cells for h in range(n_headings)]
        scores = env.scores_ahead(poses, n_windows, offset=offset)
        scored = np.isfinite(scores)
        total = np.where(scored, scores, 0.0).sum(axis=0)
        count = scored.sum(axis=0)
        chunk = np.where(count > 0, total / np.maximum(count, 1), np.nan)
        means[start:start + len(cells)] = chunk.reshape(len(cells), n_headings)
        if progress is not None:
            progress(start + len(cells), n_cells)
    best = np.where(np.isfinite(means), means, -np.inf).argmax(axis=1)
    value = means[np.arange(n_cells), best]
    return ScoreMap(value, best, n_windows, offset)


def draw_score_map(ax, grid, smap: ScoreMap, cmap: str = "cividis", vmin: float | None = None,
                   vmax: float | None = None):
    """Draw a score map as one square per cell (its side the grid spacing); returns the artist for a colour bar
    (in dB). ``cividis`` is a colour map readable with colour-vision deficiencies (Nunez et al., 2018)."""
    ok = np.flatnonzero(np.isfinite(smap.score_db))
    half = grid.spacing / 2
    squares = [Rectangle(tuple(grid.centres[k] - half), grid.spacing, grid.spacing) for k in ok]
    artist = PatchCollection(squares, cmap=cmap, lw=0, alpha=0.85, zorder=0.5)
    artist.set_array(smap.score_db[ok])
    artist.set_clim(vmin, vmax)
    ax.add_collection(artist)
    return artist
