"""The ``random-walk`` baseline: uniform random actions that never walk into a wall the map shows.

The map marks cells that are not navigable; a thin partition between two navigable cells is not on it,
so a forward move across one can still collide (the pose is kept).
"""

from __future__ import annotations

import numpy as np

import hearnav
from hearnav.env import Action



@hearnav.register_policy("random-walk")
class RandomWalk:
    """Chooses uniformly among the valid actions, seeded by ``info["seed"]`` at every reset."""

    privileged = False

    def __init__(self) -> None:
        self.rng = np.random.default_rng(0)

    def reset(self, observation: dict, info: dict) -> None:
        self.rng = np.random.default_rng(int(info["seed"]))

    def act(self, observation: dict, info: dict) -> int:
        occupancy = observation["map"][0]  # egocentric: row 0 ahead, column 0 left; 1 = not navigable
        half = occupancy.shape[0] // 2
        blocked = occupancy[half - 1, half] >= 0.5  # the cell just ahead of the listener
        actions = [Action.TURN_LEFT, Action.TURN_RIGHT, Action.STAY] if blocked else list(Action)
        return int(self.rng.choice(actions))
