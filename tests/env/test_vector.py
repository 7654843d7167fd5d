"""The environment under gymnasium's vector environments and stable-baselines3's SubprocVecEnv."""

import gymnasium as gym
import numpy as np

from hearnav.env import ENV_ID
from tests.env.conftest import FAST_ACOUSTICS

KW = {"scenes": ["env-test-room"], "acoustics": FAST_ACOUSTICS, "budget": 4}


def _make():
    return gym.make(ENV_ID, **KW)


def _single_rollout(seed, actions):
    env = _make()
    obs, _ = env.reset(seed=seed)
    rewards = []
    for a in actions:
        obs, r, *_ = env.step(int(a))
        rewards.append(r)
    return obs, rewards


def test_sync_vector_env_matches_single_envs():
    actions = [[0, 1], [3, 0], [2, 2]]
    venv = gym.vector.SyncVectorEnv([_make, _make])
    obs, _ = venv.reset(seed=[11, 12])
    rewards = []
    for a in actions:
        obs, r, term, trunc, info = venv.step(np.array(a))
        rewards.append(r)
    venv.close()
    for i, seed in enumerate((11, 12)):
        single_obs, single_rewards = _single_rollout(seed, [a[i] for a in actions])
        np.testing.assert_array_equal(obs["binaural"][i], single_obs["binaural"])
        np.testing.assert_allclose([r[i] for r in rewards], single_rewards, rtol=0, atol=0)


def test_async_vector_env_runs_and_agrees_with_sync():
    venv = gym.vector.AsyncVectorEnv([_make, _make], context="fork")
    obs_a, _ = venv.reset(seed=[5, 6])
    step_a = venv.step(np.array([0, 3]))
    venv.close()
    sync = gym.vector.SyncVectorEnv([_make, _make])
    obs_s, _ = sync.reset(seed=[5, 6])
    step_s = sync.step(np.array([0, 3]))
    sync.close()
    for key in obs_a:
        np.testing.assert_array_equal(obs_a[key], obs_s[key])
    np.testing.assert_array_equal(step_a[1], step_s[1])


def test_stable_baselines3_subproc_vec_env():
    from stable_baselines3.common.vec_env import SubprocVecEnv

    venv = SubprocVecEnv([_make, _make], start_method="fork")
    venv.seed(3)
    obs = venv.reset()
    assert obs["map"].shape[0] == 2
    obs, rewards, dones, infos = venv.step(np.array([1, 3]))
    assert rewards.shape == (2,) and np.all(np.isfinite(rewards))
    assert all("si_sdr_db" in info for info in infos)
    venv.close()
