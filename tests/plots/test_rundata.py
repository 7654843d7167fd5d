"""Reading a run folder for plots: one-line errors for a bad or empty RUN_DIR, episode and policy choices."""

import json

import pytest

from hearnav.errors import ConfigError
from hearnav.plots.rundata import Run, check_policies, episode_indices, load_run


def test_missing_folder(tmp_path):
    with pytest.raises(ConfigError) as err:
        load_run(tmp_path / "nope")
    assert str(err.value) == (f"RUN_DIR '{tmp_path / 'nope'}': expected a benchmark run folder, found nothing there; "
                              f"give the --out folder of a finished 'hearnav bench' run")


def test_a_file_is_no_run_folder(tmp_path):
    (tmp_path / "f").write_text("x")
    with pytest.raises(ConfigError, match="expected a benchmark run folder, found a file;"):
        load_run(tmp_path / "f")


def test_folder_without_rows(tmp_path):
    with pytest.raises(ConfigError) as err:
        load_run(tmp_path)
    assert str(err.value) == (f"RUN_DIR '{tmp_path}': expected a benchmark run folder holding episodes.jsonl, found "
                              f"none; give the --out folder of a finished 'hearnav bench' run")


def test_empty_rows_file(tmp_path):
    (tmp_path / "episodes.jsonl").write_text("")
    with pytest.raises(ConfigError) as err:
        load_run(tmp_path)
    assert str(err.value) == (f"RUN_DIR '{tmp_path}': expected episode rows in episodes.jsonl, found an empty file "
                              f"(the run finished no episode); rerun 'hearnav bench' into it")
    assert "\n" not in str(err.value)


def test_rows_without_summary_still_load(tmp_path):
    (tmp_path / "episodes.jsonl").write_text(json.dumps({"policy": "a", "episode_seed": 1, "status": "ok"}) + "\n")
    run = load_run(tmp_path)
    assert run.summary is None and run.policies == ["a"] and run.manifest == {}


RUN = Run(None, [{"policy": p, "episode_seed": k, "episode_index": k, "status": "ok"} for p in ("a", "b")
                 for k in range(5)], {}, None)


@pytest.mark.parametrize("episodes, first, expected", [(None, None, [0, 1, 2]), ("3,1", None, [3, 1]),
                                                        (None, 2, [0, 1]), (None, 9, [0, 1, 2, 3, 4])])
def test_episode_choices(episodes, first, expected):
    assert episode_indices(RUN, episodes, first) == expected


def test_bad_episode_choices():
    with pytest.raises(ConfigError) as err:
        episode_indices(RUN, "1,x", None)
    assert str(err.value) == "--episodes '1,x': expected indices separated by commas such as 0,3,7; give whole numbers"
    with pytest.raises(ConfigError) as err:
        episode_indices(RUN, "2,7", None)
    assert str(err.value) == "--episodes: expected indices of this run's episodes (0..4), found [7]; choose among those"
    with pytest.raises(ConfigError, match=r"^--first 0: expected a positive number"):
        episode_indices(RUN, None, 0)


def test_unknown_policy_names_the_close_one():
    assert check_policies(RUN, ["b"]) == ["b"] and check_policies(RUN, None) == ["a", "b"]
    with pytest.raises(ConfigError) as err:
        check_policies(RUN, ["c"])
    assert str(err.value) == "--policy 'c': expected a policy of this run, found none with that name; valid names: a, b"


def test_policy_order_is_fixed_reference_agents_then_privileged():
    rows = [{"policy": p, "episode_seed": 1, "status": "ok", "privileged": p == "oracle"}
            for p in ("zeta", "oracle", "still", "alpha")]
    assert Run(None, rows, {}, {"reference": "still"}).policies == ["still", "alpha", "zeta", "oracle"]
