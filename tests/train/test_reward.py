"""The trainer's end-score reward: its return is the benchmark's own gain_db."""

from __future__ import annotations

import numpy as np
import pytest

from hearnav.bench.runner import end_gain
from hearnav.train.reward import EndScoreReward


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_the_return_telescopes_to_the_benchmarks_end_gain(make_env, seed):
    # Potential-based rewards r_t = Phi(s_t) - Phi(s_{t-1}) sum to Phi(end) - Phi(start) (Ng, Harada & Russell,
    # ICML 1999); with Phi the pose's mean score on the evaluation windows, that is the benchmark's gain_db
    # (hearnav.bench.runner.end_gain, the mean paired difference on the same windows).
    env = EndScoreReward(make_env())
    rng = np.random.default_rng(seed)
    obs, info = env.reset(seed=seed)
    start = (info["pose"]["cell"], info["pose"]["heading"])
    rewards, paired = [], []
    truncated = False
    while not truncated:
        obs, reward, terminated, truncated, info = env.step(int(rng.choice(4, p=[0.5, 0.2, 0.2, 0.1])))
        rewards.append(reward)
        paired.append(info["paired_reward"])
    end = (info["pose"]["cell"], info["pose"]["heading"])
    assert sum(rewards) == pytest.approx(end_gain(env.env, end, start)[0], abs=1e-9)
    assert len(rewards) == env.unwrapped.config.budget


def test_an_unchanged_pose_earns_exactly_zero_and_the_paired_reward_is_kept(make_env):
    # common practice: a potential-based reward is 0 for a transition that leaves the state unchanged
    env = EndScoreReward(make_env())
    env.reset(seed=4)
    _, reward, _, _, info = env.step(3)  # stay
    assert reward == 0.0 and info["paired_reward"] == 0.0


def test_fewer_windows_score_the_first_of_the_evaluation_windows(make_env):
    # The potential on K windows is the mean of the first K of the benchmark's evaluation windows (same offset).
    inner = make_env(eval_windows=4)
    env = EndScoreReward(inner, windows=2)
    obs, info = env.reset(seed=6)
    pose = (info["pose"]["cell"], info["pose"]["heading"])
    scores = inner.scores_ahead([pose], 4, offset=inner.config.budget)[:, 0]
    first = scores[:2][~np.isnan(scores[:2])]
    assert env._phi(info) == pytest.approx(float(first.mean()) if first.size else 0.0, abs=1e-12)
