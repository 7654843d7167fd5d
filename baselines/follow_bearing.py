"""The ``follow-bearing`` baseline: walk along the observed target bearing around what the map shows, and hold
at the stand-off ring's edge.

Not privileged. It reads only the observation's ``target`` cue (sin and cos of the bearing, relative to the
heading), the egocentric ``map`` and the headings of ``info["embodiment"]`` at reset. No audio.

1. **Dead reckoning.** The map closes every cell that a forward move would collide with (walls and every
   source's stand-off ring), so a forward move into a cell the map shows open always succeeds: the policy
   keeps its own position relative to its start from its actions alone, and counts its visits per cell.
2. **Local plan.** On the map's occupancy channel a breadth-first search from the listener over open,
   4-connected patch cells scores each reachable cell by its progress along the bearing (cells), less a
   quarter per cell of path and half per earlier visit (so that it does not walk in circles); the first step
   of the path to the best cell gives the action (ahead: forward; left or right: turn that way; behind: turn
   towards the bearing's side). With no open cell around, it turns towards the bearing.
3. **Hold.** When it faces the bearing (within half a heading step), the cell ahead is closed and the map's
   source channel shows a source within 45 degrees of the bearing that the closed cells reach without a gap
   (a ring's disc, not a wall with open floor behind it), it is at a ring's edge facing the target: it stays
   for the rest of the episode. It never uses a collision. A distractor standing in the target's direction
   can stop it early, and with ``standoff_m = 0`` there is no ring to stop at.

Cues: with ``target_cue="bearing"`` it follows the earliest arrival's bearing (through a doorway it points
the way round); with ``"position"`` it follows the spot's own bearing (the straight line, also through walls,
and it ignores the distance); with ``"none"`` there is nothing to follow and reset raises PolicyError.
Deterministic.
"""

from __future__ import annotations

from collections import defaultdict, deque

import numpy as np

import hearnav
from hearnav.env import Action, Embodiment

PATH_COST = 0.25  # progress (cells) given up per cell of path: prefer near cells of equal progress
VISIT_COST = 1.0  # progress given up per earlier visit of a cell: leave loops
HOLD_CONE = np.cos(np.pi / 4)  # a source within 45 degrees of the bearing is the one the bearing points at
STEPS = ((-1, 0), (0, -1), (0, 1), (1, 0))  # ahead, left, right, behind in patch rows and columns
Cell = tuple[int, int]


def bearing_of(observation: dict) -> float | None:
    """The bearing (radians, counter-clockwise from the heading) of ``observation["target"]``; None if absent."""
    target = np.asarray(observation["target"], float)
    sin, cos = float(target[1]), float(target[2])
    return None if sin == 0.0 and cos == 0.0 else float(np.arctan2(sin, cos))


def open_paths(open_: np.ndarray) -> tuple[dict[Cell, Cell | None], dict[Cell, int]]:
    """Breadth-first search over the open patch cells from the centre: each reachable cell's first step
    (None at the centre) and its path length."""
    size = open_.shape[0]
    start = (size // 2, size // 2)
    first: dict[Cell, Cell | None] = {start: None}
    depth = {start: 0}
    queue = deque([start])
    while queue:
        r, c = queue.popleft()
        for dr, dc in STEPS:
            nxt = (r + dr, c + dc)
            if 0 <= nxt[0] < size and 0 <= nxt[1] < size and open_[nxt] and nxt not in first:
                first[nxt] = (dr, dc) if (r, c) == start else first[(r, c)]
                depth[nxt] = depth[(r, c)] + 1
                queue.append(nxt)
    return first, depth


def ring_ahead(occupancy: np.ndarray, sources: np.ndarray, bearing: float) -> bool:
    """Whether a source the map shows within 45 degrees of ``bearing`` sits in a closed disc that starts at the
    cell ahead: every patch cell on the straight line from there to the source is closed."""
    half = occupancy.shape[0] // 2
    for r, c in zip(*np.nonzero(sources >= 0.5)):
        ahead, left = half - r, half - c
        norm = np.hypot(ahead, left)
        if norm == 0 or (ahead * np.cos(bearing) + left * np.sin(bearing)) / norm < HOLD_CONE:
            continue
        line = np.linspace((half - 1, half), (r, c), 4 * int(np.ceil(norm)) + 2)
        if all(occupancy[int(round(y)), int(round(x))] >= 0.5 for y, x in line):
            return True
    return False


@hearnav.register_policy("follow-bearing")
class FollowBearing:
    """Follows the observed target bearing around mapped obstacles; holds at the ring's edge facing the target."""

    privileged = False

    def __init__(self) -> None:
        self.body: Embodiment | None = None
        self.holding = False
        self.position = np.zeros(2, np.int64)  # cells from the start, in the start's frame
        self.heading = 0  # heading steps from the start's heading
        self.visits: defaultdict[tuple[int, int], int] = defaultdict(int)
        self.last: tuple[int, bool] | None = None  # the last action, and whether the map showed its way open

    def reset(self, observation: dict, info: dict) -> None:
        body = info.get("embodiment")
        if not isinstance(body, Embodiment):
            raise hearnav.PolicyError(f"follow-bearing needs info['embodiment'] at reset (expected an Embodiment, "
                                      f"got {type(body).__name__}); reset it with the info of HearNavEnv.reset")
        if bearing_of(observation) is None:
            raise hearnav.PolicyError("follow-bearing needs a target bearing in observation['target'] (expected "
                                      "target_cue 'bearing' or 'position', got all zeros: target_cue 'none'); "
                                      "make the environment with target_cue='bearing'")
        self.body, self.holding = body, False
        self.position, self.heading, self.visits, self.last = np.zeros(2, np.int64), 0, defaultdict(int), None

    def _offset(self, ahead: float, left: float) -> np.ndarray:
        """Cells from the start, in the start's frame, of a point ``ahead`` and ``left`` of the listener."""
        a = self.heading * self.body.heading_step
        return np.rint([ahead * np.cos(a) - left * np.sin(a), ahead * np.sin(a) + left * np.cos(a)]).astype(np.int64)

    def _track(self) -> None:
        """Dead reckoning of the last action (a forward move the map showed open always succeeds)."""
        if self.last is not None:
            action, was_open = self.last
            if action == Action.FORWARD and was_open:
                self.position = self.position + self._offset(1, 0)
            elif action in (Action.TURN_LEFT, Action.TURN_RIGHT):
                self.heading += 1 if action == Action.TURN_LEFT else -1
        self.visits[tuple(self.position.tolist())] += 1

    def act(self, observation: dict, info: dict) -> int:
        if self.body is None:
            raise hearnav.PolicyError("follow-bearing acted before reset (expected reset(observation, info) first)")
        action = self._choose(observation)
        occupancy = np.asarray(observation["map"][0])
        half = occupancy.shape[0] // 2
        self.last = (int(action), bool(occupancy[half - 1, half] < 0.5))
        return int(action)

    def _choose(self, observation: dict) -> Action:
        bearing = bearing_of(observation)
        if self.holding or bearing is None:
            return Action.STAY
        self._track()
        occupancy, sources = np.asarray(observation["map"][0]), np.asarray(observation["map"][1])
        half = occupancy.shape[0] // 2
        facing = abs(bearing) <= self.body.heading_step / 2 + 1e-6
        if facing and occupancy[half - 1, half] >= 0.5 and ring_ahead(occupancy, sources, bearing):
            self.holding = True
            return Action.STAY
        first, depth = open_paths(occupancy < 0.5)
        ahead, left = np.cos(bearing), np.sin(bearing)

        def value(cell: Cell) -> float:
            fwd, side = half - cell[0], half - cell[1]
            seen = self.visits.get(tuple((self.position + self._offset(fwd, side)).tolist()), 0)
            return fwd * ahead + side * left - PATH_COST * depth[cell] - VISIT_COST * seen

        candidates = [cell for cell in first if first[cell] is not None]
        step = first[max(candidates, key=value)] if candidates else None  # ties: the nearer, ahead first
        if step == (-1, 0):
            return Action.FORWARD
        if step == (0, -1):
            return Action.TURN_LEFT
        if step == (0, 1):
            return Action.TURN_RIGHT
        return Action.TURN_LEFT if bearing >= 0 else Action.TURN_RIGHT
