"""The ``greedy-oracle`` reference: each step, the action whose next pose the separator scores best.

Privileged: it asks the environment for the separator's SI-SDR at every pose one action away
(``PrivilegedView.score``), which no agent can observe.
"""

from __future__ import annotations

import numpy as np

import hearnav
from hearnav.env import Action

# Tie order: stay first, then forward, left, right (np.argmax keeps the first maximum).
ORDER = (Action.STAY, Action.FORWARD, Action.TURN_LEFT, Action.TURN_RIGHT)


@hearnav.register_policy("greedy-oracle")
class GreedyOracle:
    """One-step look-ahead on the separator's true score."""

    privileged = True

    def reset(self, observation: dict, info: dict) -> None:
        pass

    def act(self, observation: dict, info: dict) -> int:
        view = info["privileged"]
        cell, heading = view.pose
        poses = [view.next_pose(cell, heading, a) for a in ORDER]
        return int(ORDER[int(np.argmax(view.scores(poses)))])
