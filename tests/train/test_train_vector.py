"""hearnav.train.vector (named apart from tests/env/test_vector.py): GroupVecEnv steps like stable-baselines3's
DummyVecEnv, environment for environment."""

from __future__ import annotations

import gymnasium as gym
import numpy as np
import pytest

from hearnav.train.vector import GroupVecEnv


def _cartpole():
    return gym.make("CartPole-v1")


@pytest.mark.parametrize("workers", [1, 3])
def test_matches_dummy_vec_env_element_wise(workers):
    # Reference library: stable-baselines3's DummyVecEnv defines the VecEnv semantics (auto-reset, the last
    # observation in info["terminal_observation"], TimeLimit.truncated, seeds seed + index); CartPole-v1 ends
    # episodes often, so resets happen inside the 300 steps.
    from stable_baselines3.common.vec_env import DummyVecEnv

    fns = [_cartpole] * 5
    ours, ref = GroupVecEnv(fns, workers), DummyVecEnv(fns)
    try:
        for venv in (ours, ref):
            venv.seed(11)
        np.testing.assert_array_equal(ours.reset(), ref.reset())
        rng = np.random.default_rng(3)
        ends = 0
        for _ in range(300):
            actions = rng.integers(2, size=5)
            a, b = ours.step(actions), ref.step(actions)
            for x, y in zip(a[:3], b[:3]):
                np.testing.assert_array_equal(x, y)
            for i, j in zip(a[3], b[3]):
                assert i.keys() == j.keys()
                if "terminal_observation" in j:
                    np.testing.assert_array_equal(i["terminal_observation"], j["terminal_observation"])
                    assert i["TimeLimit.truncated"] == j["TimeLimit.truncated"]
                    ends += 1
        assert ends > 5
        assert ours.get_attr("spec", indices=[4])[0].id == "CartPole-v1"
        assert ours.env_method("get_wrapper_attr", "np_random", indices=0)[0] is not None
        assert ours.env_is_wrapped(gym.wrappers.TimeLimit) == [True] * 5
    finally:
        ours.close()
        ref.close()


def test_groups_split_the_environments_over_the_workers():
    venv = GroupVecEnv([_cartpole] * 5, 2)
    try:
        assert venv.groups == [[0, 1, 2], [3, 4]] and len(venv.processes) == 2 and venv.num_envs == 5
    finally:
        venv.close()
