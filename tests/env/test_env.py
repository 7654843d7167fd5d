"""The environment against gymnasium's and stable-baselines3's checkers, its spec, and bad input."""

import gymnasium as gym
import numpy as np
import pytest

import hearnav
from hearnav.env import ENV_ID, FlatObservation, InvalidActionError
from hearnav.env.features import LEVEL_DB
from hearnav.errors import ConfigError, SceneError, SeparatorError
from hearnav.separation import register_separator
from hearnav.separation.registry import unregister_separator
from tests.env.conftest import FAST_ACOUSTICS


def _rollout(env, seed, n=6):
    rng = np.random.default_rng(seed)
    obs, info = env.reset(seed=seed)
    out = [(obs, 0.0, info)]
    for _ in range(n):
        obs, r, term, trunc, info = env.step(int(rng.integers(4)))
        out.append((obs, r, info))
        if term or trunc:
            break
    return out


def test_registered_on_import():
    # gymnasium 1.0 dropped the loading of plug-in entry points (its 1.0.0 release notes; gymnasium/envs/
    # registration.py has no plug-in loader), so importing hearnav registers the id itself.
    assert hearnav.ENV_ID == ENV_ID == "hearnav/HearNav-v0"
    assert ENV_ID in gym.registry


def test_gymnasium_env_checker(make_env):
    from gymnasium.utils.env_checker import check_env

    env = gym.make(ENV_ID, scenes=["env-test-room"], acoustics=FAST_ACOUSTICS, budget=6)
    check_env(env.unwrapped, skip_render_check=True)


def test_stable_baselines3_env_checker(make_env):
    from stable_baselines3.common.env_checker import check_env

    check_env(make_env(), warn=False)


def test_types_and_spaces(make_env):
    # SB3's checker wants a float reward and bool flags (stable_baselines3/common/env_checker.py,
    # _check_returned_values: isinstance(reward, (float, int)), isinstance(terminated, bool)).
    env = make_env()
    obs, info = env.reset(seed=0)
    assert env.observation_space.contains(obs)
    obs, r, term, trunc, info = env.step(3)
    assert type(r) is float and type(term) is bool and type(trunc) is bool
    assert env.observation_space.contains(obs)
    for key, space in env.observation_space.spaces.items():
        assert space.dtype == np.float32 and np.all(np.isfinite(space.low)) and np.all(np.isfinite(space.high)), key


def test_same_seed_same_episode(make_env):
    # Project rule: equal seeds give element-wise equal observations, rewards and infos.
    a, b = _rollout(make_env(), 7), _rollout(make_env(), 7)
    assert len(a) == len(b)
    for (oa, ra, ia), (ob, rb, ib) in zip(a, b):
        for key in oa:
            np.testing.assert_array_equal(oa[key], ob[key])
        assert ra == rb and ia == ib
    c = _rollout(make_env(), 8)
    assert c[0][2]["sources"] != a[0][2]["sources"] or c[0][2]["pose"] != a[0][2]["pose"]


def test_the_reward_is_the_move_scored_on_the_same_window(make_env):
    # The paired reward (issue 13's definition): r_t = S(pose_t, w_t) - S(pose_t-1, w_t). Check it against
    # the previous pose scored again, independently, on the window just heard (scores_ahead one window back).
    env = make_env(budget=12)
    rng = np.random.default_rng(5)
    _, info = env.reset(seed=5)
    moved = 0
    for _ in range(12):
        before = (info["pose"]["cell"], info["pose"]["heading"])
        _, reward, _, _, info = env.step(int(rng.integers(4)))
        pose = (info["pose"]["cell"], info["pose"]["heading"])
        if pose == before or not info["target_active"]:
            assert reward == 0.0 and (info["before_si_sdr_db"] is None or pose != before)
            continue
        moved += 1
        again = env.unwrapped.scores_ahead([before, pose], 1, offset=-1)[0]
        assert info["before_si_sdr_db"] == pytest.approx(again[0], abs=1e-9)
        assert info["si_sdr_db"] == pytest.approx(again[1], abs=1e-9)
        assert reward == pytest.approx(again[1] - again[0], abs=1e-9)
    assert moved >= 3


def test_standing_still_earns_exactly_zero(make_env):
    # Issue 13's check: a listener that stays earns exactly 0 in every step of a seeded episode, whatever the
    # sound does (the window-to-window change of the score is not rewarded).
    env = make_env(budget=10)
    env.reset(seed=7)
    rewards = [env.step(3)[1] for _ in range(10)]
    assert rewards == [0.0] * 10


def test_reward_clip(make_env):
    steps = _rollout(make_env(reward_clip=0.01), 3)
    assert all(abs(r) <= 0.01 + 1e-12 for _, r, _ in steps)


def test_budget_truncates(make_env):
    env = make_env(budget=3)
    env.reset(seed=0)
    flags = [env.step(3)[2:4] for _ in range(3)]
    assert flags == [(False, False), (False, False), (False, True)]


def test_moves_turns_and_collisions(make_env):
    env = make_env(budget=30)
    env.reset(seed=1)
    grid = env.world.grid
    cell, heading = env.cell, env.heading
    env.step(1)
    assert (env.cell, env.heading) == (cell, (heading + 1) % 4)
    env.step(2)
    env.step(2)
    assert env.heading == (heading - 1) % 4
    # walk forward until blocked (a wall or a stand-off ring): the pose then stays and info says collided
    for _ in range(20):
        before = env.cell
        *_, info = env.step(0)
        if info["collided"]:
            ahead = grid.forward(before, env.heading)
            assert env.cell == before and (ahead == -1 or env.moves.blocked[ahead])
            break
    else:
        pytest.fail("never reached a wall")


def test_info_contents(make_env):
    env = make_env()
    _, info = env.reset(seed=2)
    keys = {"si_sdr_db", "full_si_sdr_db", "input_si_sdr_db", "input_full_si_sdr_db", "pose", "collided",
            "target_active", "before_si_sdr_db", "quiet_windows", "step", "scene", "sources"}
    assert set(info) == keys | {"embodiment"}
    assert info["embodiment"] is env.embodiment
    assert info["sources"][0]["role"] == "target" and 2 <= len(info["sources"]) <= 4
    assert not any("time" in key for key in info)
    assert set(env.step(3)[-1]) == keys


def test_start_is_far_enough_from_the_target_and_outside_every_ring(make_env):
    env = make_env(min_start_distance=2.0, target_cue="position", standoff_m=1.5)
    for seed in range(10):
        obs, info = env.reset(seed=seed)
        assert obs["target"][0] >= 2.0 - 1e-6
        spots = {s.name: s.position[:2] for s in env.world.scene.spots}
        xy = np.array([info["pose"]["x"], info["pose"]["y"]])
        assert min(np.hypot(*(spots[s["spot"]] - xy)) for s in info["sources"]) >= 1.5


@pytest.mark.parametrize("action", [0, 1, 3])
def test_privileged_score_matches_the_next_window(make_env, action):
    # Windows are scored after the cross-fade from the previous pose, so the privileged look-ahead score of
    # the pose an action leads to equals the score the step then reports.
    env = make_env()
    env.reset(seed=4)
    view = env.privileged
    predicted = view.score(*view.next_pose(env.cell, env.heading, action))
    *_, info = env.step(action)
    assert info["si_sdr_db"] == pytest.approx(predicted, abs=1e-9)
    assert view.privileged is True
    assert "privileged" not in env.observation_space.spaces


def test_flat_observation(make_env):
    env = FlatObservation(make_env())
    obs, _ = env.reset(seed=0)
    assert obs.ndim == 1 and obs.dtype == np.float32 and env.observation_space.contains(obs)


def test_render_rgb_array(make_env):
    env = make_env(render_mode="rgb_array")
    env.reset(seed=0)
    env.step(0)
    frame = env.render()
    assert frame.ndim == 3 and frame.shape[2] == 3 and frame.dtype == np.uint8
    red = (frame[..., 0] > 200) & (frame[..., 1] < 60) & (frame[..., 2] < 60)
    assert red.sum() > 20  # the target is drawn in red


def test_config_file_and_overrides(make_env):
    env = make_env(config="default", budget=4)
    assert env.config.budget == 4 and env.config.separator == "identity"


@pytest.mark.parametrize("options, message", [
    ({"budegt": 3}, r"unknown option 'budegt' .* did you mean 'budget'\?"),
    ({"budget": 0}, r"option 'budget': expected greater than or equal to 1 \(got 0\)"),
    ({"distractors": [3, 1]}, r"distractors must be \[min, max\] with 1 <= min <= max <= 8 \(got \[3, 1\]\)"),
    ({"acoustics": {"fss": 8000}}, r"unknown option 'acoustics.fss' .* did you mean 'fs'\?"),
    ({"patch_size": 8}, r"patch_size must be odd"),
    ({"target_category": "talkr"}, r"unknown sound category 'talkr' .* did you mean 'talker'"),
])
def test_bad_options(make_env, options, message):
    with pytest.raises(ConfigError, match=message):
        make_env(**options)


def test_unknown_separator_and_scene(make_env):
    with pytest.raises(SeparatorError, match=r"unknown separator 'mvrd' .* did you mean 'mvdr'\?"):
        make_env(separator="mvrd")
    with pytest.raises(SceneError, match=r"unknown scene 'mapel-flat'"):
        make_env(scenes=["mapel-flat"])


@pytest.mark.parametrize("action", [4, -1, 1.5, "left", None])
def test_invalid_action(make_env, action):
    env = make_env()
    env.reset(seed=0)
    with pytest.raises(InvalidActionError, match=r"action must be an integer in \[0, 3\] \(forward, turn-left, "
                                                   r"turn-right, stay\), got"):
        env.step(action)


def test_map_shows_every_blocked_neighbour(make_env):
    # The egocentric map must show a wall ahead exactly when a forward move collides (row half-1 is ahead),
    # thin partitions between two navigable cells and the stand-off ring included.
    env = make_env()
    obs, _ = env.reset(seed=0)
    half = env.config.patch_size // 2
    grid = env.world.grid
    for cell in range(grid.n_cells):
        for heading in range(grid.n_headings):
            env.cell, env.heading = cell, heading
            m = env._obs()["map"][0]
            assert (m[half - 1, half] == 1.0) == (env.moves.forward(cell, heading) < 0), (cell, heading)


def test_estimate_levels_from_the_output_spectrum_match_the_estimates_own(make_env):
    # Welch band levels (common practice) of the returned estimate against those the observation takes from
    # the separator's output spectrum: the inverse STFT is nearly consistent, so they agree closely.
    env = make_env(budget=4)
    diffs = []
    for seed in range(3):
        env.reset(seed=seed)
        for action in (0, 1, 3):
            obs, *_ = env.step(action)
            own = np.concatenate([env.features.mono_signal(ear) for ear in env.heard.estimate])
            assert env._estimate_spec is not None
            loud = own > LEVEL_DB[0] + 20
            diffs.append(np.abs(obs["estimate"] - own)[loud])
    assert np.median(np.concatenate(diffs)) < 0.1


def test_a_separator_without_the_context_synthesis_gets_levels_of_its_estimate(make_env):
    @register_separator("left-ear-test")
    def left(mixture, ctx):
        return mixture[[0, 0]].copy()

    try:
        env = make_env(separator="left-ear-test")
        obs, _ = env.reset(seed=1)
        assert env._estimate_spec is None
        assert obs["estimate"].shape == (2, *obs["binaural"].shape[1:])
        np.testing.assert_array_equal(obs["estimate"][1], env.features.mono_signal(env.heard.estimate[1])[0])
        np.testing.assert_allclose(obs["estimate"], obs["binaural"][[0, 0]], atol=1e-4)  # the left ear twice
    finally:
        unregister_separator("left-ear-test")


@pytest.mark.parametrize("bad", [np.nan, np.inf])
def test_a_separator_returning_non_finite_samples_is_an_error(make_env, bad):
    @register_separator("broken-test")
    def broken(mixture, ctx):
        out = mixture.copy()
        out[1, :3] = bad
        return out

    try:
        env = make_env(separator="broken-test")
        with pytest.raises(SeparatorError, match=r"separator 'broken-test' must return a finite \(2, \d+\) estimate, "
                                                 r"got 3 NaN or infinite samples"):
            env.reset(seed=0)
    finally:
        unregister_separator("broken-test")


def test_stepping_after_truncation_is_a_clear_error(make_env):
    # gymnasium's OrderEnforcing/PassiveEnvChecker practice: an episode that ended must be reset, not stepped.
    env = make_env(budget=2)
    env.reset(seed=0)
    env.step(3)
    assert env.step(3)[3] is True
    with pytest.raises(ConfigError, match=r"^the episode was truncated after its budget of 2 steps \(expected a "
                                          r"step within the budget\); call reset\(\) to start the next episode$"):
        env.step(3)
    env.reset(seed=1)
    env.step(3)  # a reset starts the next episode
