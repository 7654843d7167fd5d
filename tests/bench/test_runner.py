"""hearnav bench on a tiny suite: rows, resume, worker independence, failures, the oracle bound, SB3 parity."""

import json
import subprocess
import sys

import numpy as np
import pytest
import yaml

import pyloudnorm
from scipy.signal import correlate

from hearnav.bench import run
from hearnav.bench.audio import true_peak_db
from hearnav.bench.stats import Summary
from hearnav.cli import main
from hearnav.report import format_table
from tests.env.conftest import FAST_ACOUSTICS

SUITE = {"name": "tiny", "description": "3 episodes on the test room", "episodes": 3, "seed": 5,
         "env": {"scenes": ["env-test-room"], "acoustics": FAST_ACOUSTICS, "budget": 4,
                 "target_category": ["talker", "noise"]}}


@pytest.fixture
def suite_file(tmp_path):
    path = tmp_path / "tiny.yaml"
    path.write_text(yaml.safe_dump(SUITE))
    return path


def _rows(out):
    return [json.loads(line) for line in (out / "episodes.jsonl").read_text().splitlines()]


def _bench(suite_file, out, *policies, workers=1, extra=()):
    argv = ["bench", "--suite", str(suite_file), "--out", str(out), "--workers", str(workers)]
    for p in policies:
        argv += ["--policy", p]
    return main(argv + list(extra))


def _comparable(row):
    return {k: v for k, v in row.items() if "time" not in k}


def test_rows_summary_and_resume(suite_file, tmp_path, capsys):
    out = tmp_path / "run"
    assert _bench(suite_file, out, "still", "random-walk") == 0
    printed = capsys.readouterr().out
    rows = _rows(out)
    assert len(rows) == 6 and {r["policy"] for r in rows} == {"still", "random-walk"}
    for field in ("policy", "privileged", "scene", "episode_seed", "start_si_sdr_db", "final_si_sdr_db",
                  "best_si_sdr_db", "gain_db", "mean_gain_db", "oracle_gain_db", "normalised_gain", "path_length_m", "steps",
                  "collisions", "status", "error"):
        assert all(field in r for r in rows), field
    assert all(r["target_cue"] == "bearing" for r in rows)  # rows record the cue (the default here)
    summary = json.loads((out / "summary.json").read_text())
    assert set(summary["policies"]) == {"still", "random-walk"}
    # the manifest and every row name the target cue, so results of different cues are told apart
    assert json.loads((out / "run.json").read_text())["target_cue"] == "bearing"
    assert {r["target_cue"] for r in rows} == {"bearing"}
    for entry in summary["policies"].values():
        assert entry["episodes"] == 3 and entry["failures"] == 0
        for metric in ("gain_db", "final_si_sdr_db"):
            assert set(entry[metric]) == {"mean", "ci95", "n"}
        assert set(entry["normalised_gain"]) >= {"ratio_of_means", "ci95", "median"} and entry["scenes"]
    comparison = summary["comparisons"]["random-walk"]
    assert set(comparison) >= {"mean_difference", "ci95", "wilcoxon_p"}
    # rerunning the same command resumes: nothing is run twice
    assert _bench(suite_file, out, "still", "random-walk") == 0
    assert len(_rows(out)) == 6
    # the command prints the table of the library's summary, and only that, on stdout
    assert printed == capsys.readouterr().out == format_table(run(suite_file, ["still", "random-walk"], out)) + "\n"
    assert format_table(Summary.from_dict(summary)) + "\n" == printed


def test_still_has_zero_path_and_the_oracle_bounds_every_final(suite_file, tmp_path):
    out = tmp_path / "run"
    assert _bench(suite_file, out, "still", "random-walk", "greedy-oracle", "approach") == 0
    rows = _rows(out)
    assert all(r["path_length_m"] == 0 for r in rows if r["policy"] == "still")
    for r in rows:  # the bound is the best end-of-episode gain over every reachable pose, on the same windows
        assert r["gain_db"] <= r["oracle_gain_db"] + 1e-9, r
    assert all(r["gain_db"] == 0.0 and r["mean_gain_db"] == 0.0 for r in rows if r["policy"] == "still")
    assert all(r["privileged"] for r in rows if r["policy"] in ("greedy-oracle", "approach"))


def test_one_or_two_workers_give_identical_rows(suite_file, tmp_path):
    a, b = tmp_path / "w1", tmp_path / "w2"
    assert _bench(suite_file, a, "still", "random-walk", workers=1) == 0
    assert _bench(suite_file, b, "still", "random-walk", workers=2) == 0
    key = lambda r: (r["policy"], r["episode_seed"])  # noqa: E731
    assert sorted(map(_comparable, _rows(a)), key=key) == sorted(map(_comparable, _rows(b)), key=key)


BROKEN = '''
import math

class Raises:
    def reset(self, obs, info): pass
    def act(self, obs, info): raise RuntimeError("boom")

class Invalid:
    def reset(self, obs, info): pass
    def act(self, obs, info): return 7

class NotANumber:
    def reset(self, obs, info): pass
    def act(self, obs, info): return math.nan
'''


@pytest.mark.parametrize("attr, error", [("Raises", "RuntimeError: boom"),
                                         ("Invalid", "expected an integer action in [0, 3]"),
                                         ("NotANumber", "expected an integer action in [0, 3]")])
def test_failing_policies_are_recorded_and_the_run_goes_on(suite_file, tmp_path, attr, error):
    path = tmp_path / "broken.py"
    path.write_text(BROKEN)
    out = tmp_path / "run"
    assert _bench(suite_file, out, f"{path}:{attr}", "still") == 1
    rows = _rows(out)
    bad = [r for r in rows if r["policy"] != "still"]
    assert len(bad) == 3 and all(r["status"] == "failed" and error in r["error"] for r in bad)
    assert all(r["status"] == "ok" for r in rows if r["policy"] == "still")
    summary = json.loads((out / "summary.json").read_text())
    assert summary["policies"][f"{path}:{attr}"]["failures"] == 3


def test_policy_errors_never_reach_the_terminal_as_a_traceback(suite_file, tmp_path):
    path = tmp_path / "broken.py"
    path.write_text(BROKEN)
    proc = subprocess.run([sys.executable, "-m", "hearnav", "bench", "--suite", str(suite_file), "--out",
                           str(tmp_path / "run"), "--policy", f"{path}:Raises"], capture_output=True, text=True)
    assert proc.returncode == 1 and "Traceback" not in proc.stderr + proc.stdout


def test_changed_suite_under_the_same_out_is_refused(suite_file, tmp_path, capsys):
    out = tmp_path / "run"
    assert _bench(suite_file, out, "still") == 0
    other = dict(SUITE, seed=6)
    suite_file.write_text(yaml.safe_dump(other))
    assert _bench(suite_file, out, "still") == 2
    assert "holds results of another suite or scene version" in capsys.readouterr().err


def test_unknown_policy_is_one_line(suite_file, tmp_path, capsys):
    assert _bench(suite_file, tmp_path / "run", "stil") == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "unknown policy 'stil'" in err[0] and "did you mean 'still'" in err[0]


class Forward:
    """A deterministic SB3-style model: forward unless the map shows a wall ahead, then turn left."""

    def predict(self, observation, state=None, episode_start=None, deterministic=True):
        grid = np.asarray(observation["map"])
        batched = grid.ndim == 4
        grid = grid if batched else grid[None]
        half = grid.shape[-1] // 2
        actions = np.where(grid[:, 0, half - 1, half] > 0.5, 1, 0)
        return (actions if batched else actions[0]), state


def test_returns_equal_stable_baselines3_evaluate_policy(suite_file, tmp_path, monkeypatch):
    # Reference library: stable-baselines3's evaluate_policy on the same seeded episode gives the same return.
    from stable_baselines3.common.evaluation import evaluate_policy
    from stable_baselines3.common.vec_env import DummyVecEnv

    from hearnav.bench.suites import load_suite
    from hearnav.env import HearNavEnv

    module = tmp_path / "fwd.py"
    module.write_text("import numpy as np\n" + "\n".join(__import__("inspect").getsource(Forward).splitlines()))
    out = tmp_path / "run"
    assert _bench(suite_file, out, f"{module}:Forward") == 0
    suite = load_suite(str(suite_file))
    for row in _rows(out):
        venv = DummyVecEnv([lambda: HearNavEnv(**SUITE["env"])])
        venv.seed(row["episode_seed"])
        returns, _ = evaluate_policy(Forward(), venv, n_eval_episodes=1, deterministic=True,
                                     return_episode_rewards=True)
        assert returns[0] == pytest.approx(row["episode_return"], abs=1e-4)  # SB3 keeps rewards in float32
    assert len(suite.episode_seeds()) == 3


def test_save_audio_writes_normalised_wavs(suite_file, tmp_path):
    import soundfile as sf

    out = tmp_path / "run"
    assert _bench(suite_file, out, "still", extra=["--save-audio", "1"]) == 0
    files = sorted((out / "audio" / "still").glob("*.wav"))
    assert [f.name for f in files] == ["episode0000-estimate.wav", "episode0000-mixture.wav",
                                       "episode0000-reference.wav"]
    tracks = {f.name.split("-")[1][:-4]: sf.read(f) for f in files}
    fs = tracks["mixture"][1]
    assert fs == 16000 and tracks["mixture"][0].ndim == 2 and tracks["mixture"][0].shape[1] == 2
    # every track has the same length: every step's window in full, 0.5 s each
    rows = _rows(out)
    assert {len(data) for data, _ in tracks.values()} == {rows[0]["steps"] * 8000}
    for data, _ in tracks.values():  # EBU R 128: -23 LUFS unless the -1 dBTP true-peak ceiling turned it down
        loudness = pyloudnorm.Meter(fs).integrated_loudness(data)
        assert loudness <= -23.0 + 0.05 and true_peak_db(data) <= -1.0 + 1e-6
        assert loudness >= -23.0 - 0.05 or true_peak_db(data) == pytest.approx(-1.0, abs=1e-6)
    # sample-aligned: the mixture's cross-correlation with the reference peaks at lag 0 (the reference is part of
    # the mixture; with `still` the estimate is the identity's, the mixture itself)
    mix, ref = tracks["mixture"][0][:, 0], tracks["reference"][0][:, 0]
    corr = correlate(mix, ref[4000:-4000], mode="valid", method="fft")
    assert int(np.argmax(np.abs(corr))) == 4000
    assert np.allclose(tracks["estimate"][0] / np.abs(tracks["estimate"][0]).max(),
                       tracks["mixture"][0] / np.abs(tracks["mixture"][0]).max(), atol=1e-5)


def test_a_killed_run_resumes_without_torn_or_repeated_rows(suite_file, tmp_path):
    # SIGKILL mid-run, then rerun: every (policy, episode) appears exactly once and every row parses.
    import signal
    import time

    out = tmp_path / "run"
    cmd = [sys.executable, "-m", "hearnav", "bench", "--suite", str(suite_file), "--out", str(out),
           "--policy", "still", "--policy", "random-walk", "--policy", "greedy-oracle"]
    proc = subprocess.Popen(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    rows_file = out / "episodes.jsonl"
    deadline = time.monotonic() + 60
    while time.monotonic() < deadline and (not rows_file.exists() or rows_file.read_text().count("\n") < 2):
        time.sleep(0.05)
    proc.send_signal(signal.SIGKILL)
    proc.wait()
    assert subprocess.run(cmd, capture_output=True).returncode == 0
    rows = _rows(out)
    keys = [(r["policy"], r["episode_seed"]) for r in rows]
    assert len(keys) == len(set(keys)) == 9
