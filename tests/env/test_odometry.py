"""The visit patch: the listener's own steps in each cell, from odometry, in the egocentric map's layout."""

import numpy as np

from hearnav.env.actions import Action
from hearnav.env.odometry import VISIT_STEPS, visit_patch
from hearnav.scene.grid import build_grid
from hearnav.scene.loader import from_dict
from hearnav.tables.maps import occupancy_patch, patch_cells
from tests.conftest import shoebox_dict


def _grid():
    return build_grid(from_dict(shoebox_dict(size=(4.0, 3.0, 2.7), spacing=0.5, name="visit-room"), "test"))


def test_visit_patch_counts_steps_per_cell_in_the_map_layout():
    grid = _grid()
    cell = grid.cell_at(np.array([2.25, 1.75]))  # inside, with a cell ahead at heading 0
    steps_in = np.zeros(grid.n_cells, np.float32)
    steps_in[cell] = 2
    ahead = grid.forward(cell, 0)
    steps_in[ahead] = 9
    ids = patch_cells(grid, cell, 0, 5)
    patch = visit_patch(steps_in, ids)
    assert patch.shape == (5, 5) and patch.dtype == np.float32
    assert patch[2, 2] == 2 / VISIT_STEPS  # the centre is the listener's own cell
    assert patch[1, 2] == 1.0  # one cell ahead, capped at 1
    assert np.count_nonzero(patch) == 2
    # off the floor the entry is 0, where the occupancy patch of the same pose shows 1 (the two share the layout)
    np.testing.assert_array_equal(ids < 0, occupancy_patch(grid, cell, 0, 5) == 1.0)


def test_env_counts_each_step_in_the_cell_it_ends_in(make_env):
    env = make_env(budget=8)
    obs, _ = env.reset(seed=1)
    half = env.config.patch_size // 2
    assert obs["visits"][half, half] == 1 / VISIT_STEPS and np.count_nonzero(obs["visits"]) == 1  # the start
    for k in range(2):
        obs, *_ = env.step(Action.STAY)
        assert obs["visits"][half, half] == (k + 2) / VISIT_STEPS
    start = env.cell
    heading = next(h for h in range(env.world.grid.n_headings) if env.moves.forward(start, h) >= 0)
    obs, *_ = env.step(Action.TURN_LEFT)  # at least one turn, then on to an open heading
    while env.heading != heading:
        obs, *_ = env.step(Action.TURN_LEFT)
    assert obs["visits"][half, half] == 1.0  # turns count as steps in the cell (capped)
    obs, *_ = env.step(Action.FORWARD)
    assert env.cell != start
    assert obs["visits"][half, half] == 1 / VISIT_STEPS and obs["visits"][half + 1, half] == 1.0  # start behind
    assert env.observation_space["visits"].contains(obs["visits"])
