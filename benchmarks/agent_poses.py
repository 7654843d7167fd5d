"""Where do policies end their episodes? What an agent learned, against the oracle bound's poses.

For a suite's first episodes it computes the oracle bound (within the budget) and plays each policy, then
prints for the end poses of each policy and for the bound's poses:
- the mean end gain (dB) and the share of the bound's gain (ratio of mean gains);
- the mean distance of the end cell from the target's spot (m);
- the share of episodes ending in line of sight of the target's spot;
- the share ending shielded from at least one distractor (no line of sight to its spot), and the share shielded
  from a distractor that the ring's nearest cell to the target sees (``task_validity.shields``);
- the share ending facing the target within half a heading step;
- the mean number of steps per episode that undo the step before (a turn one way, then back, in one cell): a
  policy without memory dithers where its observation does not change (the bound's poses: no path, "-").

Usage: python benchmarks/agent_poses.py [--suite test] [--episodes 60] [--policy ppo-tiny --policy ...]
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))  # this checkout's hearnav

from task_validity import facing, ring_nearest_cell, shields  # noqa: E402

DEFAULT = ("ppo-tiny", "follow-bearing", "approach")


def describe(env, cell: int, heading: int, nearest: int) -> dict:
    """The measures of one end pose in the episode the environment holds."""
    los = env.world.poses.line_of_sight
    target_spot = env.plan.sources[0].spot
    target = np.asarray(env.world.scene.spots[target_spot].position[:2], float)
    return {"distance": float(np.hypot(*(np.asarray(env.world.grid.centres[cell], float) - target))),
            "los": bool(los[cell, target_spot]),
            "shielded": any(not los[cell, s.spot] for s in env.plan.sources[1:]),
            "shielded_vs_nearest": shields(env, cell, nearest),
            "facing": heading == facing(env, cell, target)}


def undone_turns(poses: list) -> int:
    """Steps of a path of (cell, heading) poses that return to the pose of two steps before by turning in place."""
    p = [tuple(x) for x in poses]
    return sum(1 for a, b, c in zip(p, p[1:], p[2:]) if a == c and a[0] == b[0] and a[1] != b[1])


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--suite", default="test")
    parser.add_argument("--episodes", type=int, default=60)
    parser.add_argument("--policy", action="append", default=None, help=f"default: {', '.join(DEFAULT)}")
    args = parser.parse_args()
    from hearnav.bench.oracle import episode_bound
    from hearnav.bench.registry import load_policy
    from hearnav.bench.runner import Task, run_episode
    from hearnav.bench.suites import load_suite
    from hearnav.env import HearNavEnv

    suite = load_suite(args.suite)
    env = HearNavEnv(**suite.env_config().model_dump())
    seeds = suite.episode_seeds()[:args.episodes]
    names = args.policy or list(DEFAULT)
    policies = {name: load_policy(name)[1] for name in names}
    rows: dict[str, list[dict]] = {name: [] for name in [*names, "oracle bound"]}
    for index, seed in enumerate(seeds):
        bound = episode_bound(env, seed)
        nearest = ring_nearest_cell(env)
        rows["oracle bound"].append({"gain": bound.gain_db, **describe(env, *bound.pose, nearest)})
        for name, policy in policies.items():
            row = run_episode(env, name, policy, Task(name, index, seed, bound.gain_db))
            pose = row.final_pose
            rows[name].append({"gain": row.gain_db, **describe(env, pose["cell"], pose["heading"], nearest),
                               "undone": undone_turns(row.poses)})
        print(f"episode {index + 1}/{len(seeds)}", file=sys.stderr)
    total = sum(r["gain"] for r in rows["oracle bound"])
    print(f"{len(seeds)} episodes of the {suite.name} suite (budget {env.config.budget} steps, target cue "
          f"{env.config.target_cue}, stand-off {env.config.standoff_m} m)")
    print("| end poses of | mean gain dB | share of the bound | distance to target m | in line of sight of the "
          "target | shielded from a distractor | shielded from one the ring's nearest cell sees | facing the target | "
          "turns undone per episode |")
    print("|---|---|---|---|---|---|---|---|---|")
    for name, found in rows.items():
        mean = {k: np.mean([r[k] for r in found]) for k in found[0]}
        share = sum(r["gain"] for r in found) / total if total else float("nan")
        undone = f"{mean['undone']:.2f}" if "undone" in mean else "-"
        print(f"| {name} | {mean['gain']:.2f} | {share:.1%} | {mean['distance']:.2f} | {mean['los']:.1%} | "
              f"{mean['shielded']:.1%} | {mean['shielded_vs_nearest']:.1%} | {mean['facing']:.1%} | "
              f"{undone} |")


if __name__ == "__main__":
    main()
