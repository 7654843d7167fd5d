"""Fixtures for tests that run the environment on small scenes: one shared cache, the scenes folder of the
including conftest (its ``scene_dir`` fixture), fast acoustics."""

from __future__ import annotations

import pytest

FAST_ACOUSTICS = {"ism_order": 2, "n_rays": 400, "max_response_s": 0.25}
ROOM = "env-test-room"


@pytest.fixture(scope="session")
def env_cache(tmp_path_factory):
    return tmp_path_factory.mktemp("env-cache")


@pytest.fixture(autouse=True)
def private_cache(env_cache, scene_dir, monkeypatch):
    """Tests share one cache (each world is built once) and see the scenes of ``scene_dir``."""
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
