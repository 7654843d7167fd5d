"""Throughput and memory of the training environments: 1, 2 and 4 workers, as `hearnav train` runs them.

For each worker count it builds the trainer's own VecEnv (hearnav.train.trainer.make_vec_env: DummyVecEnv for
one worker, hearnav.train.vector.GroupVecEnv for more, each worker stepping the config's envs_per_worker
environments, or --envs-per-worker's) on the config's scenes and times its start-up: making the workers and
opening every scene's tables in each (HearNavEnv.preload, which the trainer calls first; a process pays it once).
Then it steps the VecEnv with seeded random actions (episodes end and reset inside the VecEnv, so resets are
counted), and prints steps per second over all workers together, its ratio to one worker's, and the memory each worker process and the whole tree hold, read from
/proc/PID/smaps_rollup after the run: Pss (a page shared by n processes counts 1/n, so the tree's sum counts
shared pages once) and private memory (pages no other process maps). Needs the train extra. Linux only.
Usage: python benchmarks/train_throughput.py [--config ppo-tiny] [--workers 1 2 4] [--envs-per-worker M] [--steps 6000]
       [--scenes train]
"""

from __future__ import annotations

import argparse
import os
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))  # this checkout's hearnav

from memory import rollup  # noqa: E402  (benchmarks/memory.py: the same reading of smaps_rollup)

GOAL_PRIVATE = 2**30  # bytes per worker
GOAL_TREE_PSS = 8 * 2**30  # bytes for the tree of 4 workers
GOAL_SCALING = 1.6  # two workers' rate over one worker's


def children(pid: int) -> list[int]:
    """Every descendant process of ``pid``."""
    out, todo = [], [pid]
    while todo:
        p = todo.pop()
        for task in Path(f"/proc/{p}/task").iterdir():
            kids = (task / "children").read_text().split()
            out += [int(k) for k in kids]
            todo += [int(k) for k in kids]
    return out


def measure(config_name: str, workers: int, steps: int, per_worker: int | None,
            scenes: list[str] | None = None) -> tuple[float, float, list[dict], int]:
    """(start-up s, steps/s with resets over all workers, each worker's rollup, the tree's Pss in bytes)."""
    from hearnav.train.config import load_train_config
    from hearnav.train.trainer import make_vec_env

    config = load_train_config(config_name)
    config = config.model_copy(update={"workers": workers, "envs_per_worker": per_worker or config.envs_per_worker,
                                       "scenes": scenes or config.scenes})
    n = config.n_envs
    t0 = time.perf_counter()
    venv = make_vec_env(config)
    venv.env_method("preload")  # every scene's tables opened in every worker, as the trainer does first
    startup = time.perf_counter() - t0
    rng = np.random.default_rng(np.random.SeedSequence(2026))
    venv.seed(0)
    venv.reset()
    for _ in range(64):  # warm-up: clips mapped, compiled passes loaded
        venv.step(rng.integers(4, size=n))
    t0 = time.perf_counter()
    done = 0
    while done < steps:
        venv.step(rng.integers(4, size=n))
        done += n
    rate = done / (time.perf_counter() - t0)
    inner = getattr(venv, "venv", venv)  # under VecNormalize
    pids = [p.pid for p in inner.processes] if workers > 1 else [os.getpid()]
    per_worker = [rollup(pid) for pid in pids]
    tree = sum(rollup(pid)["Pss"] for pid in {os.getpid(), *children(os.getpid())})
    venv.close()
    return startup, rate, per_worker, tree


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--config", default="ppo-tiny")
    parser.add_argument("--workers", type=int, nargs="+", default=[1, 2, 4])
    parser.add_argument("--envs-per-worker", type=int, default=None, help="default: the config's")
    parser.add_argument("--steps", type=int, default=6000)
    parser.add_argument("--scenes", nargs="+", default=None, help="override the config's scenes (e.g. train: the "
                                                                   "memory goal's split)")
    args = parser.parse_args()
    mb = 2**20
    base = None
    print(f"config {args.config}, scenes {' '.join(args.scenes) if args.scenes else 'of the config'}, "
          f"{args.steps} random steps after a warm-up, resets included, "
          f"{args.envs_per_worker or 'the config'!s} environments per worker")
    print("| workers | start-up s | steps/s (all workers) | vs 1 worker | Pss per worker MB | private per worker MB | tree Pss MB |")
    print("|---|---|---|---|---|---|---|")
    for n in args.workers:
        startup, rate, rolls, tree = measure(args.config, n, args.steps, args.envs_per_worker, args.scenes)
        base = rate if n == 1 else base
        ratio = f"{rate / base:.2f}x" if base else "n/a"
        pss = [r["Pss"] / mb for r in rolls]
        private = [(r["Private_Clean"] + r["Private_Dirty"]) / mb for r in rolls]
        print(f"| {n} | {startup:.1f} | {rate:.0f} | {ratio} | {min(pss):.0f}-{max(pss):.0f} | {min(private):.0f}-{max(private):.0f} "
              f"| {tree / mb:.0f} |", flush=True)
    print(f"goals: 2 workers >= {GOAL_SCALING}x one worker's rate; private <= {GOAL_PRIVATE // mb} MB per worker; "
          f"tree Pss < {GOAL_TREE_PSS // mb} MB with 4 workers")


if __name__ == "__main__":
    main()
