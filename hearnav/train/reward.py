"""The trainer's reward: the benchmark's own end metric, handed out step by step.

The environment rewards each move on the window it hears (the paired reward): unbiased, but a turn's reward
spreads by about 2 dB and a step's by 4.5 dB while a step towards the target gains a few tenths of a dB, and a
return does not telescope (32 turns on the spot return anything from -20 to +30 dB). The benchmark scores an
episode on the ``eval_windows`` windows after it instead: ``gain_db`` is the mean over those of the end pose's
score minus the start pose's (:func:`hearnav.bench.runner.end_gain`).

:class:`EndScoreReward` gives, at each step, the change of the pose's mean score on those same windows,
r_t = Phi(pose_t) - Phi(pose_{t-1}), Phi(pose) = mean over the scored evaluation windows of S(pose, w). The
return then telescopes to Phi(end) - Phi(start), the episode's gain_db itself: a potential-based reward (Ng,
Harada & Russell, ICML 1999) whose potential is the metric. It is a training choice only: observations and the
environment's own reward are unchanged, and the benchmark never sees it.
"""

from __future__ import annotations

from typing import Any

import gymnasium as gym
import numpy as np


class EndScoreReward(gym.Wrapper):
    """Replace the reward with the change of the pose's mean score on the episode's evaluation windows; the
    environment's own reward goes to ``info["paired_reward"]``."""

    def __init__(self, env: gym.Env, windows: int | None = None):
        super().__init__(env)
        base = env.unwrapped
        self.windows = int(windows if windows is not None else base.config.eval_windows)
        self.budget = int(base.config.budget)
        self._potential = 0.0
        self._cache: dict[tuple[int, int], float] = {}

    def _phi(self, info: dict) -> float:
        """Mean score (dB) of the current pose on the evaluation windows, 0 when none is scored."""
        pose = (int(info["pose"]["cell"]), int(info["pose"]["heading"]))
        if pose not in self._cache:
            # the windows right after the episode: budget - steps windows after the one the next step hears
            base = self.env.unwrapped
            scores = base.scores_ahead([pose], self.windows, offset=self.budget - base.steps)[:, 0]
            scored = scores[~np.isnan(scores)]
            self._cache[pose] = float(scored.mean()) if scored.size else 0.0
        return self._cache[pose]

    def reset(self, **kwargs: Any) -> tuple[Any, dict]:
        obs, info = self.env.reset(**kwargs)
        self._cache = {}
        self._potential = self._phi(info)
        return obs, info

    def step(self, action: Any) -> tuple[Any, float, bool, bool, dict]:
        obs, reward, terminated, truncated, info = self.env.step(action)
        potential = self._phi(info)
        info["paired_reward"] = reward
        reward, self._potential = potential - self._potential, potential
        return obs, float(reward), terminated, truncated, info
