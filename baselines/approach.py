"""The ``approach`` reference: walk to the best pose just outside the target's stand-off ring, then stay.

Privileged: it reads the grid, its own pose, the target's position and the separator's look-ahead scores from
``PrivilegedView``. Paths are breadth-first searches over (cell, heading) poses with the environment's own
moves (``view.next_pose``, which refuses the stand-off ring as it refuses walls).

The goal is chosen once, at the first step:

1. **Edge cells.** The reachable cells nearest the target: those within one grid spacing of the smallest
   distance from the target of any reachable cell. With a ring they are the cells just outside it.
2. **Best pose.** Every heading of every edge cell that the remaining budget reaches is scored by the
   separator on the next ``eval_windows`` windows (``view.scores_ahead``), and the best mean over the windows
   in which the target is scored wins (:func:`hearnav.bench.oracle.paired_gains`), ties going to the shorter
   path. Where no edge pose is within the budget,
   the nearest edge pose by path length is the goal.
"""

from __future__ import annotations

from collections import deque

import numpy as np

import hearnav
from hearnav.bench.oracle import paired_gains
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


def edge_cells(view, cells: set[int]) -> list[int]:
    """The cells of ``cells`` within one grid spacing of the smallest distance from the target among them."""
    ids = np.array(sorted(cells))
    dist = np.hypot(*(np.asarray(view.grid.centres, float)[ids] - np.asarray(view.target_xy, float)).T)
    return [int(c) for c in ids[dist <= dist.min() + view.grid.spacing + 1e-9]]


def choose_goal(view, parent: dict[Pose, tuple[Pose, int] | None]) -> Pose:
    """The best-scoring edge pose within the remaining budget, else the nearest edge pose (see the module)."""
    depth: dict[Pose, int] = {}
    for pose in parent:  # breadth-first order: a parent's depth is known before its children's
        depth[pose] = 0 if parent[pose] is None else depth[parent[pose][0]] + 1
    edge = set(edge_cells(view, {c for c, _ in parent}))
    poses = sorted((p for p in parent if p[0] in edge), key=lambda p: (depth[p], p))
    within = [p for p in poses if depth[p] <= view.steps_left]
    if not within:
        return poses[0]
    gains, _ = paired_gains(view.scores_ahead(within), 0)
    return within[int(np.argmax(gains))]  # argmax keeps the first (shortest path) of equal scores


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
