"""The environment tests' small scene and an anechoic twin, in a session folder, for the baseline tests."""

from __future__ import annotations

import pytest
import yaml

from tests.conftest import shoebox_dict
from tests.env.conftest import FAST_ACOUSTICS, small_scene

ROOM, ANECHOIC = "env-test-room", "bench-test-anechoic"


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


@pytest.fixture(scope="session")
def env_cache(tmp_path_factory):
    return tmp_path_factory.mktemp("bench-cache")


@pytest.fixture(autouse=True)
def private_cache(env_cache, scene_dir, monkeypatch):
    """Baseline tests share one cache (each world is built once) and see the two small scenes."""
    monkeypatch.setenv("HEARNAV_CACHE", str(env_cache))
    monkeypatch.setenv("HEARNAV_SCENES", str(scene_dir))
    from hearnav.scene.library import clear_cache

    clear_cache()
    return env_cache


@pytest.fixture
def make_env():
    from hearnav.env import HearNavEnv

    def factory(**options):
        options.setdefault("scenes", [ROOM])
        options.setdefault("acoustics", FAST_ACOUSTICS)
        options.setdefault("budget", 6)
        return HearNavEnv(**options)

    return factory
