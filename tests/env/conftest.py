"""A small two-room scene and fast acoustics so that environment tests build their world in about a second."""

from __future__ import annotations

import pytest
import yaml

from tests.conftest import shoebox_dict
from tests.world_fixtures import FAST_ACOUSTICS, env_cache, make_env, private_cache  # noqa: F401


def small_scene() -> dict:
    """A 7 x 4 m room split by a partition with a doorway, five spots."""
    spots = [
        {"name": "a", "position": [1.0, 1.0], "height": 1.2},
        {"name": "b", "position": [6.0, 3.0], "height": 1.0},
        {"name": "c", "position": [6.0, 1.0], "height": 1.5},
        {"name": "d", "position": [1.0, 3.2], "height": 1.1},
        {"name": "e", "position": [3.0, 3.4], "height": 1.4},
    ]
    wall = [{"name": "wall", "partition": {"start": [4.0, 0.0], "end": [4.0, 2.5], "thickness": 0.1},
             "height": "ceiling", "material": "plasterboard"}]
    data = shoebox_dict(size=(7.0, 4.0, 2.7), absorption=0.25, scattering=0.2, spots=spots, obstacles=wall,
                        spacing=0.5, name="env-test-room", start=[0.0, 0.0, 3.5, 4.0])
    return data


@pytest.fixture(scope="session")
def scene_dir(tmp_path_factory):
    folder = tmp_path_factory.mktemp("scenes")
    (folder / "env-test-room.yaml").write_text(yaml.safe_dump(small_scene()))
    return folder
