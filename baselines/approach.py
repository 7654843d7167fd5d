"""The ``approach`` reference: walk to the reachable cell nearest the target, just outside its stand-off ring,
face the target and stay.

Privileged: it reads the grid, its own pose and the target's position from ``PrivilegedView``, never a score:
it is what knowing *where* the target is buys, so the oracle bound's excess over it is what the choice of
position around the target carries. Paths are breadth-first searches over (cell, heading) poses with the
environment's own moves (``view.next_pose``, which refuses the stand-off ring as it refuses walls). The goal is
chosen once, at the first step: the reachable cell nearest the target (ties: the shorter path), with the
heading that points most nearly at the target.
"""

from __future__ import annotations

from collections import deque

import numpy as np

import hearnav
from hearnav.env import Action

Pose = tuple[int, int]
MOVES = (Action.FORWARD, Action.TURN_LEFT, Action.TURN_RIGHT)


def search(view, start: Pose) -> dict[Pose, tuple[Pose, int] | None]:
    """Breadth-first tree of every pose reachable from ``start``: pose -> (parent pose, action), None at the root."""
    parent: dict[Pose, tuple[Pose, int] | None] = {start: None}
    queue = deque([start])
    while queue:
        pose = queue.popleft()
        for action in MOVES:
            nxt = tuple(view.next_pose(pose[0], pose[1], action))
            if nxt not in parent:
                parent[nxt] = (pose, action)
                queue.append(nxt)
    return parent


def actions_to(parent: dict[Pose, tuple[Pose, int] | None], goal: Pose) -> list[int]:
    """The actions of the tree's path from its root to ``goal``."""
    actions = []
    while parent[goal] is not None:
        goal, action = parent[goal]
        actions.append(int(action))
    return actions[::-1]


def facing(view, cell: int) -> int:
    """The heading at ``cell`` that points most nearly at the target."""
    dx, dy = np.asarray(view.target_xy, float) - np.asarray(view.grid.centres[cell], float)
    angles = np.array([view.grid.heading_angle(h) for h in range(view.grid.n_headings)])
    return int(np.argmin(np.abs(np.angle(np.exp(1j * (np.arctan2(dy, dx) - angles))))))


def choose_goal(view, parent: dict[Pose, tuple[Pose, int] | None]) -> Pose:
    """The reachable cell nearest the target, facing it (see the module)."""
    cells = list(dict.fromkeys(c for c, _ in parent))  # in breadth-first order of their first pose
    dist = np.hypot(*(np.asarray(view.grid.centres, float)[cells] - np.asarray(view.target_xy, float)).T)
    cell = cells[int(np.argmin(dist))]  # breadth-first order: the first of equal distances is the nearer by path
    return cell, facing(view, cell)


@hearnav.register_policy("approach")
class Approach:
    """Walks the shortest path to the best-scoring pose just outside the target's stand-off ring, then stays."""

    privileged = True

    def __init__(self) -> None:
        self.goal: Pose | None = None
        self.plan: list[int] = []
        self.expected: Pose | None = None

    def reset(self, observation: dict, info: dict) -> None:
        self.goal, self.plan, self.expected = None, [], None

    def act(self, observation: dict, info: dict) -> int:
        view = info["privileged"]
        pose = tuple(int(v) for v in view.pose)
        if self.goal is None or pose != self.expected:  # plan lazily; replan only when off the plan
            parent = search(view, pose)
            if self.goal is None:
                self.goal = choose_goal(view, parent)
            self.plan = actions_to(parent, self.goal) if self.goal in parent else []
        if not self.plan:
            self.expected = pose
            return Action.STAY
        action = self.plan.pop(0)
        self.expected = tuple(view.next_pose(pose[0], pose[1], action))
        return int(action)
