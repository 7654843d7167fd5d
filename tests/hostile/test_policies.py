"""A policy that exits, ends its process, hangs or raises fails only its own episodes (issue 11, item 6).

Each crafted policy in tests/hostile/policies/ runs beside ``still`` on a two-episode suite, with one and with
two workers. Before, ``sys.exit(3)`` and ``os._exit(7)`` with ``--workers 1`` ended the run with their exit
status, no message and one row; with ``--workers 2`` they hung the run, as a sleeping policy did with any
worker count. Now the run ends with status 1, every failing episode has a row saying why, and ``still``'s
rows equal those of a clean run.
"""

from __future__ import annotations

import json
import multiprocessing
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest
import yaml

from hearnav.bench.results import comparable, read_rows
from hearnav.cli import main
from hearnav.scene.library import clear_cache
from tests.env.conftest import scene_dir  # noqa: F401
from tests.world_fixtures import FAST_ACOUSTICS, ROOM, env_cache, private_cache  # noqa: F401

POLICIES = Path(__file__).parent / "policies"
SUITE = {"name": "two", "description": "2 short episodes on the test room", "episodes": 2, "seed": 5,
         "env": {"scenes": [ROOM], "acoustics": FAST_ACOUSTICS, "budget": 4, "target_category": ["talker", "noise"]}}
TIMEOUT = "2"  # seconds; an episode of this suite takes about 0.05 s

# crafted policy -> the error its rows must carry
ATTACKS = {
    "exits.py:Exits": "policy exited (SystemExit 3)",
    "dies.py:Dies": "worker died (exit code 7)",
    "killed.py:Killed": "worker died (killed by SIGKILL)",
    "sleeps.py:Sleeps": "timed out after 2 s",
    "raises.py:Raises": "ValueError: no idea where to go",
    "interrupts.py:Interrupts": "KeyboardInterrupt",
    "unprintable.py:RaisesUnprintable": "Unprintable: (its message could not be shown: str() raised RuntimeError)",
}


def _write_suite(folder: Path, seed: int = 5) -> Path:
    path = folder / "two.yaml"
    path.write_text(yaml.safe_dump({**SUITE, "seed": seed}))
    return path


def _bench(suite: Path, out: Path, *policies: str, workers: int = 1, timeout: str = TIMEOUT) -> int:
    argv = ["bench", "--suite", str(suite), "--out", str(out), "--workers", str(workers), "--episode-timeout", timeout]
    for policy in policies:
        argv += ["--policy", policy]
    return main(argv)


@pytest.fixture(scope="module")
def clean(tmp_path_factory, env_cache, scene_dir):  # noqa: F811
    """``still``'s rows from a run without a hostile policy, keyed by episode seed."""
    folder = tmp_path_factory.mktemp("clean")
    with pytest.MonkeyPatch.context() as mp:
        mp.setenv("HEARNAV_CACHE", str(env_cache))
        mp.setenv("HEARNAV_SCENES", str(scene_dir))
        clear_cache()
        assert _bench(_write_suite(folder), folder / "run", "still") == 0
    return {r["episode_seed"]: comparable(r) for r in read_rows(folder / "run" / "episodes.jsonl")}


@pytest.mark.timeout(60)  # a hang guard only
@pytest.mark.parametrize("workers", [1, 2])
@pytest.mark.parametrize("attack", sorted(ATTACKS))
def test_a_failing_policy_fails_only_its_episodes(attack, workers, clean, tmp_path, capsys):
    bad = f"{POLICIES / attack}"
    out = tmp_path / "run"
    code = _bench(_write_suite(tmp_path), out, bad, "still", workers=workers)
    err = capsys.readouterr().err.splitlines()
    assert code == 1
    assert err == [f"2 episode(s) failed; see the 'error' field in {out / 'episodes.jsonl'}",
                   f"hearnav: results in {out} (episodes.jsonl, summary.json)"]
    rows = read_rows(out / "episodes.jsonl")
    failed = [r for r in rows if r["policy"] == bad]
    assert sorted(r["episode_index"] for r in failed) == [0, 1]
    assert all(r["status"] == "failed" and r["error"] == ATTACKS[attack] for r in failed)
    still = {r["episode_seed"]: comparable(r) for r in rows if r["policy"] == "still"}
    assert still == clean
    summary = json.loads((out / "summary.json").read_text())["policies"]
    assert (summary[bad]["failures"], summary[bad]["ok"], summary[bad]["gain_db"]["n"]) == (2, 0, 0)
    assert (summary["still"]["failures"], summary["still"]["ok"]) == (0, 2)
    assert multiprocessing.active_children() == []  # every worker, stuck or not, is gone


@pytest.mark.timeout(60)
def test_failed_rows_are_kept_on_resume(tmp_path, capsys):
    # Resume keeps failed rows (rerunning a deterministic failure would give it again): nothing is rerun.
    suite, out, bad = _write_suite(tmp_path), tmp_path / "run", f"{POLICIES / 'raises.py:Raises'}"
    assert _bench(suite, out, bad, "still") == 1
    before = (out / "episodes.jsonl").read_bytes()
    assert _bench(suite, out, bad, "still") == 1
    assert (out / "episodes.jsonl").read_bytes() == before
    assert capsys.readouterr().err.splitlines()[-2].startswith("2 episode(s) failed; ")


@pytest.mark.parametrize("value, shown", [("0", "0.0"), ("-1", "-1.0"), ("nan", "nan"), ("inf", "inf")])
def test_episode_timeout_must_be_positive_and_finite(value, shown, tmp_path, capsys):
    out = tmp_path / "run"
    assert _bench(_write_suite(tmp_path), out, "still", timeout=value) == 2
    err = capsys.readouterr().err.splitlines()
    assert err == [f"hearnav: error: episode_timeout (--episode-timeout) must be a number of seconds above 0, "
                   f"got {shown}: use e.g. 600, the default"]
    assert not out.exists()  # refused before any work


def _gone(pid: int) -> bool:
    """Whether process ``pid`` has ended (a zombie left for a parent that never reaps counts as ended)."""
    try:
        state = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()[0]
    except (FileNotFoundError, ProcessLookupError):
        return True
    return state in ("Z", "X")


@pytest.mark.skipif(not Path("/proc/self/stat").exists(), reason="reads process states from /proc (Linux)")
@pytest.mark.timeout(60)
def test_a_killed_run_leaves_no_stuck_worker_behind(tmp_path, scene_dir, env_cache):  # noqa: F811
    # SIGKILL the calling process while a worker is stuck in a policy: the worker ends by itself (it watches
    # its parent), instead of sleeping forever as an orphan.
    pid_file = tmp_path / "worker.pid"
    cmd = [sys.executable, "-m", "hearnav", "bench", "--suite", str(_write_suite(tmp_path)), "--out",
           str(tmp_path / "run"), "--policy", f"{POLICIES / 'sleeps.py:Sleeps'}"]
    env = {**os.environ, "HEARNAV_TEST_PID_FILE": str(pid_file), "HEARNAV_CACHE": str(env_cache),
           "HEARNAV_SCENES": str(scene_dir)}
    proc = subprocess.Popen(cmd, env=env, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    try:
        while not pid_file.exists() or not pid_file.read_text():
            assert proc.poll() is None, "the run ended before its policy started"
            time.sleep(0.05)
        worker = int(pid_file.read_text())
        assert not _gone(worker)
    finally:
        proc.send_signal(signal.SIGKILL)
        proc.wait()
    while not _gone(worker):  # the hang guard above fails the test if it never ends
        time.sleep(0.05)


# The same machinery runs the oracle bounds, which are our code: there a dead worker stops the run in one line.

@pytest.mark.timeout(60)
def test_a_worker_killed_during_the_oracle_bounds_stops_the_run_in_one_line(tmp_path, monkeypatch, capsys):
    from hearnav.bench import runner

    # forked workers inherit the patch: the bound's computation ends its process as the OOM killer would
    monkeypatch.setattr(runner, "oracle_bound", lambda env, seed: os.kill(os.getpid(), signal.SIGKILL))
    out = tmp_path / "run"
    assert _bench(_write_suite(tmp_path, seed=1234), out, "still") == 2  # a seed no other test caches bounds of
    err = capsys.readouterr().err.splitlines()
    assert len(err) == 1 and err[0].startswith("hearnav: error: expected the oracle bound of episode seed ")
    assert err[0].endswith(", got none: worker died (killed by SIGKILL); the bounds computed so far are cached: "
                           "rerun to resume")
    assert not (out / "episodes.jsonl").exists()


@pytest.mark.timeout(60)
def test_a_worker_that_cannot_build_its_environment_stops_the_run():
    from hearnav.bench.workers import WorkerPool
    from hearnav.errors import ConfigError, HearnavError

    def refuse(options):
        raise ConfigError("expected a scene, got none")

    with WorkerPool(lambda state, item: item, refuse, None, 1) as pool, pytest.raises(ConfigError) as info:
        list(pool.run([[1]]))
    assert str(info.value) == "expected a scene, got none"  # raised again in the caller, unchanged
    with WorkerPool(lambda state, item: item, lambda options: os._exit(5), None, 1) as pool, \
            pytest.raises(HearnavError) as info:
        list(pool.run([[1]]))
    assert str(info.value) == ("expected a worker process to build its environment, but it ended first: worker died "
                               "(exit code 5); check the memory limit (an out-of-memory kill shows as SIGKILL) and "
                               "rerun to resume")
    assert multiprocessing.active_children() == []
