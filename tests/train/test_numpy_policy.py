"""The numpy policy: plain .npz weights only, the shipped agent, and no torch in the base install's imports."""

from __future__ import annotations

import subprocess
import sys

import numpy as np
import pytest

from hearnav.bench.registry import load_policy
from hearnav.errors import PolicyError
from hearnav.train.agents import FOLDER
from hearnav.train.numpy_policy import NumpyNetwork, NumpyPolicy, conv3x3


def _tiny_network(tmp_path, **changes):
    """A hand-made network on one key: logits = W2 tanh(W1 x + b1) + b2."""
    arrays = {"format": np.array(1), "keys": np.array(["x"]), "shape/x": np.array([2]), "activation": np.array("tanh"),
              "hidden/0/weight": np.array([[1.0, 0.0], [0.0, -1.0]], np.float32),
              "hidden/0/bias": np.zeros(2, np.float32),
              "action/weight": np.array([[1, 0], [0, 1], [-1, 0], [0, -1]], np.float32),
              "action/bias": np.zeros(4, np.float32)}
    arrays.update(changes)
    path = tmp_path / "net.npz"
    np.savez(path, **arrays)
    return path


def test_forward_pass_by_hand(tmp_path):
    net = NumpyNetwork.load(_tiny_network(tmp_path))
    x = {"x": np.array([0.5, 2.0], np.float32)}
    expected = np.array([np.tanh(0.5), np.tanh(-2.0), -np.tanh(0.5), np.tanh(2.0)], np.float32)
    np.testing.assert_allclose(net.logits(x), expected, rtol=1e-6)
    assert net.act(x) == 3


def test_conv3x3_matches_scipy_correlate2d():
    # Reference library: scipy.signal.correlate2d with zero fill ("same" size) is the cross-correlation that
    # torch.nn.Conv2d(kernel_size=3, padding=1) computes, summed over input channels.
    from scipy.signal import correlate2d

    rng = np.random.default_rng(1)
    x, w, b = rng.normal(size=(3, 5, 7)), rng.normal(size=(2, 3, 3, 3)), rng.normal(size=2)
    expected = np.stack([sum(correlate2d(x[c], w[o, c], mode="same") for c in range(3)) + b[o] for o in range(2)])
    np.testing.assert_allclose(conv3x3(x, w, b), np.maximum(expected, 0.0), rtol=1e-12, atol=1e-12)


def test_pickled_arrays_are_refused(tmp_path):
    path = _tiny_network(tmp_path, keys=np.array([object()], dtype=object))
    with pytest.raises(PolicyError, match=r"cannot be read as plain numpy arrays \(ValueError: .*allow_pickle"):
        NumpyNetwork.load(path)


def test_missing_array_and_wrong_format_are_one_line(tmp_path):
    path = _tiny_network(tmp_path)
    data = dict(np.load(path))
    del data["action/bias"]
    np.savez(path, **data)
    with pytest.raises(PolicyError, match=r"lack the array 'action/bias'"):
        NumpyNetwork.load(path)
    with pytest.raises(PolicyError, match=r"have format 3 \(expected one of 1, 2\)"):
        NumpyNetwork.load(_tiny_network(tmp_path, format=np.array(3)))
    with pytest.raises(PolicyError, match=r"lack the array 'gain/x'"):
        NumpyNetwork.load(_tiny_network(tmp_path, format=np.array(2)))


def test_input_scaling_by_hand(tmp_path):
    # Format 2 scales each key before the first layer: x * gain + offset, here a Box [0, 4] x [-2, 2] mapped to
    # [-1, 1] (the affine map of the bounds, worked by hand).
    from gymnasium import spaces

    from hearnav.train.extractor import box_scale

    gain, offset = box_scale(spaces.Box(np.array([0.0, -2.0], np.float32), np.array([4.0, 2.0], np.float32)))
    np.testing.assert_allclose(gain, [0.5, 0.5])
    np.testing.assert_allclose(offset, [-1.0, 0.0])
    net = NumpyNetwork.load(_tiny_network(tmp_path, format=np.array(2), **{"gain/x": gain, "offset/x": offset}))
    x = {"x": np.array([3.0, 1.0], np.float32)}  # scaled: [0.5, 0.5]
    expected = np.array([np.tanh(0.5), np.tanh(-0.5), -np.tanh(0.5), np.tanh(0.5)], np.float32)
    np.testing.assert_allclose(net.logits(x), expected, rtol=1e-6)
    with pytest.raises(PolicyError, match=r"input scaling of shapes \(3,\) and \(2,\) for key 'x'"):
        NumpyNetwork.load(_tiny_network(tmp_path, format=np.array(2), **{"gain/x": np.ones(3, np.float32),
                                                                         "offset/x": offset}))


def test_observation_of_another_environment_is_refused(tmp_path):
    policy = NumpyPolicy(_tiny_network(tmp_path))
    with pytest.raises(PolicyError, match=r"the observation has keys and shapes \{'x': \(3,\)\}, but the network "
                                          r"was trained on \{'x': \(2,\)\}"):
        policy.reset({"x": np.zeros(3, np.float32)}, {})


def test_keys_the_network_was_not_trained_on_are_ignored(tmp_path):
    policy = NumpyPolicy(_tiny_network(tmp_path))
    x = np.array([0.5, 2.0], np.float32)
    policy.reset({"x": x, "visits": np.ones((3, 3), np.float32)}, {})  # a key added to the environment later
    assert policy.act({"x": x, "visits": np.ones((3, 3), np.float32)}, {}) == policy.act({"x": x}, {}) == 3
    with pytest.raises(PolicyError, match=r"the observation has keys and shapes \{'visits': \(3, 3\)\}, but the "
                                          r"network was trained on \{'x': \(2,\)\}"):
        policy.reset({"visits": np.ones((3, 3), np.float32)}, {})


def test_shipped_agent_plays_the_environment(make_env):
    name, policy = load_policy("ppo-tiny")
    assert name == "ppo-tiny" and policy.privileged is False
    assert (FOLDER / "ppo-tiny.npz").is_file() and (FOLDER / "ppo-tiny.json").is_file()
    env = make_env()
    obs, info = env.reset(seed=3)
    policy.reset(obs, info)
    actions = [policy.act(obs, info) for _ in range(3)]
    assert all(a in range(4) for a in actions) and len(set(actions)) == 1  # deterministic on one observation


def test_base_imports_never_load_torch_or_stable_baselines3():
    code = ("import sys, hearnav, hearnav.cli.main, hearnav.bench, hearnav.bench.runner, hearnav.env\n"
            "from hearnav.bench.registry import load_policy, policy_names\n"
            "from hearnav.cli.main import build_parser\npolicy_names(); load_policy('ppo-tiny'); build_parser()\n"
            "print(sorted({m.split('.')[0] for m in sys.modules} & {'torch', 'stable_baselines3'}))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert out.strip() == "[]"


def test_model_file_references(tmp_path):
    path = _tiny_network(tmp_path)
    name, policy = load_policy(f"npz:{path}")
    assert name == f"npz:{path}" and isinstance(policy, NumpyPolicy) and policy.privileged is False
    with pytest.raises(PolicyError) as info:
        load_policy("npz:")
    assert str(info.value) == "policy 'npz:' names no file (expected npz:path/to/agent.npz)"
    with pytest.raises(PolicyError) as info:
        load_policy(f"ppo:{tmp_path / 'missing.zip'}")
    assert str(info.value) == (f"SB3 model '{tmp_path / 'missing.zip'}' not found (expected a .zip saved by "
                               f"training, e.g. DIR/best.zip)")


# An import hook that makes torch and stable-baselines3 missing, as on the base install (not sys.modules[...] =
# None: scipy looks torch up in sys.modules and would fail on None).
BLOCK_TORCH = ("import sys\n"
               "class Missing:\n"
               "    def find_spec(self, name, path=None, target=None):\n"
               "        if name.partition('.')[0] in ('torch', 'stable_baselines3'):\n"
               "            raise ModuleNotFoundError(f'No module named {name!r}')\n"
               "sys.meta_path.insert(0, Missing())\n")


@pytest.mark.slow
def test_without_torch_the_shipped_agent_benchmarks_and_model_files_say_what_to_install(tmp_path):
    suite = tmp_path / "one.yaml"
    import yaml

    from tests.train.conftest import ENV, ROOM

    suite.write_text(yaml.safe_dump({"name": "one", "episodes": 1, "seed": 5, "env": {"scenes": [ROOM], **ENV}}))
    run = lambda *args: subprocess.run(  # noqa: E731
        [sys.executable, "-c", BLOCK_TORCH + "from hearnav.cli.main import main; sys.exit(main(sys.argv[1:]))", *args],
        capture_output=True, text=True)
    done = run("bench", "--policy", "ppo-tiny", "--suite", str(suite), "--out", str(tmp_path / "b"))
    assert done.returncode == 0, done.stderr[-1000:]
    model = run("bench", "--policy", "ppo:x.zip", "--suite", str(suite), "--out", str(tmp_path / "c"))
    assert model.returncode == 2
    assert model.stderr.strip().splitlines() == [
        "hearnav: error: loading the SB3 model 'x.zip' needs torch and stable-baselines3, which are not installed "
        "(No module named 'stable_baselines3'); install the train extra: pip install 'hearnav[train]'"]
    trainer = run("train", "--config", "smoke", "--out", str(tmp_path / "t"))
    assert trainer.returncode == 2 and trainer.stderr.strip().splitlines() == [
        "hearnav: error: hearnav train needs torch and stable-baselines3, which are not installed (No module named "
        "'stable_baselines3'); install the train extra: pip install 'hearnav[train]'"]
