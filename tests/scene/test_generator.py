"""The procedural floorplan generator: determinism, validity and plausibility over many seeds."""

from __future__ import annotations


import numpy as np
import pytest

from hearnav.errors import ConfigError
from hearnav.scene import build_grid, generator, parse_text
from hearnav.scene.format import SceneSpec
from hearnav.scene.loader import dump_spec, from_dict
from tests.scene.geometry_checks import grid_moves_cross_solids

SEEDS = range(30)




@pytest.mark.parametrize("seed", [0, 7, 123456])
def test_same_seed_same_scene(seed):
    a, b = generator.generate_spec(seed), generator.generate_spec(seed)
    assert a == b
    sa, sb = generator.generate_scene(seed), generator.generate_scene(seed)
    assert np.array_equal(sa.outline, sb.outline)
    assert all(np.array_equal(x.polygon, y.polygon) for x, y in zip(sa.obstacles, sb.obstacles))
    assert sa.digest == sb.digest


def test_different_seeds_differ():
    specs = [generator.generate_spec(s) for s in range(5)]
    assert len({str(s) for s in specs}) == 5


@pytest.mark.parametrize("seed", SEEDS)
def test_generated_scene_is_valid_and_plausible(seed):
    spec = generator.generate_spec(seed)
    scene = from_dict(spec, "test")
    grid = build_grid(scene)
    assert scene.name == f"gen-{seed}"
    assert 28.0 <= scene.floor_area <= 100.0
    assert 2.4 <= scene.height <= 3.2
    assert 1.2 <= scene.ear_height <= 1.6
    assert 4 <= len(scene.spots) <= 6
    assert len(scene.obstacles) <= generator.MAX_OBSTACLES
    partitions = [ob for ob in scene.obstacles if ob.full_height]
    assert 1 <= len(partitions) <= 6
    assert 0 < grid.n_cells <= generator.MAX_CELLS
    assert grid.start_cells.size >= 3
    assert grid_moves_cross_solids(scene, grid) == 0
    rt = scene.eyring_rt60()
    # Eyring 0.25 - 0.45 s: measured T30 runs 10-30 % above, in the furnished flats' 0.3 - 0.6 s (issue 12)
    assert np.all((rt[2:4] >= 0.25) & (rt[2:4] <= 0.45))


def test_spec_survives_yaml_round_trip():
    spec = generator.generate_spec(11)
    scene = parse_text(dump_spec(SceneSpec.model_validate(spec)), "round-trip")
    assert np.array_equal(scene.outline, generator.generate_scene(11).outline)


def test_split_only_labels_the_scene():
    train, val = generator.generate_scene(3), generator.generate_scene(3, "val")
    assert val.split == "val" and train.split == "train"
    assert np.array_equal(train.outline, val.outline)
    assert [ob.name for ob in train.obstacles] == [ob.name for ob in val.obstacles]


@pytest.mark.parametrize("seed", [-1, "3", True, 2.5])
def test_bad_seed(seed):
    with pytest.raises(ConfigError, match="seed"):
        generator.generate_scene(seed)


def test_bad_split():
    with pytest.raises(ConfigError, match="split"):
        generator.generate_scene(1, "dev")


def test_parse_name():
    assert generator.parse_name("gen-42") == 42
    assert generator.parse_name("gen-") is None
    assert generator.parse_name("gen-4x") is None
    assert generator.parse_name("maple-flat") is None

