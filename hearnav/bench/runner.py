"""Run policies on a suite: one row per policy x episode, appended as each finishes, resumable.

The main process owns the result file; worker processes (:mod:`hearnav.bench.workers`, also when there is
only one) run whole episodes and send rows back. Each worker builds its environment once and keeps it until it
dies. A policy that raises, exits (``sys.exit``), returns an invalid action or NaN fails its episode, which is
recorded with the error. A policy that ends its process (``os._exit``, a crash) or passes the episode time
limit fails its episode too: the worker is replaced and the run goes on.
"""

from __future__ import annotations

import itertools
import math
import time
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from hearnav.bench.oracle import OracleCache, oracle_bound, paired_gains
from hearnav.bench.policy import is_privileged
from hearnav.bench.registry import load_policy
from hearnav.bench.results import EpisodeResult
from hearnav.bench.suites import Suite, policy_seed
from hearnav.bench.workers import Failure, WorkerPool
from hearnav.env.core import HearNavEnv
from hearnav.errors import HearnavError, exception_line, short_repr

# The environment of a worker process, set there once by _start_worker; the calling process never sets it.
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


def describe(exc: BaseException) -> str:
    """One line for what a policy raised: ``policy exited (SystemExit 3)`` or ``ValueError: message``."""
    if isinstance(exc, SystemExit):
        return f"policy exited (SystemExit {short_repr(exc.code)})"
    return exception_line(exc, 500)


def failed_result(task: Task, reason: str, privileged: bool = False) -> EpisodeResult:
    """The row of an episode that gave no result of its own (its worker died or timed out)."""
    return EpisodeResult(policy=task.policy, privileged=privileged, episode_index=task.index,
                         episode_seed=task.seed, oracle_gain_db=task.oracle, status="failed", error=reason)


def policy_extra(env, policy, seed: int) -> dict:
    """What a policy gets in ``info`` beside the environment's own keys: its seed, and the privileged view when it
    asks for privileged access."""
    extra = {"seed": policy_seed(seed)}
    if is_privileged(policy):
        extra["privileged"] = env.unwrapped.privileged
    return extra


def run_episode(env: HearNavEnv, name: str, policy, task: Task, rewards: list | None = None) -> EpisodeResult:
    """Play one episode and return its result (status "ok" or "failed"); each step's reward is appended to
    ``rewards`` when it is given."""
    t0 = time.perf_counter()
    privileged = is_privileged(policy)
    obs, info = env.reset(seed=task.seed)
    start = info["si_sdr_db"]
    result = EpisodeResult(policy=name, privileged=privileged, episode_index=task.index, episode_seed=task.seed,
                           oracle_gain_db=task.oracle, scene=info["scene"], target_cue=env.unwrapped.config.target_cue,
                           start_si_sdr_db=start,
                           start_input_si_sdr_db=info["input_si_sdr_db"], start_full_si_sdr_db=info["full_si_sdr_db"],
                           start_input_full_si_sdr_db=info["input_full_si_sdr_db"])
    start_xy = (info["pose"]["x"], info["pose"]["y"])
    start_pose = (info["pose"]["cell"], info["pose"]["heading"])
    roles = [(src["role"], src["category"]) for src in info["sources"]]
    result.target_category = next(c for r, c in roles if r == "target")
    result.distractor_categories = [c for r, c in roles if r != "target"]
    result.poses, result.collided_steps = [list(start_pose)], []
    best, ret, collisions, path, steps, along = start, 0.0, 0, 0.0, 0, []
    audio = [] if task.audio_dir else None
    try:
        extra = policy_extra(env, policy, task.seed)
        policy.reset(obs, {**info, **extra})
        truncated = False
        while not truncated:
            action = _valid_action(policy.act(obs, {**info, **extra}))
            before = (info["pose"]["x"], info["pose"]["y"])
            obs, reward, _, truncated, info = env.step(action)
            steps += 1
            ret += reward
            if rewards is not None:
                rewards.append(reward)
            collisions += int(info["collided"])
            result.poses.append([info["pose"]["cell"], info["pose"]["heading"]])
            if info["collided"]:
                result.collided_steps.append(steps)
            path += math.dist(before, (info["pose"]["x"], info["pose"]["y"]))
            best = max(best, info["si_sdr_db"])
            along.append(_from_start(env, info, start_pose) if info["target_active"] else None)
            if audio is not None:
                audio.append(env.unwrapped.privileged.last_audio())
    except BaseException as exc:  # the policy's fault (workers ignore SIGINT): record it, never end the run
        result.status, result.error = "failed", describe(exc)
    final = info["si_sdr_db"]
    result.final_full_si_sdr_db = info["full_si_sdr_db"]
    end_pose = (info["pose"]["cell"], info["pose"]["heading"])
    gain, result.eval_windows_scored = end_gain(env, end_pose, start_pose)
    result.final_si_sdr_db, result.best_si_sdr_db, result.gain_db, result.episode_return = final, best, gain, ret
    scored = [g for g in along if g is not None]
    result.mean_gain_db = float(np.mean(scored)) if scored else 0.0
    result.step_gains_db = along
    result.quiet_windows = info["quiet_windows"]
    result.normalised_gain = (gain / task.oracle) if task.oracle is not None and task.oracle > 1e-9 else None
    result.path_length_m, result.steps, result.collisions = path, steps, collisions
    result.final_pose, result.start_xy = info["pose"], list(start_xy)
    result.wall_time_s = time.perf_counter() - t0
    if audio:
        from hearnav.bench.audio import save_episode_audio

        save_episode_audio(Path(task.audio_dir), name, task.index, audio, env.fs)
    return result


def _from_start(env: HearNavEnv, info: dict, start_pose: tuple[int, int]) -> float:
    """S(pose_t, w_t) - S(pose_0, w_t) of the window just heard (0 at the start pose)."""
    pose = (info["pose"]["cell"], info["pose"]["heading"])
    if pose == start_pose:
        return 0.0
    at_start = env.unwrapped.scores_ahead([start_pose], 1, offset=-1)[0, 0]  # the window just heard
    return float(info["si_sdr_db"] - at_start)


def end_gain(env: HearNavEnv, end_pose: tuple[int, int], start_pose: tuple[int, int]) -> tuple[float, int]:
    """Mean paired gain of the end pose over the start pose on the ``eval_windows`` windows after the episode
    (:func:`hearnav.bench.oracle.paired_gains`), and how many of them were scored."""
    env = env.unwrapped
    if end_pose == start_pose:
        scores = env.scores_ahead([start_pose], env.config.eval_windows)
        return 0.0, int(np.sum(~np.isnan(scores)))
    gains, scored = paired_gains(env.scores_ahead([end_pose, start_pose], env.config.eval_windows), 1)
    return float(gains[0]), scored


def _work(env: HearNavEnv, task: Task) -> EpisodeResult:
    try:
        name, policy = load_policy(task.policy)
    except BaseException as exc:  # it loaded in the calling process; here it failed: this episode fails
        return failed_result(task, f"making the policy failed ({describe(exc)})")
    return run_episode(env, name, policy, task)


def _oracle_work(env: HearNavEnv, seed: int) -> float:
    return oracle_bound(env, seed)


def _start_worker(options: dict) -> HearNavEnv:
    """Build this worker process's environment, once."""
    global _worker_env
    _worker_env = HearNavEnv(**options)
    return _worker_env


def compute_oracles(suite: Suite, folder: Path, workers: int, progress=None) -> dict[int, float]:
    """Oracle bounds of every episode of a suite, computed once and cached in ``folder``."""
    cache = OracleCache(folder, suite.result_key())
    options = suite.env_config().model_dump()
    missing = [s for s in suite.episode_seeds() if cache.get(s) is None]
    with WorkerPool(_oracle_work, _start_worker, options, min(workers, len(missing))) as pool:
        for seed, value in pool.run([[s] for s in missing]):
            if isinstance(value, Failure):
                raise HearnavError(f"expected the oracle bound of episode seed {seed}, got none: {value.reason}; "
                                   f"the bounds computed so far are cached: rerun to resume")
            cache.put(seed, value)
            if progress:
                progress()
    return {s: cache.get(s) for s in suite.episode_seeds()}


def run_tasks(suite: Suite, tasks: list[Task], workers: int, privileged: Mapping[str, bool],
              episode_timeout: float | None = None):
    """Results of the tasks, as they finish. Tasks of one episode go to one worker together, so the episode's
    sounds are generated once for all policies. An episode that passes ``episode_timeout`` seconds (``None``:
    no limit), or whose worker dies, gets a failed row (:func:`failed_result`) whose ``privileged`` flag comes
    from ``privileged`` (policy reference -> whether it is privileged, as the caller loaded it)."""
    options = suite.env_config().model_dump()
    ordered = sorted(tasks, key=lambda t: (t.index, t.policy))
    groups = [list(group) for _, group in itertools.groupby(ordered, key=lambda t: t.index)]
    with WorkerPool(_work, _start_worker, options, min(workers, len(groups)), timeout=episode_timeout) as pool:
        for task, result in pool.run(groups):
            yield failed_result(task, result.reason, privileged[task.policy]) if isinstance(result, Failure) \
                else result
