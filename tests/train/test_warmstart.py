"""The warm start's data: a privileged teacher labels the poses whoever acts reaches (DAgger's collection)."""

from __future__ import annotations

import numpy as np
import pytest

pytest.importorskip("stable_baselines3")

from hearnav.env import Action  # noqa: E402
from hearnav.train.config import make_train_config  # noqa: E402
from hearnav.train.trainer import config_env_factory  # noqa: E402
from hearnav.train.warmstart import collect, merge  # noqa: E402
from tests.train.conftest import smoke_config  # noqa: E402

EPISODES = 4


def _collect(suite_file, student=None, round_index=0):
    config = make_train_config(smoke_config(str(suite_file), warm_start={"policy": "approach",
                                                                          "episodes": EPISODES}))
    return collect(config, config_env_factory(config, -1), student, round_index)


def test_a_privileged_teacher_labels_the_poses_the_student_reaches(suite_file):
    # DAgger (Ross, Gordon & Bagnell 2011) labels the states the learner visits with the expert's action there.
    # A student that never moves keeps the start pose, so approach (whose plan depends only on the pose and the
    # target) labels every step of an episode alike; when the teacher acts it moves, so its labels vary.
    taught = _collect(suite_file)
    still = _collect(suite_file, student=lambda obs: int(Action.STAY))
    assert taught["teacher"] == "approach" and taught["privileged"] is True
    steps = len(taught["actions"]) // EPISODES
    assert len(still["actions"]) == len(taught["actions"]) == EPISODES * steps
    per_episode = still["actions"].reshape(EPISODES, steps)
    assert (per_episode == per_episode[:, :1]).all()
    assert (per_episode[:, 0] == taught["actions"].reshape(EPISODES, steps)[:, 0]).all()  # the same first label
    assert len(set(taught["actions"].tolist())) > 1
    assert still["mean_return"] == 0.0  # the paired reward of a pose that never changes is exactly 0


def test_rounds_play_other_episodes_and_merge_keeps_every_step(suite_file):
    first, again, second = _collect(suite_file), _collect(suite_file), _collect(suite_file, round_index=1)
    assert all(np.array_equal(first["obs"][k], again["obs"][k]) for k in first["obs"])  # equal seeds, equal data
    assert not all(np.array_equal(first["obs"][k], second["obs"][k]) for k in first["obs"])
    both = merge(first, second)
    n = len(first["actions"])
    assert len(both["actions"]) == 2 * n and both["mean_return"] == second["mean_return"]
    for key in first["obs"]:
        np.testing.assert_array_equal(both["obs"][key][:n], first["obs"][key])
        np.testing.assert_array_equal(both["obs"][key][n:], second["obs"][key])
    np.testing.assert_array_equal(both["returns"], np.concatenate([first["returns"], second["returns"]]))
