"""The ``follow-bearing`` baseline: walk along the observed target bearing around what the map shows, and hold
at the stand-off ring's edge.

Not privileged. It reads only the observation's ``target`` cue (sin and cos of the bearing, relative to the
heading), the egocentric ``map`` and the heading step of ``info["embodiment"]`` at reset. No audio.

1. **Local plan.** On the map's occupancy channel (1 = cannot be entered: walls and every source's stand-off
   ring) a breadth-first search from the listener over free, 4-connected patch cells finds the cell that
   makes the most progress along the bearing, less a quarter cell per cell of path; the first step of the
   path to it gives the action (ahead: forward; left or right: turn that way; behind: turn towards the
   bearing's side). Ties go to moving ahead. With nothing to gain it turns towards the bearing, then stays.
2. **Hold.** When it faces the bearing (within half a heading step), the cell ahead is closed and the map's
   source channel shows a source within 45 degrees of the bearing, it is at a ring's edge facing the target:
   it stays for the rest of the episode. It uses the map, never a collision: the map closes every cell that a
   forward move would collide with, so it never collides where the map is complete. A distractor standing in
   the target's direction can stop it early.

Cues: with ``target_cue="bearing"`` it follows the earliest arrival's bearing (through a doorway it points at
the way round); with ``"position"`` it follows the spot's own bearing (the straight line, also through walls,
and it ignores the distance); with ``"none"`` there is nothing to follow and reset raises PolicyError.
Deterministic.
"""

from __future__ import annotations

from collections import deque

import numpy as np

import hearnav
from hearnav.env import Action, Embodiment

PATH_COST = 0.25  # progress (cells) given up per cell of path: prefer near cells of equal progress
HOLD_CONE = np.cos(np.pi / 4)  # a source within 45 degrees of the bearing is the one the bearing points at
STEPS = ((-1, 0), (0, -1), (0, 1), (1, 0))  # ahead, left, right, behind in patch rows and columns


def bearing_of(observation: dict) -> float | None:
    """The bearing (radians, counter-clockwise from the heading) of ``observation["target"]``; None if absent."""
    target = np.asarray(observation["target"], float)
    sin, cos = float(target[1]), float(target[2])
    return None if sin == 0.0 and cos == 0.0 else float(np.arctan2(sin, cos))


def first_step(free: np.ndarray, bearing: float) -> tuple[int, int] | None:
    """The first (drow, dcol) step towards the free patch cell of most progress along ``bearing`` (less
    :data:`PATH_COST` a cell of path), None when no cell beats staying."""
    size = free.shape[0]
    half = size // 2
    start = (half, half)
    first: dict[tuple[int, int], tuple[int, int] | None] = {start: None}
    depth = {start: 0}
    queue = deque([start])
    while queue:
        r, c = queue.popleft()
        for dr, dc in STEPS:
            nxt = (r + dr, c + dc)
            if 0 <= nxt[0] < size and 0 <= nxt[1] < size and free[nxt] and nxt not in first:
                first[nxt] = (dr, dc) if (r, c) == start else first[(r, c)]
                depth[nxt] = depth[(r, c)] + 1
                queue.append(nxt)
    ahead, left = np.cos(bearing), np.sin(bearing)
    value = {cell: (half - cell[0]) * ahead + (half - cell[1]) * left - PATH_COST * depth[cell] for cell in first}
    best = max(first, key=lambda cell: value[cell])  # breadth-first order: ties go to the nearer, ahead first
    return first[best] if value[best] > value[start] + 1e-9 else None


def source_ahead(sources: np.ndarray, bearing: float) -> bool:
    """Whether the map's source channel shows a source within 45 degrees of ``bearing``."""
    half = sources.shape[0] // 2
    rows, cols = np.nonzero(sources >= 0.5)
    ahead, left = half - rows, half - cols
    norm = np.hypot(ahead, left)
    cos = (ahead * np.cos(bearing) + left * np.sin(bearing)) / np.maximum(norm, 1e-9)
    return bool(np.any((norm > 0) & (cos >= HOLD_CONE)))


@hearnav.register_policy("follow-bearing")
class FollowBearing:
    """Follows the observed target bearing around mapped obstacles; holds at the ring's edge facing the target."""

    privileged = False

    def __init__(self) -> None:
        self.step: float | None = None
        self.holding = False

    def reset(self, observation: dict, info: dict) -> None:
        body = info.get("embodiment")
        if not isinstance(body, Embodiment):
            raise hearnav.PolicyError(f"follow-bearing needs info['embodiment'] at reset (expected an Embodiment, "
                                      f"got {type(body).__name__}); reset it with the info of HearNavEnv.reset")
        if bearing_of(observation) is None:
            raise hearnav.PolicyError("follow-bearing needs a target bearing in observation['target'] (expected "
                                      "target_cue 'bearing' or 'position', got all zeros: target_cue 'none'); "
                                      "make the environment with target_cue='bearing'")
        self.step, self.holding = body.heading_step, False

    def act(self, observation: dict, info: dict) -> int:
        if self.step is None:
            raise hearnav.PolicyError("follow-bearing acted before reset (expected reset(observation, info) first)")
        bearing = bearing_of(observation)
        if self.holding or bearing is None:
            return Action.STAY
        occupancy, sources = np.asarray(observation["map"][0]), np.asarray(observation["map"][1])
        half = occupancy.shape[0] // 2
        facing = abs(bearing) <= self.step / 2 + 1e-6
        if facing and occupancy[half - 1, half] >= 0.5 and source_ahead(sources, bearing):
            self.holding = True
            return Action.STAY
        step = first_step(occupancy < 0.5, bearing)
        if step == (-1, 0):
            return Action.FORWARD
        if step == (0, -1):
            return Action.TURN_LEFT
        if step == (0, 1):
            return Action.TURN_RIGHT
        if step is None and facing:
            return Action.STAY
        return Action.TURN_LEFT if bearing >= 0 else Action.TURN_RIGHT
