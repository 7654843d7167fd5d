"""Registering policies: decorator, entry points, module:attr and file.py:attr, and the adapter for SB3 models."""

import importlib.metadata

import numpy as np
import pytest

import hearnav
from hearnav import plugins
from hearnav.bench import registry
from hearnav.bench.policy import SB3Policy, as_policy
from hearnav.errors import PolicyError


class Fixed:
    def __init__(self, action=3):
        self.action = action

    def reset(self, obs, info):
        pass

    def act(self, obs, info):
        return self.action


def test_decorator_class_factory_and_instance():
    hearnav.register_policy("test-class")(Fixed)
    hearnav.register_policy("test-factory", lambda: Fixed(1))
    hearnav.register_policy("test-instance", Fixed(2))
    assert registry.load_policy("test-class")[1].act({}, {}) == 3
    assert registry.load_policy("test-factory")[1].act({}, {}) == 1
    assert registry.load_policy("test-instance")[1].act({}, {}) == 2
    assert {"test-class", "still", "random-walk", "face-arrival", "approach", "greedy-oracle"} <= set(
        registry.policy_names())


def test_module_and_file_references(tmp_path, monkeypatch):
    (tmp_path / "my_policies.py").write_text("class Turn:\n    def reset(self, o, i): pass\n"
                                              "    def act(self, o, i): return 1\n")
    monkeypatch.syspath_prepend(str(tmp_path))
    assert registry.load_policy("my_policies:Turn")[1].act({}, {}) == 1
    assert registry.load_policy(f"{tmp_path / 'my_policies.py'}:Turn")[1].act({}, {}) == 1


def test_entry_point_group(monkeypatch, tmp_path):
    (tmp_path / "ep_policies.py").write_text("class Stay:\n    def reset(self, o, i): pass\n"
                                              "    def act(self, o, i): return 3\n")
    monkeypatch.syspath_prepend(str(tmp_path))
    ep = importlib.metadata.EntryPoint(name="from-entry-point", value="ep_policies:Stay", group="hearnav.policies")
    monkeypatch.setattr(plugins, "entry_points", lambda group: [ep] if group == "hearnav.policies" else [])
    monkeypatch.setattr(registry.POLICIES, "_entry_points_loaded", False)
    assert registry.load_policy("from-entry-point")[1].act({}, {}) == 3


@pytest.mark.parametrize("reference, message", [
    ("stil", r"unknown policy 'stil' .*did you mean 'still'\?.*or give module:attr or path/to/file.py:attr"),
    ("nowhere.py:X", r"policy file 'nowhere.py' not found \(expected path/to/file.py:attr\)"),
    ("no_such_module_here:X", r"cannot import module 'no_such_module_here'"),
    ("hearnav:NoSuchPolicy", r"hearnav has no attribute 'NoSuchPolicy'"),
])
def test_bad_references(reference, message):
    with pytest.raises(PolicyError, match=message):
        registry.load_policy(reference)


def test_classes_needing_arguments_and_non_policies_are_refused():
    class Needs:
        def __init__(self, x):
            pass

        def reset(self, o, i):
            pass

        def act(self, o, i):
            return 0

    with pytest.raises(PolicyError, match="policy class Needs must take no arguments"):
        as_policy(Needs)
    with pytest.raises(PolicyError, match="expected a policy"):
        as_policy(42)


def test_sb3_adapter_passes_state_and_episode_start():
    class Model:
        def __init__(self):
            self.calls = []

        def predict(self, observation, state=None, episode_start=None, deterministic=True):
            self.calls.append((state, bool(episode_start[0]), deterministic))
            return np.array(2), "hidden"

    model = Model()
    policy = as_policy(model)
    assert isinstance(policy, SB3Policy)
    policy.reset({}, {})
    assert [policy.act({}, {}), policy.act({}, {})] == [2, 2]
    assert model.calls == [(None, True, True), ("hidden", False, True)]
    with pytest.raises(PolicyError, match="needs a predict"):
        SB3Policy(object())


def test_sb3_adapter_passes_only_the_keys_the_model_reads():
    from gymnasium import spaces

    class Model:
        observation_space = spaces.Dict({"a": spaces.Box(0, 1, (1,)), "b": spaces.Box(0, 1, (1,))})

        def predict(self, observation, state=None, episode_start=None, deterministic=True):
            self.seen = sorted(observation)
            return np.array(1), None

    model = Model()
    policy = as_policy(model)
    policy.reset({}, {})
    assert policy.act({"a": 0, "b": 1, "visits": 2}, {}) == 1 and model.seen == ["a", "b"]
    with pytest.raises(PolicyError, match="the model reads the observation keys a, b, but the observation lacks b; "
                                          "train the model on this environment"):
        policy.act({"a": 0}, {})
