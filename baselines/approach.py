"""The ``approach`` reference: the shortest path to the cell nearest the target, then face the target and stay.

Privileged: it reads the grid, its own pose and the target's position from ``PrivilegedView``. The path is a
breadth-first search over (cell, heading) poses with the environment's own moves (``next_pose``), planned
once per episode and replanned only if the listener ever finds itself off the plan.
"""

from __future__ import annotations

from collections import deque

import numpy as np

import hearnav
from hearnav.env import Action
from hearnav.physics.geometry import bearing, heading_angles

Pose = tuple[int, int]


def facing_heading(view, cell: int) -> int | None:
    """The heading at ``cell`` that points most nearly at the target (None when the target is on the cell)."""
    dx, dy = np.asarray(view.target_xy, float) - np.asarray(view.grid.centres[cell], float)
    if np.hypot(dx, dy) < 1e-6:
        return None
    return int(np.argmin(np.abs(bearing(dx, dy, heading_angles(view.grid.n_headings)))))


def plan_path(view, start: Pose) -> list[int]:
    """Actions of a shortest path from ``start`` to the goal pose (nearest cell, facing the target)."""
    centres = np.asarray(view.grid.centres, float)
    goal_cell = int(np.argmin(np.hypot(*(centres - np.asarray(view.target_xy, float)).T)))
    goal_heading = facing_heading(view, goal_cell)
    parent: dict[Pose, tuple[Pose, int] | None] = {start: None}
    queue, found = deque([start]), None
    while queue:
        pose = queue.popleft()
        if pose[0] == goal_cell and goal_heading in (None, pose[1]):
            found = pose
            break
        for action in (Action.FORWARD, Action.TURN_LEFT, Action.TURN_RIGHT):
            nxt = view.next_pose(pose[0], pose[1], action)
            if nxt not in parent:
                parent[nxt] = (pose, action)
                queue.append(nxt)
    if found is None:  # the goal is unreachable: stay where we are
        return []
    actions = []
    while parent[found] is not None:
        found, action = parent[found]
        actions.append(action)
    return actions[::-1]


@hearnav.register_policy("approach")
class Approach:
    """Walks the shortest path to the target's nearest cell, turns to face it, then stays."""

    privileged = True

    def __init__(self) -> None:
        self.plan: list[int] | None = None
        self.expected: Pose | None = None

    def reset(self, observation: dict, info: dict) -> None:
        self.plan, self.expected = None, None

    def act(self, observation: dict, info: dict) -> int:
        view = info["privileged"]
        pose = tuple(int(v) for v in view.pose)
        if self.plan is None or pose != self.expected:  # plan lazily; replan only when off the plan
            self.plan = plan_path(view, pose)
        if not self.plan:
            self.expected = pose
            return Action.STAY
        action = self.plan.pop(0)
        self.expected = view.next_pose(pose[0], pose[1], action)
        return int(action)
