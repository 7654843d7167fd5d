"""The environment tests' small scene and an anechoic twin, in a session folder, for the baseline tests."""

from __future__ import annotations

import pytest
import yaml

from tests.conftest import shoebox_dict
from tests.env.conftest import small_scene
from tests.world_fixtures import ROOM, env_cache, make_env, private_cache  # noqa: F401

ANECHOIC = "bench-test-anechoic"


def anechoic_scene() -> dict:
    """The small scene's room and spots with fully absorbing surfaces and no partition (free field)."""
    spots = small_scene()["spots"]
    return shoebox_dict(size=(7.0, 4.0, 2.7), absorption=1.0, scattering=0.0, spots=spots, spacing=0.5,
                        name=ANECHOIC, start=[0.0, 0.0, 7.0, 4.0])


@pytest.fixture(scope="session")
def scene_dir(tmp_path_factory):
    folder = tmp_path_factory.mktemp("bench-scenes")
    (folder / f"{ROOM}.yaml").write_text(yaml.safe_dump(small_scene()))
    (folder / f"{ANECHOIC}.yaml").write_text(yaml.safe_dump(anechoic_scene()))
    return folder
