"""The stand-off ring: cells near a source's spot are refused, as walls are, and starts lie outside it."""

import numpy as np
import pytest

from hearnav.env import make_config
from hearnav.env.episode import draw_episode
from hearnav.env.standoff import ring_cells
from hearnav.errors import ConfigError
from hearnav.scene.grid import build_grid
from hearnav.scene.loader import from_dict
from tests.conftest import shoebox_dict


def test_ring_cells_are_those_strictly_closer_than_the_standoff():
    scene = from_dict(shoebox_dict(size=(6.0, 4.0, 2.7), spacing=0.5, name="ring-room"), "test")
    grid = build_grid(scene)
    spot = np.array([[3.0, 2.0]])
    ring = ring_cells(grid, spot, 1.0)
    dist = np.hypot(*(grid.centres - spot[0]).T)  # Euclidean distance in the plane
    np.testing.assert_array_equal(ring, dist < 1.0)
    assert ring.sum() == 12  # cell centres on the 0.5 m lattice at (3 +- 0.25 + k 0.5, 2 +- ...) within 1 m
    assert not ring_cells(grid, spot, 0.0).any()


def _ring_of(env) -> np.ndarray:
    spots = np.array([env.world.scene.spots[p.spot].position[:2] for p in env.plan.sources])
    return ring_cells(env.world.grid, spots, env.config.standoff_m)


def test_a_move_into_the_ring_is_refused_and_counts_as_a_collision(make_env):
    env = make_env(budget=10)
    env.reset(seed=0)
    ring, grid = _ring_of(env), env.world.grid
    np.testing.assert_array_equal(env.moves.blocked, ring)
    assert ring.any()
    edge = [(c, h) for c in range(grid.n_cells) for h in range(grid.n_headings)
            if not ring[c] and grid.forward(c, h) >= 0 and ring[grid.forward(c, h)]]
    assert edge
    cell, heading = edge[0]
    env.cell, env.heading = cell, heading
    half = env.config.patch_size // 2
    assert env._obs()["map"][0][half - 1, half] == 1.0  # the map shows the ring's cell as not navigable
    *_, info = env.step(0)
    assert info["collided"] and (env.cell, env.heading) == (cell, heading)
    assert env.privileged.next_pose(cell, heading, 0) == (cell, heading)


def test_no_ring_with_a_zero_standoff(make_env):
    env = make_env(standoff_m=0.0)
    env.reset(seed=0)
    assert not env.moves.blocked.any()


def test_walks_never_enter_a_ring(make_env):
    env = make_env(budget=30)
    rng = np.random.default_rng(0)
    for seed in range(3):
        env.reset(seed=seed)
        ring = _ring_of(env)
        assert not ring[env.cell]
        for _ in range(30):
            env.step(int(rng.integers(4)))
            assert not ring[env.cell]


def _room(name: str, width: float):
    spots = [{"name": n, "position": p, "height": 1.2}
             for n, p in (("w", [1.0, 1.0]), ("x", [3.0, 1.0]), ("y", [1.0, 3.0]), ("z", [3.0, 3.0]))]
    scene = from_dict(shoebox_dict(size=(width, 4.0, 2.7), spacing=0.5, spots=spots, name=name), "test")
    return scene, build_grid(scene)


@pytest.fixture(scope="module")
def crowded_room():
    """4 x 4 m, four spots: every cell centre lies within sqrt(0.75^2 + 0.75^2) = 1.06 m of a spot."""
    return _room("crowded", 4.0)


@pytest.fixture(scope="module")
def wide_room():
    """The crowded room widened to 5.5 m: the cells beyond x = 4.1 m lie outside 1.1 m rings."""
    return _room("wide", 5.5)


def _draw(room, seed=0, **options):
    scene, grid = room
    cfg = make_config(None, scenes=[scene.name], **options)
    return draw_episode(np.random.default_rng(seed), cfg, scene.name, scene, grid)


def test_starts_lie_outside_the_rings_of_the_drawn_sources(wide_room):
    scene, grid = wide_room
    starts = set()
    for seed in range(30):
        plan = _draw(wide_room, seed, min_start_distance=1.0, standoff_m=1.1)
        xy = grid.centres[plan.start_cell]
        starts.add(plan.start_cell)
        assert min(np.hypot(*(scene.spots[p.spot].position[:2] - xy)) for p in plan.sources) >= 1.1
    assert len(starts) > 3


def test_a_standoff_that_leaves_no_start_cell_is_a_config_error(crowded_room):
    assert _draw(crowded_room, standoff_m=1.05, min_start_distance=0.0).start_cell >= 0
    with pytest.raises(ConfigError) as caught:
        _draw(crowded_room, standoff_m=1.1, min_start_distance=0.0)
    assert str(caught.value) == ("option 'standoff_m': 1.1 m leaves no start cell in scene 'crowded' (expected a "
                                 "navigable cell outside every spot's stand-off ring); lower standoff_m or choose "
                                 "other scenes")


def test_a_start_distance_the_rings_leave_no_room_for_names_the_largest(wide_room):
    scene, grid = wide_room
    spots = np.array([s.position[:2] for s in scene.spots])
    dist = np.hypot(*(grid.centres[:, None] - spots[None]).transpose(2, 0, 1))  # (cells, spots)
    outside = dist.min(axis=1) >= 1.1
    reach = dist[outside].max(axis=0)  # per spot, the farthest start cell outside every ring
    assert reach.min() < dist.max(axis=0).min()  # the rings lower the largest possible start distance
    largest = np.floor(reach.min() * 100) / 100
    with pytest.raises(ConfigError) as caught:
        _draw(wide_room, standoff_m=1.1, min_start_distance=float(largest + 0.05))
    assert str(caught.value) == (f"option 'min_start_distance': {largest + 0.05:g} m cannot be met in scene 'wide' "
                                 f"(expected at most {largest:.2f} m: no navigable cell outside the stand-off rings "
                                 f"is farther from target spot {scene.spots[int(np.argmin(reach))].name!r}); lower "
                                 f"min_start_distance or standoff_m, or choose other scenes")


@pytest.mark.parametrize("value, message", [
    (-0.5, "option 'standoff_m': expected greater than or equal to 0 (got -0.5)"),
    (6.0, "option 'standoff_m': expected less than or equal to 5 (got 6.0)"),
    (float("inf"), "option 'standoff_m': expected a finite number (got inf)"),
    ("1", "option 'standoff_m': expected a valid number (got '1')"),
])
def test_bad_standoff_values_are_config_errors(value, message):
    with pytest.raises(ConfigError) as caught:
        make_config(None, standoff_m=value)
    assert str(caught.value) == message
