"""The environment's small scene and fast acoustics, for tests of the store."""

from __future__ import annotations

from tests.env.conftest import scene_dir  # noqa: F401
from tests.world_fixtures import FAST_ACOUSTICS, env_cache, make_env, private_cache  # noqa: F401
