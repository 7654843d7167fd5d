"""The actions and the one transition function, against hand-worked grids and the environment itself."""

import pytest

from hearnav.env import ACTION_NAMES, Action, next_pose


class Corridor:
    """Five cells in a row along +x; 4 headings (0 = +x, 1 = +y, 2 = -x, 3 = -y), walls all round."""

    n_headings = 4

    def forward(self, cell: int, heading: int) -> int:
        step = {0: 1, 2: -1}.get(heading)
        if step is None or not 0 <= cell + step < 5:
            return -1
        return cell + step


def test_actions_are_the_four_documented_integers():
    # The action table of HearNavEnv's docstring, and gymnasium's Discrete(4) numbering from 0.
    assert [int(a) for a in Action] == [0, 1, 2, 3]
    assert ACTION_NAMES == ("forward", "turn-left", "turn-right", "stay")


@pytest.mark.parametrize("pose, action, expected", [
    ((2, 0), Action.FORWARD, (3, 0, False)),
    ((2, 2), Action.FORWARD, (1, 2, False)),
    ((4, 0), Action.FORWARD, (4, 0, True)),  # the east wall: the pose is kept and it collides
    ((2, 1), Action.FORWARD, (2, 1, True)),  # a side wall
    ((2, 3), Action.TURN_LEFT, (2, 0, False)),  # counter-clockwise wraps from -y to +x
    ((2, 0), Action.TURN_RIGHT, (2, 3, False)),
    ((2, 1), Action.STAY, (2, 1, False)),
])
def test_next_pose_on_a_corridor_worked_by_hand(pose, action, expected):
    assert next_pose(Corridor(), *pose, action) == expected


def test_env_steps_move_as_the_transition_says(make_env):
    env = make_env(budget=30)
    env.reset(seed=3)
    grid = env.world.grid
    for action in [0, 0, 1, 0, 0, 2, 2, 0, 0, 0, 3, 1, 0, 0, 0, 0, 0, 0, 0, 0]:
        cell, heading, collided = next_pose(grid, env.cell, env.heading, action)
        *_, info = env.step(action)
        assert (env.cell, env.heading, info["collided"]) == (cell, heading, collided)
