"""What ``obs["target"]`` tells for each ``target_cue``: the earliest arrival's bearing, nothing, or the position."""

import gymnasium as gym
import numpy as np
import pytest

from hearnav.env import ENV_ID
from hearnav.errors import ConfigError
from tests.env.conftest import FAST_ACOUSTICS

CUES = ("bearing", "none", "position")
PARTITION_X, DOOR_Y = 4.0, 2.5  # the small scene's partition: x = 4 m from y = 0 to the doorway at 2.5 m


def geometric_bearing(env, cell: int, heading: int) -> float:
    """The target spot's bearing from a pose, counter-clockwise from the heading: atan2 of the plan vector minus
    the heading angle, wrapped to [-pi, pi) (plane geometry, computed here independently of the tables)."""
    grid = env.world.grid
    dx, dy = env.world.scene.spots[env.plan.sources[0].spot].position[:2] - grid.centres[cell]
    return float((np.arctan2(dy, dx) - grid.heading_angle(heading) + np.pi) % (2 * np.pi) - np.pi)


def cue_at(env, cell: int, heading: int) -> np.ndarray:
    env.cell, env.heading = cell, heading
    return env._obs()["target"]


def cue_angle(cue: np.ndarray) -> float:
    return float(np.arctan2(cue[1], cue[2]))


def angle_error(a: float, b: float) -> float:
    return abs((a - b + np.pi) % (2 * np.pi) - np.pi)


def reset_with_target(env, spot: str) -> None:
    """Reset with the first seed whose target stands at ``spot``."""
    for seed in range(200):
        _, info = env.reset(seed=seed)
        if info["sources"][0]["spot"] == spot:
            return
    pytest.fail(f"no seed below 200 puts the target at {spot}")


def test_bearing_cue_is_the_geometric_bearing_in_line_of_sight(make_env):
    env = make_env()
    assert env.config.target_cue == "bearing"  # the default
    env.reset(seed=0)
    spot, grid = env.plan.sources[0].spot, env.world.grid
    seen = [c for c in range(grid.n_cells) if env._poses.line_of_sight[c, spot]]
    assert len(seen) > 10
    for cell in seen[::3]:
        for heading in range(grid.n_headings):
            cue = cue_at(env, cell, heading)
            assert cue[0] == 0.0  # no distance
            assert np.hypot(cue[1], cue[2]) == pytest.approx(1.0, abs=1e-6)
            # the earliest path in line of sight is the direct one: the plane-geometry bearing (float32 cue)
            assert angle_error(cue_angle(cue), geometric_bearing(env, cell, heading)) < 1e-3, (cell, heading)


def test_bearing_cue_points_through_the_doorway_when_the_straight_line_is_blocked(make_env):
    env = make_env()
    reset_with_target(env, "c")  # spot c (6, 1) stands behind the partition, seen from the left room
    grid = env.world.grid
    cell = grid.cell_at(np.array([2.25, 0.75]))
    spot = env.plan.sources[0].spot
    assert not env._poses.line_of_sight[cell, spot]
    x, y = grid.centres[cell]

    def crossing_y(angle: float) -> float:  # where a ray from the cell (heading 0 = +x) meets the line x = 4 m
        return float(y + (PARTITION_X - x) * np.tan(angle))

    cue = cue_at(env, cell, 0)
    # the straight line runs into the partition; the cue's ray passes the partition's end, through the doorway
    assert crossing_y(geometric_bearing(env, cell, 0)) < DOOR_Y
    assert crossing_y(cue_angle(cue)) > DOOR_Y
    # it is the direction the separator steers at, for every heading
    for heading in range(grid.n_headings):
        steer = env.context(cell, heading).azimuth
        assert angle_error(cue_angle(cue_at(env, cell, heading)), steer) < 1e-6


def test_none_cue_gives_nothing_and_position_gives_distance_and_bearing(make_env):
    none, position = make_env(target_cue="none"), make_env(target_cue="position")
    for env in (none, position):
        env.reset(seed=3)
    grid = none.world.grid
    for cell in range(0, grid.n_cells, 5):
        np.testing.assert_array_equal(cue_at(none, cell, 1), np.zeros(3, np.float32))
        cue = cue_at(position, cell, 1)
        xy = position.world.scene.spots[position.plan.sources[0].spot].position[:2]
        assert cue[0] == pytest.approx(np.hypot(*(xy - grid.centres[cell])), rel=1e-6)
        assert angle_error(cue_angle(cue), geometric_bearing(position, cell, 1)) < 1e-3


def test_only_the_target_entry_differs_between_cues(make_env):
    # The map (and everything else) does not depend on the cue: it never tells the target from the distractors.
    first = [make_env(target_cue=cue).reset(seed=5)[0] for cue in CUES]
    for obs in first[1:]:
        assert set(obs) == set(first[0])
        for key in obs:
            if key != "target":
                np.testing.assert_array_equal(obs[key], first[0][key])


@pytest.mark.parametrize("cue", CUES)
def test_gymnasium_env_checker_for_every_cue(cue):
    from gymnasium.utils.env_checker import check_env

    env = gym.make(ENV_ID, scenes=["env-test-room"], acoustics=FAST_ACOUSTICS, budget=4, target_cue=cue)
    check_env(env.unwrapped, skip_render_check=True)
    assert env.unwrapped.observation_space["target"].shape == (3,)


def test_an_unknown_cue_is_a_config_error(make_env):
    with pytest.raises(ConfigError) as caught:
        make_env(target_cue="bearings")
    assert str(caught.value) == ("option 'target_cue': expected 'bearing', 'none' or 'position' (got 'bearings')")
