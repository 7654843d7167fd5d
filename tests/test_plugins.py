"""One plug-in mechanism: the same name rule, duplicate rule and entry-point loading for every kind."""

import importlib.metadata

import numpy as np
import pytest

from hearnav import plugins
from hearnav.bench.registry import POLICIES
from hearnav.bench.suites import Suite
from hearnav.errors import ConfigError
from hearnav.separation.registry import SEPARATORS, Separator
from hearnav.sounds.registry import REGISTRY as SOUNDS
from hearnav.sounds.registry import Category

REGISTRIES = {"separator": SEPARATORS, "sound category": SOUNDS, "policy": POLICIES}


@pytest.fixture(params=sorted(REGISTRIES))
def registry(request):
    return REGISTRIES[request.param]


@pytest.mark.parametrize("name", ["", "Upper", "two words", "9lives", "-dash", None, 3])
def test_every_kind_refuses_the_same_bad_names(registry, name):
    with pytest.raises(registry.error, match=rf"^{registry.kind} name must be a lower-case letter"):
        registry.add(name, object())


def test_every_kind_refuses_a_second_object_under_a_taken_name(registry):
    first, second = object(), object()
    registry.add("plugin-test-dup", first)
    try:
        assert registry.add("plugin-test-dup", first) is first  # the same object again: nothing changes
        with pytest.raises(registry.error, match=f"{registry.kind} 'plugin-test-dup' is already registered"):
            registry.add("plugin-test-dup", second)
    finally:
        registry.remove("plugin-test-dup")
    with pytest.raises(registry.error, match=f"unknown {registry.kind} 'plugin-test-dup'"):
        registry.get("plugin-test-dup")


def _entry(monkeypatch, registry, name, value, tmp_path, source):
    (tmp_path / "plugin_test_module.py").write_text(source)
    monkeypatch.syspath_prepend(str(tmp_path))
    ep = importlib.metadata.EntryPoint(name=name, value=value, group=registry.group)
    monkeypatch.setattr(plugins, "entry_points", lambda group: [ep] if group == registry.group else [])
    monkeypatch.setattr(registry, "_entry_points_loaded", False)


SOURCE = """
import numpy as np
def separate(mixture, ctx):
    return mixture[0].copy()
def bell(voice, pool, take, duration_s, fs):
    return np.sin(np.arange(round(duration_s * fs)) * 0.2 * (voice + 1))
bell.n_voices = {"seen": 2, "unseen": 3}
class Stay:
    def reset(self, o, i): pass
    def act(self, o, i): return 3
"""
TARGETS = {"separator": "separate", "sound category": "bell", "policy": "Stay"}


def test_every_kind_loads_its_entry_point_group(registry, monkeypatch, tmp_path):
    _entry(monkeypatch, registry, "plugin-test-ep", f"plugin_test_module:{TARGETS[registry.kind]}", tmp_path, SOURCE)
    try:
        item = registry.get("plugin-test-ep")
        assert "plugin-test-ep" in registry.names()
        if registry is SEPARATORS:
            assert isinstance(item, Separator) and not item.privileged
        elif registry is SOUNDS:
            assert isinstance(item, Category) and item.n_voices == {"seen": 2, "unseen": 3}
    finally:
        registry.remove("plugin-test-ep")


def test_a_broken_entry_point_is_one_line_naming_it(registry, monkeypatch, tmp_path):
    _entry(monkeypatch, registry, "plugin-test-bad", "plugin_test_module:missing", tmp_path, SOURCE)
    with pytest.raises(registry.error) as info:
        registry.get("plugin-test-bad")
    message = str(info.value)
    assert "\n" not in message
    assert message.startswith(f"entry point 'plugin-test-bad' of group '{registry.group}' "
                              "(plugin_test_module:missing) failed to load (AttributeError")


SMOKE = Suite(name="plugin-test", episodes=3, seed=5, env={"scenes": ["maple-flat"]})


def _draws(suite):
    from hearnav.env.episode import draw_episode
    from hearnav.scene.grid import build_grid
    from hearnav.scene.library import load_named

    cfg = suite.env_config()
    scene = load_named("maple-flat")
    grid = build_grid(scene)
    return [draw_episode(np.random.default_rng(s), cfg, "maple-flat", scene, grid) for s in suite.episode_seeds()]


def test_registering_a_category_changes_neither_episodes_nor_digest():
    from hearnav import sounds

    before, digest = _draws(SMOKE), SMOKE.digest()
    sounds.register_category("plugin-test-extra", lambda v, p, t, d, fs: np.ones(round(d * fs)))
    try:
        assert _draws(SMOKE) == before and SMOKE.digest() == digest
        uses = Suite(name="plugin-test", episodes=3, seed=5,
                     env={"scenes": ["maple-flat"], "sound_categories": ["talker", "plugin-test-extra"]})
        assert uses.digest() != digest
        assert uses.plugins()["sound:plugin-test-extra"].endswith("[seen=1,unseen=1]")
    finally:
        sounds.unregister_category("plugin-test-extra")


def test_a_changed_plug_in_changes_the_digest_of_a_suite_that_uses_it():
    from hearnav import sounds

    suite = Suite(name="plugin-test", episodes=3, seed=5,
                  env={"scenes": ["maple-flat"], "sound_categories": ["talker", "plugin-test-swap"]})
    digests = []
    for voices in (1, 2):
        sounds.register_category("plugin-test-swap", lambda v, p, t, d, fs: np.ones(round(d * fs)),
                                 {"seen": voices, "unseen": 1})
        try:
            digests.append(suite.digest())
        finally:
            sounds.unregister_category("plugin-test-swap")
    assert digests[0] != digests[1]


@pytest.mark.parametrize("env, message", [
    ({"sound_categories": ["talker", "chime"]}, r"option 'sound_categories': unknown sound category 'chime'"),
    ({"sound_categories": ["talker"], "target_category": "music"},
     r"option 'target_category': 'music' is not drawn \(expected one of sound_categories: talker\); add it"),
])
def test_sound_categories_must_be_registered_and_cover_the_targets(env, message):
    from hearnav.env import HearNavEnv

    with pytest.raises(ConfigError, match=message):
        HearNavEnv(scenes=["maple-flat"], **env)
