"""A tiny benchmark run on the small test room (3 episodes of 4 steps, three policies, audio of one episode),
made once per session, for the plot, report and command-line tests. Import these fixtures into a test module."""

from __future__ import annotations

import pytest
import yaml

from tests.env.conftest import small_scene
from tests import world_fixtures
from tests.world_fixtures import FAST_ACOUSTICS, ROOM

env_cache, private_cache = world_fixtures.env_cache, world_fixtures.private_cache

POLICIES = ["still", "random-walk", "approach"]
SUITE = {"name": "plots-test", "description": "3 short episodes on the test room", "episodes": 3, "seed": 7,
         "env": {"scenes": [ROOM], "acoustics": FAST_ACOUSTICS, "budget": 4, "eval_windows": 2,
                 "min_start_distance": 1.0, "target_category": ["talker", "music", "hum", "noise"]}}


@pytest.fixture(scope="session")
def scene_dir(tmp_path_factory):
    folder = tmp_path_factory.mktemp("plot-scenes")
    (folder / f"{ROOM}.yaml").write_text(yaml.safe_dump(small_scene()))
    return folder


@pytest.fixture(scope="session")
def suite_file(tmp_path_factory):
    path = tmp_path_factory.mktemp("plot-suite") / "plots-test.yaml"
    path.write_text(yaml.safe_dump(SUITE))
    return path


@pytest.fixture(scope="session")
def run_dir(tmp_path_factory, env_cache, scene_dir, suite_file):
    """The run folder (episodes.jsonl, run.json, summary.json, audio/)."""
    from hearnav.bench import run
    from hearnav.bench.suites import load_suite
    from hearnav.scene.library import clear_cache

    out = tmp_path_factory.mktemp("plot-run") / "run"
    with pytest.MonkeyPatch.context() as mp:
        mp.setenv("HEARNAV_CACHE", str(env_cache))
        mp.setenv("HEARNAV_SCENES", str(scene_dir))
        clear_cache()
        run(load_suite(str(suite_file)), POLICIES, out, save_audio=1)
    return out


def non_blank(path) -> bool:
    """Whether a PNG holds a drawing: not one flat colour, and not (almost) all white."""
    from matplotlib.image import imread

    pixels = imread(str(path))[..., :3]
    return float(pixels.std()) > 0.02 and float((pixels < 0.95).mean()) > 0.01


def rows_of(run_dir) -> list[dict]:
    from hearnav.bench.results import read_rows

    return read_rows(run_dir / "episodes.jsonl")
