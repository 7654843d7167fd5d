"""Mean SI-SDR of every registered separator on the val scenes, on identical windows.

Each episode is drawn from a seed (numpy SeedSequence) and walked with a seeded random policy that does not
depend on the separator, so every separator scores exactly the same windows. Prints a Markdown table: mean
SI-SDR over all windows with the target sounding, and its 95 % bootstrap confidence interval over episodes.
Usage: python benchmarks/separators_table.py [--split val] [--episodes 24]
"""

from __future__ import annotations

import argparse

import numpy as np
from scipy import stats


def run(separator: str, split: str, seeds: list[int]) -> np.ndarray:
    from hearnav.env import HearNavEnv

    env = HearNavEnv(scenes=split, separator=separator)
    per_episode = []
    for seed in seeds:
        rng = np.random.default_rng(seed)
        _, info = env.reset(seed=seed)
        scores = [info["si_sdr_db"]] if info["target_active"] else []
        mixture = [info["input_si_sdr_db"]] if info["target_active"] else []
        truncated = False
        while not truncated:
            _, _, _, truncated, info = env.step(int(rng.integers(4)))
            if info["target_active"]:
                scores.append(info["si_sdr_db"])
                mixture.append(info["input_si_sdr_db"])
        per_episode.append((np.mean(scores), np.mean(mixture)))
    return np.array(per_episode)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--split", default="val")
    parser.add_argument("--episodes", type=int, default=24)
    args = parser.parse_args()
    from hearnav.separation import get_separator, separator_names

    seeds = [int(s.generate_state(1)[0]) for s in np.random.SeedSequence(2026).spawn(args.episodes)]
    rows, mixture = [], None
    for name in separator_names():
        res = run(name, args.split, seeds)
        mixture = res[:, 1]
        ci = stats.bootstrap((res[:, 0],), np.mean, confidence_level=0.95, random_state=0).confidence_interval
        rows.append((name, get_separator(name).privileged, res[:, 0].mean(), ci.low, ci.high))
    print(f"{args.episodes} episodes on the {args.split} scenes, seeded random walk, {len(seeds)} x 21 windows")
    print("| separator | privileged | mean SI-SDR (dB) | 95% CI |")
    print("|---|---|---|---|")
    for name, priv, mean, lo, hi in sorted(rows, key=lambda r: -r[2]):
        print(f"| {name} | {'yes' if priv else 'no'} | {mean:.2f} | [{lo:.2f}, {hi:.2f}] |")
    print(f"(mixture SI-SDR, the unprocessed ear nearer the target: {mixture.mean():.2f} dB)")


if __name__ == "__main__":
    main()
