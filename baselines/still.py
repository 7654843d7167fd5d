"""The ``still`` baseline: never moves, so its score is what the start pose offers."""

from __future__ import annotations

import hearnav
from hearnav.env import Action



@hearnav.register_policy("still")
class Still:
    """Stays at the start pose for the whole episode."""

    privileged = False

    def reset(self, observation: dict, info: dict) -> None:
        pass

    def act(self, observation: dict, info: dict) -> int:
        return Action.STAY
