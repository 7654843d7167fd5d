"""Run policies on a suite: one row per policy x episode, appended as each finishes, resumable.

The main process owns the result file; workers (a process pool) run whole episodes and send rows back. Each
worker builds its environment once, in the pool initializer; with one worker the calling process builds one
per call. A policy that raises, returns an invalid action or NaN fails its episode, which is recorded with
the error; the run goes on.
"""

from __future__ import annotations

import math
import time
from collections.abc import Callable, Iterator
from dataclasses import dataclass
from functools import partial
from pathlib import Path

import numpy as np

from hearnav.bench.oracle import OracleCache, oracle_bound
from hearnav.bench.policy import is_privileged
from hearnav.bench.registry import load_policy
from hearnav.bench.results import EpisodeResult
from hearnav.bench.suites import Suite, policy_seed
from hearnav.env.core import HearNavEnv

# The environment of a pool worker process, set there once by _start_worker; the calling process never sets it.
_worker_env: HearNavEnv | None = None


@dataclass(frozen=True)
class Task:
    """One policy on one episode."""

    policy: str
    index: int
    seed: int
    oracle: float | None
    audio_dir: str | None = None


def _valid_action(action) -> int:
    if isinstance(action, (bool, np.bool_)):
        raise ValueError(f"policy returned a bool ({action}), expected an integer action in [0, 3]")
    value = np.asarray(action).reshape(-1)
    if value.size != 1 or not np.issubdtype(value.dtype, np.number):
        raise ValueError(f"policy returned {action!r}, expected an integer action in [0, 3]")
    x = float(value[0])
    if not math.isfinite(x) or x != int(x) or not 0 <= int(x) < 4:
        raise ValueError(f"policy returned {action!r}, expected an integer action in [0, 3]")
    return int(x)


def run_episode(env: HearNavEnv, name: str, policy, task: Task) -> EpisodeResult:
    """Play one episode and return its result (status "ok" or "failed")."""
    t0 = time.perf_counter()
    privileged = is_privileged(policy)
    obs, info = env.reset(seed=task.seed)
    start = info["si_sdr_db"]
    result = EpisodeResult(policy=name, privileged=privileged, episode_index=task.index, episode_seed=task.seed,
                           oracle_si_sdr_db=task.oracle, scene=info["scene"], start_si_sdr_db=start,
                           start_input_si_sdr_db=info["input_si_sdr_db"], start_full_si_sdr_db=info["full_si_sdr_db"],
                           start_input_full_si_sdr_db=info["input_full_si_sdr_db"])
    start_xy = (info["pose"]["x"], info["pose"]["y"])
    best, ret, collisions, path, steps = start, 0.0, 0, 0.0, 0
    audio = [] if task.audio_dir else None
    try:
        extra = {"seed": policy_seed(task.seed)}
        if privileged:
            extra["privileged"] = env.unwrapped.privileged
        policy.reset(obs, {**info, **extra})
        truncated = False
        while not truncated:
            action = _valid_action(policy.act(obs, {**info, **extra}))
            before = (info["pose"]["x"], info["pose"]["y"])
            obs, reward, _, truncated, info = env.step(action)
            steps += 1
            ret += reward
            collisions += int(info["collided"])
            path += math.dist(before, (info["pose"]["x"], info["pose"]["y"]))
            best = max(best, info["si_sdr_db"])
            if audio is not None:
                audio.append(env.unwrapped.privileged.last_window())
    except Exception as exc:  # the policy's fault: record it, never crash the run
        result.status, result.error = "failed", f"{type(exc).__name__}: {exc}".splitlines()[0][:500]
    final = info["si_sdr_db"]
    result.final_full_si_sdr_db = info["full_si_sdr_db"]
    gain = final - start
    span = None if task.oracle is None else task.oracle - start
    result.final_si_sdr_db, result.best_si_sdr_db, result.gain_db, result.episode_return = final, best, gain, ret
    result.normalised_gain = (gain / span) if span and span > 1e-9 else None
    result.path_length_m, result.steps, result.collisions = path, steps, collisions
    result.final_pose, result.start_xy = info["pose"], list(start_xy)
    result.wall_time_s = time.perf_counter() - t0
    if audio:
        from hearnav.bench.audio import save_episode_audio

        save_episode_audio(Path(task.audio_dir), name, task.index, audio, env.fs)
    return result


def _work(env: HearNavEnv, task: Task) -> EpisodeResult:
    name, policy = load_policy(task.policy)
    return run_episode(env, name, policy, task)


def _oracle_work(env: HearNavEnv, seed: int) -> tuple[int, float]:
    return seed, oracle_bound(env, seed)


def compute_oracles(suite: Suite, folder: Path, workers: int, progress=None) -> dict[int, float]:
    """Oracle bounds of every episode of a suite, computed once and cached in ``folder``."""
    cache = OracleCache(folder, suite.result_key())
    options = suite.env_config().model_dump()
    missing = [s for s in suite.episode_seeds() if cache.get(s) is None]
    for seed, value in _map(_oracle_work, missing, options, workers):
        cache.put(seed, value)
        if progress:
            progress()
    return {s: cache.get(s) for s in suite.episode_seeds()}


def _start_worker(options: dict) -> None:
    """Pool initializer: build this worker process's environment, once."""
    global _worker_env
    _worker_env = HearNavEnv(**options)


def _in_worker(fn: Callable, item):
    return fn(_worker_env, item)


def _map(fn: Callable, items: list, options: dict, workers: int, chunksize: int = 1) -> Iterator:
    """``fn(env, item)`` over items, in any order, in this process or a pool of ``workers``; ``env`` is built
    from ``options`` once per process."""
    if workers <= 1 or len(items) <= 1:
        env = HearNavEnv(**options) if items else None
        for item in items:
            yield fn(env, item)
        return
    import multiprocessing as mp

    with mp.get_context("fork").Pool(workers, initializer=_start_worker, initargs=(options,)) as pool:
        yield from pool.imap_unordered(partial(_in_worker, fn), items, chunksize=chunksize)


def run_tasks(suite: Suite, tasks: list[Task], workers: int):
    """Results of the tasks, as they finish. Tasks of one episode go to one worker together, so the episode's
    sounds are generated once for all policies."""
    options = suite.env_config().model_dump()
    ordered = sorted(tasks, key=lambda t: (t.index, t.policy))
    per_episode = max(1, len({t.policy for t in tasks}))
    yield from _map(_work, ordered, options, workers, chunksize=per_episode)
