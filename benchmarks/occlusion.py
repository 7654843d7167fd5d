"""Does stepping into the target's line of sight help the separator? The experiment behind occlusion_check.py.

For a target spot, every move between neighbouring cells from one where the direct path is blocked to one
where it is not is a candidate. Each candidate is scored on the same window at both cells, facing the target
as nearly as the headings allow, with a distractor at another spot.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from hearnav import sounds
from hearnav.env.worlds import World
from hearnav.listening import Source
from hearnav.physics.geometry import bearing, heading_angles
from hearnav.env.scoring import binaural_scores
from hearnav.separation import SeparationContext, get_separator


@dataclass(frozen=True)
class OcclusionResult:
    """Score (dB, against the early image at each ear) on the same window at an occluded cell and its neighbour
    in line of sight."""

    scene: str
    target: str
    occluded_cell: int
    visible_cell: int
    occluded_db: float
    visible_db: float

    @property
    def gain_db(self) -> float:
        return self.visible_db - self.occluded_db


def occlusion_moves(world: World, spot: int) -> list[tuple[int, int]]:
    """(occluded cell, neighbouring cell in line of sight) pairs for a target spot."""
    los = world.poses.line_of_sight[:, spot]
    return [(c, n) for c in np.nonzero(~los)[0] for n in world.grid.neighbours(int(c)) if los[n]]


def _facing(world: World, cell: int, xy: np.ndarray) -> tuple[int, float]:
    """The heading nearest the direction of ``xy`` and the remaining bearing (radians)."""
    dx, dy = xy - world.grid.centres[cell]
    bearings = bearing(dx, dy, heading_angles(world.grid.n_headings))
    h = int(np.argmin(np.abs(bearings)))
    return h, float(bearings[h])


def check_scene(world: World, rng: np.random.Generator, separator: str, per_spot: int = 3) -> list[OcclusionResult]:
    """Score up to ``per_spot`` occluded-to-visible moves for every spot that has one."""
    sep = get_separator(separator)
    lw = world.listening
    n = lw.signal_length(1)
    fs = lw.fs
    out = []
    for spot in range(len(world.scene.spots)):
        moves = occlusion_moves(world, spot)
        if not moves:
            continue
        other = int(rng.choice([s for s in range(len(world.scene.spots)) if s != spot]))
        target = sounds.generate("talker", "seen", int(rng.integers(sounds.pool_size("talker", "seen"))),
                                 int(rng.integers(2**31 - 1)), n / fs, fs)
        noise = sounds.generate("noise", "seen", 0, int(rng.integers(2**31 - 1)), n / fs, fs)
        srcs = [Source(spot, target), Source(other, noise)]
        xy = world.scene.spots[spot].position[:2]
        for k in rng.permutation(len(moves))[:per_spot]:
            scores = []
            for cell in moves[k]:
                heading, bearing = _facing(world, cell, xy)
                win = lw.mix(cell, heading, srcs, lw.warmup)
                est = sep(win.mixture[:, : lw.window_len], SeparationContext(fs=fs, azimuth=bearing))
                scores.append(binaural_scores(win.early[:, : lw.window_len], est)[0])
            out.append(OcclusionResult(world.scene.name, world.scene.spots[spot].name, *moves[k], *scores))
    return out
