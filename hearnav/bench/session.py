"""Run policies on a suite as a library call: rows in DIR/episodes.jsonl, the summary in DIR/summary.json.

:func:`run` locks the run folder, checks that the manifest and rows carry this run's result key
(:mod:`hearnav.bench.keys`), repairs a torn last row, skips the episodes already done (resume), computes the
oracle bounds, runs the remaining episodes and writes the summary. It prints nothing; pass ``progress`` to
follow it.
"""

from __future__ import annotations

import dataclasses
import math
import os
from collections.abc import Callable, Sequence
from pathlib import Path
from typing import TYPE_CHECKING

from hearnav import files
from hearnav.bench import results
from hearnav.bench.keys import code_version
from hearnav.errors import ConfigError, short_repr

if TYPE_CHECKING:  # imported when run, so that importing hearnav.bench stays light
    from hearnav.bench.stats import Summary
    from hearnav.bench.suites import Suite

# progress(stage, done, total): called with done == 0 when a stage starts, then after each episode of it
Progress = Callable[[str, int, int], None]
ORACLE_STAGE = "oracle bounds"
# Seconds one episode may take before it is failed (``--episode-timeout``). An episode of the bundled suites
# takes well under a second (0.02-0.06 s on the smoke suite, about 0.13 s per worker on the test suite), so
# this default only stops a policy that is stuck.
EPISODE_TIMEOUT_S = 600.0


def _counter(progress: Progress | None, stage: str, total: int) -> Callable[[], None]:
    """Announce ``stage`` and return a function that reports one more finished episode of it."""
    done = 0
    if progress:
        progress(stage, 0, total)

    def step() -> None:
        nonlocal done
        done += 1
        if progress:
            progress(stage, done, total)

    return step


def _check_timeout(episode_timeout: float) -> float:
    """``episode_timeout`` as a float after checking it is a finite number of seconds above 0; raises ConfigError."""
    value = episode_timeout
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value) or value <= 0:
        raise ConfigError(f"episode_timeout (--episode-timeout) must be a number of seconds above 0, got "
                          f"{short_repr(value)}: use e.g. {EPISODE_TIMEOUT_S:g}, the default")
    return float(value)


def _check_arguments(policies: Sequence[str], workers: int, save_audio: int) -> list[str]:
    """The policy references as a list, after checking the counts; raises ConfigError."""
    if isinstance(policies, str):
        policies = [policies]
    if not policies:
        raise ConfigError("expected at least one policy reference, got none: pass e.g. policies=['still']")
    if workers < 1:
        raise ConfigError(f"workers (--workers) must be at least 1, got {workers}: use 1 for one process or more")
    if save_audio < 0:
        raise ConfigError(f"save_audio (--save-audio) must be 0 or more, got {save_audio}: use 0 to write no audio")
    canonical = [canonical_reference(ref) for ref in policies]
    for k, ref in enumerate(canonical):
        if ref in canonical[:k]:
            raise ConfigError(f"policy {policies[k]!r} is given twice (expected each policy once, got it as "
                              f"{policies[canonical.index(ref)]!r} too); drop the repeat")
    return canonical


def worker_count(requested: int, episodes: int) -> int:
    """Worker processes a run uses: the request, at most one per episode and one per CPU."""
    return max(1, min(int(requested), int(episodes), os.cpu_count() or 1))


def canonical_reference(reference: str) -> str:
    """One spelling per policy: a file reference's path is normalised (``./p.py:X`` is ``p.py:X``)."""
    where, sep, attr = str(reference).rpartition(":")
    if sep and where.endswith(".py"):
        return f"{os.path.normpath(where)}:{attr}"
    return str(reference)


def run(suite: Suite | str | os.PathLike, policies: Sequence[str], out: str | os.PathLike, workers: int = 1,
        reference: str = "still", save_audio: int = 0, progress: Progress | None = None,
        episode_timeout: float = EPISODE_TIMEOUT_S) -> Summary:
    """Run ``policies`` on every episode of ``suite`` not yet in ``out``; write rows and the summary.

    Parameters
    ----------
    suite : Suite, str or PathLike
        A suite, or a bundled suite name (smoke, val, test) or a suite YAML path.
    policies : sequence of str
        Policy references: registered names, ``module:attr`` or ``path/to/file.py:attr``.
    out : str or PathLike
        The results folder; rerunning into it resumes. It must not hold results under another result key
        (another suite, scene version, acoustic setting, code version or plug-in), nor be in use by another run.
    workers : int
        Worker processes.
    reference : str
        The policy the others are compared with.
    save_audio : int
        Write WAVs for the first ``save_audio`` episodes of each policy.
    progress : callable, optional
        ``progress(stage, done, total)``; see :data:`Progress`.
    episode_timeout : float
        Seconds one policy may take on one episode; an episode that takes longer, or whose worker process dies
        (the policy called ``os._exit``, crashed), gets a failed row and the run goes on.

    Returns
    -------
    Summary
        What ``out/summary.json`` holds (:meth:`Summary.to_dict`), over every row in ``out``.
    """
    from hearnav.acoustics import cache_dir
    from hearnav.bench.keys import result_key
    from hearnav.bench.policy import is_privileged
    from hearnav.bench.registry import load_policy
    from hearnav.bench.runner import Task, compute_oracles, run_tasks
    from hearnav.bench.stats import summarise
    from hearnav.bench.suites import Suite, load_suite
    from hearnav.scene.library import clear_cache

    policies = _check_arguments(policies, workers, save_audio)
    episode_timeout = _check_timeout(episode_timeout)
    suite = suite if isinstance(suite, Suite) else load_suite(str(suite))
    # unknown names and failing constructors fail here, in one line, before any work
    privileged = {ref: is_privileged(load_policy(ref)[1]) for ref in policies}
    clear_cache()  # read the scene files as they are now: the key and the episodes use the same scenes
    parts = suite.key_parts()
    key = result_key(parts)
    out = Path(out)
    files.make_folder(out, results.OUTPUT)  # a read-only or full --out is one line naming it
    with results.lock_folder(out):
        results.check_manifest(out, {"suite": suite.name, "suite_hash": suite.digest(), "code_version": code_version(),
                                     "target_cue": suite.env_config().target_cue, "run_key": key, "key_parts": parts})
        rows_path = out / results.EPISODES_FILE
        results.repair(rows_path)
        done = results.done_keys(results.read_rows(rows_path))
        seeds = suite.episode_seeds()
        workers = worker_count(workers, len(seeds))
        oracles = compute_oracles(suite, cache_dir() / "oracle", workers,
                                  progress=_counter(progress, ORACLE_STAGE, len(seeds)))
        audio_dir = str(out / "audio") if save_audio else None
        tasks = [Task(ref, k, s, oracles[s], audio_dir if k < save_audio else None)
                 for ref in policies for k, s in enumerate(seeds) if (ref, s) not in done]
        step = _counter(progress, suite.name, len(tasks))
        with results.ResultWriter(rows_path) as writer:
            for result in run_tasks(suite, tasks, workers, privileged, episode_timeout):
                writer.append(dataclasses.replace(result, run_key=key))
                step()
        rows = results.read_rows(rows_path)
        summary = dataclasses.replace(summarise(rows, reference=reference), suite=suite.name,
                                      suite_hash=suite.digest(), code_version=code_version(), run_key=key)
        results.write_json(out / results.SUMMARY_FILE, summary.to_dict())
    return summary
