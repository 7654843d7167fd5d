"""The listener's actions and the one function that says where each leads."""

from __future__ import annotations

from enum import IntEnum
from typing import Protocol


class Action(IntEnum):
    """The environment's four actions (``Discrete(4)``)."""

    FORWARD = 0  # one cell along the heading; a move into a wall keeps the pose and counts as a collision
    TURN_LEFT = 1  # counter-clockwise by one heading step
    TURN_RIGHT = 2  # clockwise by one heading step
    STAY = 3

    @property
    def label(self) -> str:
        """The action's name as the documentation writes it ("forward", "turn-left", ...)."""
        return self.name.lower().replace("_", "-")


ACTION_NAMES = tuple(a.label for a in Action)


class Moves(Protocol):
    """What a transition needs of a grid."""

    n_headings: int

    def forward(self, cell: int, heading: int) -> int: ...


def next_pose(grid: Moves, cell: int, heading: int, action: int) -> tuple[int, int, bool]:
    """The pose an action leads to, and whether it collided.

    Parameters
    ----------
    grid : the scene's grid (``forward(cell, heading)`` is the cell ahead, or -1 where a wall is in the way).
    cell, heading : the pose before the action.
    action : an :class:`Action` (or its integer value).

    Returns
    -------
    ``(cell, heading, collided)``: a blocked forward move keeps the pose and collides; nothing else collides.
    """
    if action == Action.FORWARD:
        ahead = grid.forward(cell, heading)
        return (cell, heading, True) if ahead < 0 else (int(ahead), heading, False)
    if action == Action.TURN_LEFT:
        return cell, (heading + 1) % grid.n_headings, False
    if action == Action.TURN_RIGHT:
        return cell, (heading - 1) % grid.n_headings, False
    return cell, heading, False
