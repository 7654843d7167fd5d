"""hearnav.bench.run, the library call behind ``hearnav bench``: the summary it returns and writes, resume,
progress, argument errors, and rows that round-trip through the file."""

import json

import pytest

import hearnav.bench
from hearnav.bench import code_version, run, runner
from hearnav.bench.results import EpisodeResult, encode_row, read_rows
from hearnav.bench.stats import Summary
from hearnav.bench.suites import load_suite
from hearnav.errors import ConfigError, PolicyError
from tests.env.conftest import FAST_ACOUSTICS


@pytest.fixture
def smoke():
    """The bundled smoke suite on the test room with fast acoustics, 3 episodes of 4 steps (the tests' scenes
    folder holds only the test rooms; the oracle bound of 20 steps would take minutes)."""
    suite = load_suite("smoke")
    env = {**suite.env, "scenes": ["env-test-room"], "acoustics": FAST_ACOUSTICS, "budget": 4,
           "target_category": ["talker", "noise"]}
    return suite.model_copy(update={"env": env, "episodes": 3})


def test_run_returns_what_it_writes_and_prints_nothing(smoke, tmp_path, capsys):
    calls = []
    summary = run(smoke, ["still"], tmp_path / "run", progress=lambda *a: calls.append(a))
    assert capsys.readouterr() == ("", "")  # a library prints nothing
    assert runner._worker_env is None  # the calling process keeps no environment in a module global
    assert isinstance(summary, Summary) and Summary is hearnav.bench.Summary
    assert (summary.suite, summary.suite_hash, summary.code_version) == ("smoke", smoke.digest(), code_version())
    assert summary.to_dict() == json.loads((tmp_path / "run" / "summary.json").read_text())
    assert summary.policies["still"]["ok"] == 3 and summary.failures == 0
    assert calls[0] == ("oracle bounds", 0, 3) and calls[-1] == ("smoke", 3, 3)
    assert [c for c in calls if c[0] == "smoke"] == [("smoke", k, 3) for k in range(4)]
    rows = read_rows(tmp_path / "run" / "episodes.jsonl")
    assert len(rows) == 3 and all(r["path_length_m"] == 0 for r in rows)  # standing still walks no distance
    # resume: nothing left to run, the same summary
    calls.clear()
    assert run(smoke, ["still"], tmp_path / "run", progress=lambda *a: calls.append(a)) == summary
    assert ("smoke", 0, 0) in calls and len(read_rows(tmp_path / "run" / "episodes.jsonl")) == 3


def test_episode_results_round_trip_through_json_unchanged(smoke, tmp_path):
    run(smoke, ["still", "random-walk"], tmp_path / "run")
    for row in read_rows(tmp_path / "run" / "episodes.jsonl"):
        result = EpisodeResult.from_dict(row)
        assert result.extra == {} and result.to_dict() == row
        assert EpisodeResult.from_dict(json.loads(encode_row(result))) == result


def test_run_takes_a_suite_path_and_one_reference(smoke, tmp_path):
    path = tmp_path / "smoke.yaml"
    path.write_text(json.dumps(smoke.model_dump()))  # JSON is YAML
    summary = run(str(path), "still", tmp_path / "run")
    assert list(summary.policies) == ["still"] and summary.suite_hash == smoke.digest()


@pytest.mark.parametrize("kwargs, error", [
    ({"workers": 0}, "workers (--workers) must be at least 1, got 0: use 1 for one process or more"),
    ({"save_audio": -1}, "save_audio (--save-audio) must be 0 or more, got -1: use 0 to write no audio"),
    ({"policies": []}, "expected at least one policy reference, got none: pass e.g. policies=['still']"),
])
def test_bad_arguments_fail_before_any_work(smoke, tmp_path, kwargs, error):
    with pytest.raises(ConfigError) as info:
        run(smoke, **{"policies": ["still"], "out": tmp_path / "run", **kwargs})
    assert str(info.value) == error
    assert not (tmp_path / "run").exists()


def test_unknown_policy_fails_before_any_work(smoke, tmp_path):
    with pytest.raises(PolicyError, match="unknown policy 'stil'.*did you mean 'still'"):
        run(smoke, ["still", "stil"], tmp_path / "run")
    assert not (tmp_path / "run").exists()
