"""Memory of 1, 2 and 4 environment worker processes on the train split, as a vectorised trainer would run them.

Each worker (a spawned process, as gymnasium's and stable-baselines3's subprocess vector environments start
them) makes ``HearNavEnv(scenes="train")`` and resets it until it has started an episode in every train scene,
taking a few steps in each. Then the parent reads every worker's /proc/PID/smaps_rollup and prints its Pss
(its share of every page it maps: a page mapped by n processes counts 1/n) and its private memory
(Private_Clean + Private_Dirty: pages no other process maps; a lone worker's clean pages of the tables count
here too, though any later process would share them) with its anonymous memory (its own heap), and the total
Pss of the tree, the parent included. Before the workers start, one process opens the train scenes' tables so that no worker builds them.
Linux only. Usage: nice python benchmarks/memory.py [--workers 1 2 4] [--steps 3]
"""

from __future__ import annotations

import argparse
import multiprocessing as mp
import os
import sys
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))  # this checkout's hearnav

GOAL_PRIVATE = 2**30  # bytes per worker
GOAL_TREE_PSS = 8 * 2**30  # bytes for the tree of 4 workers


def rollup(pid: int | str) -> dict[str, int]:
    """Bytes of each field of /proc/PID/smaps_rollup."""
    out = {}
    for line in Path(f"/proc/{pid}/smaps_rollup").read_text().splitlines()[1:]:
        name, value, *_ = line.split()
        out[name.rstrip(":")] = int(value) * 1024
    return out


def visit_every_scene(env, steps: int) -> None:
    """Reset until an episode has started in every scene of the env, taking ``steps`` steps in each episode."""
    left, seed = set(env.scene_names), 0
    while left:
        _, info = env.reset(seed=seed)
        left.discard(info["scene"])
        for action in range(steps):
            env.step(action % 4)
        seed += 1


def worker(conn, steps: int) -> None:
    """Visit every train scene, report ready, wait to be measured."""
    from hearnav.env import HearNavEnv

    visit_every_scene(HearNavEnv(scenes="train"), steps)
    conn.send("ready")
    conn.recv()


def start_workers(n: int, steps: int) -> tuple[list, list]:
    """``n`` spawned workers that have visited every train scene, and the parent's ends of their pipes."""
    ctx = mp.get_context("spawn")
    pipes, procs = [], []
    for _ in range(n):
        parent, child = ctx.Pipe()
        p = ctx.Process(target=worker, args=(child, steps))
        p.start()
        child.close()  # so a worker that dies ends the wait below with EOFError
        pipes.append(parent)
        procs.append(p)
    for pipe in pipes:
        pipe.recv()
    return pipes, procs


def measure(n: int, steps: int) -> list[dict[str, int]]:
    """Rollups of ``n`` workers that have visited every train scene, and of the parent (last)."""
    pipes, procs = start_workers(n, steps)
    rollups = [rollup(p.pid) for p in procs] + [rollup(os.getpid())]
    for pipe in pipes:
        pipe.send("done")
    for p in procs:
        p.join()
    return rollups


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--workers", type=int, nargs="+", default=[1, 2, 4])
    parser.add_argument("--steps", type=int, default=3, help="steps per episode")
    args = parser.parse_args()
    if not Path("/proc/self/smaps_rollup").exists():
        sys.exit("memory.py needs Linux's /proc/PID/smaps_rollup")
    measure(1, args.steps)  # one worker opens (and builds when absent) every train scene's tables first
    mb = 2**20
    for n in args.workers:
        rollups = measure(n, args.steps)
        workers, parent = rollups[:-1], rollups[-1]
        private = [r["Private_Clean"] + r["Private_Dirty"] for r in workers]
        tree = sum(r["Pss"] for r in rollups)
        cells = ", ".join(f"Pss {r['Pss'] / mb:.0f} / private {p / mb:.0f} / anonymous {r['Anonymous'] / mb:.0f} MB"
                          for r, p in zip(workers, private))
        print(f"{n} worker(s): {cells}; tree Pss {tree / mb:.0f} MB (parent {parent['Pss'] / mb:.0f} MB)"
              f"  [goals: private <= {GOAL_PRIVATE / mb:.0f} MB per worker"
              f"{f', tree Pss < {GOAL_TREE_PSS / mb:.0f} MB' if n == 4 else ''}]", flush=True)


if __name__ == "__main__":
    main()
