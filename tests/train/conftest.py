"""The environment tests' small scene with fast acoustics, a one-episode suite on it, and a smoke training
config that trains on it in seconds."""

from __future__ import annotations

import pytest
import yaml

from tests.env.conftest import scene_dir, small_scene  # noqa: F401
from tests.world_fixtures import FAST_ACOUSTICS, ROOM, env_cache, make_env, private_cache  # noqa: F401

ENV = {"acoustics": FAST_ACOUSTICS, "budget": 6}


def smoke_config(suite: str, **changes) -> dict:
    """A training config of a few hundred steps on the small scene, evaluated on ``suite``."""
    data = {"scenes": [ROOM], "env": dict(ENV), "total_steps": 192, "seed": 7, "workers": 1,
            "checkpoint_every": 64,
            "ppo": {"n_steps": 64, "batch_size": 32, "n_epochs": 2},
            "net": {"hidden": [16, 16]},
            "eval": {"suite": suite, "episodes": 1, "every_steps": 64}}
    data.update(changes)
    return data


@pytest.fixture
def suite_file(tmp_path):
    """A one-episode suite on the small scene."""
    path = tmp_path / "one.yaml"
    path.write_text(yaml.safe_dump({"name": "one", "episodes": 1, "seed": 5, "env": {"scenes": [ROOM], **ENV}}))
    return path


@pytest.fixture
def config_file(tmp_path, suite_file):
    """The smoke training config as a YAML file."""
    path = tmp_path / "smoke-train.yaml"
    path.write_text(yaml.safe_dump(smoke_config(str(suite_file))))
    return path
