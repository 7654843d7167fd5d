"""Benchmark suites: episode seeds from numpy SeedSequence, the policy's seed, bundled suites and load errors."""

import numpy as np
import pytest
import yaml

from hearnav.bench.suites import Suite, load_suite, policy_seed, suite_names
from hearnav.errors import ConfigError


def suite(**kw) -> Suite:
    return Suite(**{"name": "s", "episodes": 5, "seed": 42, **kw})


def test_episode_seeds_are_the_spawned_children_of_the_suite_seed():
    # numpy documents SeedSequence.spawn(n) as the children SeedSequence(entropy, spawn_key=(i,)), i < n
    # (numpy.random.SeedSequence reference); each seed is a child's first 64-bit word, folded to 63 bits.
    expected = [int(np.random.SeedSequence(42, spawn_key=(i,)).generate_state(1, np.uint64)[0]) % 2**63
                for i in range(5)]
    assert suite().episode_seeds() == expected
    assert all(0 <= s < 2**63 for s in expected) and len(set(expected)) == 5


def test_episode_seeds_do_not_depend_on_the_suite_length():
    # a child depends on its index only (spawn_key), so a longer suite starts with the same episodes
    assert suite(episodes=12).episode_seeds()[:5] == suite().episode_seeds()
    assert suite(seed=43).episode_seeds()[0] != suite().episode_seeds()[0]


def test_policy_seed_is_a_32_bit_word_of_its_own_seed_sequence():
    # numpy: SeedSequence(entropy) takes a sequence of ints; generate_state(1, np.uint32) is one 32-bit word
    episodes = suite().episode_seeds()
    seeds = [policy_seed(s) for s in episodes]
    assert seeds == [int(np.random.SeedSequence([s, 1]).generate_state(1, np.uint32)[0]) for s in episodes]
    assert all(0 <= p < 2**32 for p in seeds) and len(set(seeds)) == len(seeds)
    assert all(p != s for p, s in zip(seeds, episodes))


def test_digest_changes_with_the_episodes_and_not_otherwise():
    assert suite().digest() == suite().digest() and len(suite().digest()) == 16
    assert suite(seed=43).digest() != suite().digest()
    assert suite(episodes=6).digest() != suite().digest()
    assert suite(env={"budget": 7}).digest() != suite().digest()
    # results with another target cue or stand-off ring are never compared
    assert len({suite(env={"target_cue": cue}).digest() for cue in ("bearing", "none", "position")}) == 3
    assert suite(env={"standoff_m": 0.5}).digest() != suite().digest()


def test_bundled_suites_load():
    assert {"smoke", "val", "test"} <= set(suite_names())  # the suites the README names
    smoke = load_suite("smoke")
    assert smoke.name == "smoke" and smoke.episodes >= 1


def _file(tmp_path, text: str):
    path = tmp_path / "suite.yaml"
    path.write_text(text)
    return path


@pytest.mark.parametrize("text, error", [
    (yaml.safe_dump({"name": "x", "episodes": 0, "seed": 1}),
     "episodes: Input should be greater than or equal to 1 (got 0)"),
    (yaml.safe_dump({"name": "x", "episodes": 2, "seed": 1, "bogus": 1}),
     "bogus: Extra inputs are not permitted (got 1)"),
    ("name: [x\n", "not valid YAML (while parsing a flow sequence)"),
])
def test_load_suite_errors_name_the_file_and_field(tmp_path, text, error):
    path = _file(tmp_path, text)
    with pytest.raises(ConfigError) as info:
        load_suite(str(path))
    assert str(info.value) == f"{path}: {error}"


def test_load_suite_unknown_names_and_options(tmp_path):
    with pytest.raises(ConfigError) as info:
        load_suite("smok")
    assert str(info.value) == ("suite 'smok' not found (expected a YAML file or one of "
                               f"{', '.join(suite_names())}); did you mean 'smoke'?")
    with pytest.raises(ConfigError, match=r"^suite '.*none\.yaml' not found \(expected a YAML file"):
        load_suite(str(tmp_path / "none.yaml"))
    path = _file(tmp_path, yaml.safe_dump({"name": "x", "episodes": 2, "seed": 1, "env": {"budgett": 3}}))
    with pytest.raises(ConfigError, match=r"^unknown option 'budgett' .*did you mean 'budget'\?$"):
        load_suite(str(path))
