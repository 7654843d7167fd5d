"""Drawing an episode: the documented rules of EnvConfig and the scene format, over many seeds."""

import numpy as np
import pytest

from hearnav.env import make_config
from hearnav.env.episode import draw_episode
from hearnav.scene.grid import build_grid
from hearnav.scene.loader import from_dict
from tests.conftest import shoebox_dict


@pytest.fixture(scope="module")
def room():
    spots = [{"name": "guest", "position": [1.0, 1.0], "height": 1.2, "categories": ["talker"]},
             {"name": "clock", "position": [5.0, 3.0], "height": 0.8, "categories": ["alarm"]},
             {"name": "radio", "position": [5.0, 1.0], "height": 1.0, "categories": ["music", "talker"]},
             {"name": "fan", "position": [1.0, 3.0], "height": 2.0}]
    scene = from_dict(shoebox_dict(size=(6.0, 4.0, 2.7), spacing=0.5, spots=spots, name="draw-room"), "test")
    return scene, build_grid(scene)


def _plans(room, n=60, **options):
    scene, grid = room
    cfg = make_config(None, scenes=["draw-room"], **options)
    return cfg, [draw_episode(np.random.default_rng(seed), cfg, "draw-room", scene, grid) for seed in range(n)]


def test_equal_seeds_draw_equal_episodes(room):
    scene, grid = room
    cfg = make_config(None, scenes=["draw-room"])
    one = draw_episode(np.random.default_rng(7), cfg, "draw-room", scene, grid)
    two = draw_episode(np.random.default_rng(7), cfg, "draw-room", scene, grid)
    assert one == two


def test_sources_follow_the_config_and_the_spots(room):
    scene, grid = room
    cfg, plans = _plans(room, distractors=(1, 2), distractor_level_db=(-3.0, 4.0))
    counts = set()
    for plan in plans:
        target, *others = plan.sources
        assert target.role == "target" and target.level_db == 0.0
        assert all(s.role == "distractor" and -3.0 <= s.level_db <= 4.0 for s in others)
        counts.add(len(others))
        assert len({s.spot for s in plan.sources}) == len(plan.sources)  # one source per spot
        for s in plan.sources:
            allowed = scene.spec.spots[s.spot].categories
            assert allowed is None or s.category in allowed
    assert counts == {1, 2}


def test_target_category_limits_the_target_spots(room):
    scene, _ = room
    _, plans = _plans(room, target_category="alarm")
    assert {scene.spots[p.sources[0].spot].name for p in plans} == {"clock", "fan"}
    assert {p.sources[0].category for p in plans} == {"alarm"}


def test_start_is_a_start_cell_far_enough_from_the_target(room):
    scene, grid = room
    _, plans = _plans(room, min_start_distance=2.5)
    for plan in plans:
        assert plan.start_cell in set(grid.start_cells.tolist())
        target = scene.spots[plan.sources[0].spot].position[:2]
        assert np.hypot(*(grid.centres[plan.start_cell] - target)) >= 2.5
        assert 0 <= plan.start_heading < grid.n_headings
