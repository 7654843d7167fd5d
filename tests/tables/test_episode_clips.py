"""Episodes play the stored clips: equal seeds give element-wise equal episodes whether the clips are rendered
now or opened from the store, and every source is its take looped from its offset."""

from __future__ import annotations

import shutil

import numpy as np

from hearnav.tables import sounds as clips


def rollout(env, seed: int) -> tuple[list, list]:
    """The dry signals and every observation and reward of a seeded episode."""
    obs, _ = env.reset(seed=seed)
    signals = [np.array(s.signal) for s in env.sources]
    seen = [obs]
    for action in (0, 1, 0, 2, 3, 0):
        obs, reward, _, _, _ = env.step(action)
        seen.append({**obs, "reward": np.float64(reward)})
    return signals, seen


def test_equal_seeds_give_equal_episodes_with_clips_rendered_or_opened(make_env):
    clips.forget_opened()
    shutil.rmtree(clips.sounds_dir(), ignore_errors=True)  # a cold store: the clips are rendered in this reset
    cold_signals, cold = rollout(make_env(), 5)
    assert clips.sounds_dir().is_dir()
    clips.forget_opened()  # as a new process: the clips are opened from the store
    warm_signals, warm = rollout(make_env(), 5)
    assert len(cold_signals) == len(warm_signals) >= 2
    for a, b in zip(cold_signals, warm_signals):
        np.testing.assert_array_equal(a, b)
    for a, b in zip(cold, warm):
        assert a.keys() == b.keys()
        for key in a:
            np.testing.assert_array_equal(a[key], b[key])


def test_every_source_is_its_take_looped_from_its_offset_at_its_level(make_env):
    env = make_env(sound_pool="unseen")
    for seed in range(4):
        env.reset(seed=seed)
        n = env.sources[0].signal.size
        length = clips.clip_length(n, env.fs)
        for plan, source in zip(env.plan.sources, env.sources):
            assert plan.pool == "unseen" and 0 <= plan.take < clips.TAKES
            clip = clips.render_clip(plan.category, plan.pool, plan.voice, plan.take, length, env.fs)
            want = np.roll(clip, -(plan.offset % length))[:n] * np.float32(10 ** (plan.level_db / 20))
            np.testing.assert_array_equal(source.signal, want)
