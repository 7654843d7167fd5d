"""The training config: validated like the environment's, errors in one line through the CLI."""

from __future__ import annotations

import pytest

from hearnav.cli import main
from hearnav.errors import ConfigError
from hearnav.train.config import CONFIG_DIR, load_train_config, make_train_config


BUNDLED = sorted(p.stem for p in CONFIG_DIR.glob("*.yaml"))


def test_every_bundled_config_is_listed_here():
    assert set(BUNDLED) >= {"ppo-tiny", "smoke", "dagger-approach"}


@pytest.mark.parametrize("name", BUNDLED)
def test_bundled_configs_are_valid(name):
    # SB3's PPO splits each rollout of n_steps x n_envs steps into minibatches of batch_size (common practice:
    # a size that divides it, else SB3 warns of a truncated minibatch).
    config = load_train_config(name)
    assert config.ppo.n_steps * config.n_envs % config.ppo.batch_size == 0


def test_scenes_expand_splits_and_procedural_once_each():
    config = make_train_config({"scenes": ["maple-flat", "procedural", "maple-flat"], "env": {"procedural_pool": 2}})
    assert config.scene_names() == ("maple-flat", "gen-0", "gen-1")


@pytest.mark.parametrize("data, error", [
    ({"totl_steps": 5}, "unknown option 'totl_steps' (expected one of scenes, env, total_steps, seed, workers, "
                        "envs_per_worker, reward, reward_windows, normalize_reward, checkpoint_every, ppo, net, eval, "
                        "warm_start); did you mean 'total_steps'?"),
    ({"warm_start": {"episods": 5}}, "unknown option 'warm_start.episods' (expected one of policy, episodes, epochs, "
                                     "dagger_rounds, batch_size, learning_rate); did you mean 'episodes', 'epochs'?"),
    ({"reward": "distance"}, "option 'reward': expected 'paired' or 'end-score' (got 'distance')"),
    ({"warm_start": {"dagger_rounds": -1}}, "option 'warm_start.dagger_rounds': expected greater than or equal to 0 "
                                            "(got -1)"),
    ({"reward_windows": 0}, "option 'reward_windows': expected greater than or equal to 1 (got 0)"),
    ({"ppo": {"n_step": 5}}, "unknown option 'ppo.n_step' (expected one of n_steps, batch_size, n_epochs, "
                             "learning_rate, gamma, gae_lambda, clip_range, ent_coef, vf_coef, max_grad_norm); "
                             "did you mean 'n_steps'?"),
    ({"seed": -1}, "option 'seed': expected greater than or equal to 0 (got -1)"),
    ({"total_steps": "100"}, "option 'total_steps': expected a valid integer (got '100')"),
    ({"net": {"activation": "gelu"}}, "option 'net.activation': expected 'tanh' or 'relu' (got 'gelu')"),
    ({"ppo": {"batch_size": 7}}, "ppo.batch_size (7) must divide ppo.n_steps x workers x envs_per_worker (256) so "
                                 "no minibatch is truncated"),
    ({"env": {"scenes": "val"}}, "option 'env': give the scenes as the top-level option 'scenes' (a list of "
                                 "splits, 'procedural' or names), not under 'env' (got {'scenes': 'val'})"),
])
def test_bad_options_say_what_was_expected(data, error):
    with pytest.raises(ConfigError) as info:
        make_train_config(data)
    assert str(info.value) == error


def test_environment_options_are_checked_by_the_environment_schema():
    with pytest.raises(ConfigError, match=r"^option 'env': unknown option 'budgt' .*did you mean 'budget'\?$"):
        make_train_config({"env": {"budgt": 3}})


def test_broken_config_is_one_line_through_the_cli(tmp_path, capsys):
    path = tmp_path / "broken.yaml"
    path.write_text("total_steps: 100\nppo:\n  lerning_rate: 0.1\n")
    assert main(["train", "--config", str(path), "--out", str(tmp_path / "run")]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert err == [f"hearnav: error: {path}: unknown option 'ppo.lerning_rate' (expected one of n_steps, batch_size, "
                   f"n_epochs, learning_rate, gamma, gae_lambda, clip_range, ent_coef, vf_coef, max_grad_norm); "
                   f"did you mean 'learning_rate'?"]
    assert not (tmp_path / "run").exists()


def test_unknown_bundled_config_lists_the_names():
    with pytest.raises(ConfigError, match=r"training config 'ppo-tiyn' not found .* did you mean 'ppo-tiny'\?"):
        load_train_config("ppo-tiyn")
