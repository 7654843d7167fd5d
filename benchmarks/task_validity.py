"""Does the task reward listening? A validity report on a suite's first episodes.

For each episode it computes the oracle bound twice: within the budget (the benchmark's bound) and with no step
limit (to ask whether the budget lets a policy reach the best pose). It plays ``random-walk`` (no audio, no
cue), ``follow-bearing`` (the observed bearing cue, non-privileged), ``approach`` (privileged: walks to the ring's
edge) and ``still``, and prints:
- the share of the bound's gain each reaches, as the ratio of mean gains (sum of gains / sum of bound gains);
- the SD of the per-step reward under ``random-walk`` and the largest absolute reward under ``still`` (must be 0);
- the share of episodes whose best pose (no step limit) lies within the budget;
- the median distance of the bound's pose from the target, and the share of bound poses that are shielded from
  at least one distractor (no line of sight to its spot) that the cell nearest the target outside the stand-off
  ring is not shielded from;
- the share of the bound reached by standing at that nearest cell facing the target (geometry alone, no score),
  which says how much the choice of position around the ring carries beyond getting close; and the median
  distance between the target's spot and its nearest distractor's.

Usage: python benchmarks/task_validity.py [--suite test] [--episodes 60] [--budget N]
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))  # this checkout's hearnav

POLICIES = ("random-walk", "follow-bearing", "approach", "still")


def ring_nearest_cell(env) -> int:
    """The navigable cell nearest the target among those outside every source's stand-off ring."""
    grid, scene = env.world.grid, env.world.scene
    spots = np.array([scene.spots[s.spot].position[:2] for s in env.plan.sources])
    centres = np.asarray(grid.centres, float)
    distances = np.hypot(*(centres[:, None, :] - spots[None]).transpose(2, 0, 1))  # (C, S)
    outside = np.all(distances >= getattr(env.config, "standoff_m", 0.0), axis=1)
    return int(np.argmin(np.where(outside, distances[:, 0], np.inf)))


def shields(env, cell: int, nearest: int) -> bool:
    """Whether ``cell`` is out of line of sight of a distractor's spot that ``nearest`` sees."""
    los = env.world.poses.line_of_sight
    distractors = [s.spot for s in env.plan.sources[1:]]
    return any(not los[cell, d] and los[nearest, d] for d in distractors)


def facing(env, cell: int, target: np.ndarray) -> int:
    """The heading at ``cell`` that points most nearly at ``target``."""
    grid = env.world.grid
    dx, dy = np.asarray(target, float) - np.asarray(grid.centres[cell], float)
    angles = np.array([grid.heading_angle(h) for h in range(grid.n_headings)])
    return int(np.argmin(np.abs(np.angle(np.exp(1j * (np.arctan2(dy, dx) - angles))))))


def pose_gain(env, pose: tuple[int, int]) -> float:
    """The paired gain of a pose over the start on the episode's evaluation windows (the env just reset)."""
    from hearnav.bench.oracle import paired_gains

    start = (env.cell, env.heading)
    scores = env.scores_ahead([pose, start], env.config.eval_windows, offset=env.config.budget)
    return float(paired_gains(scores, 1)[0][0])


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--suite", default="test")
    parser.add_argument("--episodes", type=int, default=60)
    parser.add_argument("--budget", type=int, default=None, help="override the suite's budget")
    args = parser.parse_args()
    from hearnav.bench.oracle import episode_bound
    from hearnav.bench.registry import load_policy
    from hearnav.bench.runner import Task, run_episode
    from hearnav.bench.suites import load_suite
    from hearnav.env import HearNavEnv

    suite = load_suite(args.suite)
    options = suite.env_config().model_dump()
    if args.budget is not None:
        options["budget"] = args.budget
    env = HearNavEnv(**options)
    seeds = suite.episode_seeds()[:args.episodes]
    policies = {name: load_policy(name)[1] for name in POLICIES}
    bounds, within, distance, shielded, best_steps, nearest_gain, spacing = [], [], [], [], [], [], []
    gains = {name: [] for name in POLICIES}
    rewards = {name: [] for name in POLICIES}
    for index, seed in enumerate(seeds):
        bound = episode_bound(env, seed, any_steps=True)
        bounds.append(bound.gain_db)
        within.append(bound.best_steps <= env.config.budget)
        best_steps.append(bound.best_steps)
        target = env.world.scene.spots[env.plan.sources[0].spot].position[:2]
        distance.append(float(np.hypot(*(np.asarray(env.world.grid.centres[bound.pose[0]]) - target))))
        nearest = ring_nearest_cell(env)
        shielded.append(shields(env, bound.pose[0], nearest))
        nearest_gain.append(pose_gain(env, (nearest, facing(env, nearest, target))))
        spots = [np.asarray(env.world.scene.spots[s.spot].position[:2]) for s in env.plan.sources]
        spacing.append(min(float(np.hypot(*(spots[0] - d))) for d in spots[1:]))
        for name, policy in policies.items():
            row = run_episode(env, name, policy, Task(name, index, seed, bound.gain_db), rewards=rewards[name])
            gains[name].append(row.gain_db)
        print(f"episode {index + 1}/{len(seeds)}: bound {bound.gain_db:+.2f} dB", file=sys.stderr)
    total = float(np.sum(bounds))
    print(f"{len(seeds)} episodes of the {suite.name} suite, budget {env.config.budget} steps, "
          f"{env.config.eval_windows} evaluation windows, stand-off {getattr(env.config, 'standoff_m', 0.0)} m, "
          f"target cue {getattr(env.config, 'target_cue', 'position')}")
    print("| measure | value |")
    print("|---|---|")
    print(f"| mean bound gain (dB) | {np.mean(bounds):.2f} |")
    for name in POLICIES[:3]:
        print(f"| share of the bound's gain, {name} (ratio of means) | {np.sum(gains[name]) / total:.1%} |")
    print(f"| per-step reward SD, random-walk (dB) | {np.std(rewards['random-walk']):.2f} |")
    print(f"| largest absolute reward, still (dB) | {np.max(np.abs(rewards['still'])):.2f} |")
    print(f"| episodes whose best pose is within the budget | {np.mean(within):.1%} |")
    print(f"| steps to the best pose with no step limit: median, 95th percentile | {np.median(best_steps):.0f}, "
          f"{np.percentile(best_steps, 95):.0f} |")
    print(f"| median distance of the bound's pose from the target (m) | {np.median(distance):.2f} |")
    print(f"| share of the bound's gain, nearest cell outside the ring facing the target | "
          f"{np.sum(nearest_gain) / total:.1%} |")
    print(f"| median distance from the target's spot to the nearest distractor's (m) | {np.median(spacing):.2f} |")
    print(f"| bound poses shielded from a distractor the ring's nearest cell sees | {np.mean(shielded):.1%} |")


if __name__ == "__main__":
    main()
