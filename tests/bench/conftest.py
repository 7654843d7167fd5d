"""The environment tests' small scene and an anechoic twin, in a session folder, for the baseline tests."""

from __future__ import annotations

import pytest
import yaml

from tests.conftest import shoebox_dict
from tests.env.conftest import small_scene
from tests.world_fixtures import ROOM, env_cache, make_env, private_cache  # noqa: F401

ANECHOIC = "bench-test-anechoic"
PAIR = "bench-test-free-pair"


def anechoic_scene() -> dict:
    """The small scene's room and spots with fully absorbing surfaces and no partition (free field)."""
    spots = small_scene()["spots"]
    return shoebox_dict(size=(7.0, 4.0, 2.7), absorption=1.0, scattering=0.0, spots=spots, spacing=0.5,
                        name=ANECHOIC, start=[0.0, 0.0, 7.0, 4.0])


def free_pair_scene() -> dict:
    """Free field (fully absorbing surfaces) with two spots 3 m apart at ear height, on one line."""
    spots = [{"name": "west", "position": [3.0, 2.5], "height": 1.5},
             {"name": "east", "position": [6.0, 2.5], "height": 1.5}]
    return shoebox_dict(size=(9.0, 5.0, 3.0), absorption=1.0, scattering=0.0, spots=spots, spacing=0.5,
                        name=PAIR, start=[0.0, 0.0, 9.0, 5.0])


@pytest.fixture(scope="session")
def scene_dir(tmp_path_factory):
    folder = tmp_path_factory.mktemp("bench-scenes")
    (folder / f"{ROOM}.yaml").write_text(yaml.safe_dump(small_scene()))
    (folder / f"{ANECHOIC}.yaml").write_text(yaml.safe_dump(anechoic_scene()))
    (folder / f"{PAIR}.yaml").write_text(yaml.safe_dump(free_pair_scene()))
    return folder
