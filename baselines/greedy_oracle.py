"""The ``greedy-oracle`` reference: each step, the action whose next pose gains most over staying, judged on
several windows.

Privileged: it asks the environment for the separator's SI-SDR at every pose one action away on the next
``eval_windows`` windows (``PrivilegedView.scores_ahead``), which no agent can observe, and takes the pose with
the best mean paired gain over the current pose (:func:`hearnav.bench.oracle.paired_gains`): the same measure
the benchmark scores an episode's end by, so one loud or quiet window does not decide the move.
"""

from __future__ import annotations

import numpy as np

import hearnav
from hearnav.bench.oracle import paired_gains
from hearnav.env import Action

# Tie order: stay first, then forward, left, right (np.argmax keeps the first maximum).
ORDER = (Action.STAY, Action.FORWARD, Action.TURN_LEFT, Action.TURN_RIGHT)


@hearnav.register_policy("greedy-oracle")
class GreedyOracle:
    """One-step look-ahead on the separator's true paired score over several windows."""

    privileged = True

    def reset(self, observation: dict, info: dict) -> None:
        pass

    def act(self, observation: dict, info: dict) -> int:
        view = info["privileged"]
        cell, heading = view.pose
        poses = [view.next_pose(cell, heading, a) for a in ORDER]
        gains, _ = paired_gains(view.scores_ahead(poses), 0)  # ORDER[0] stays: the current pose
        return int(ORDER[int(np.argmax(gains))])
