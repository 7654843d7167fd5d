"""Mean score of every registered separator on the val scenes, on identical windows.

Each episode is drawn from a seed (numpy SeedSequence) and walked with a seeded random policy that does not
depend on the separator; at every window in which the target sounds, every separator separates the same scored
window and is scored as the environment scores (:mod:`hearnav.env.scoring`): the mean over the two ears of the
SI-SDR against the target's early image at that ear, and against its full image (separation only). Prints a
Markdown table: mean score, its 95 % bootstrap confidence interval over episodes, the gain over the unprocessed
mixture (the ``identity`` separator, the input reference) and the mean full-image score.
Usage: python benchmarks/separators_table.py [--split val] [--episodes 24]
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))  # this checkout's hearnav


def window_scores(env, names: list[str]) -> dict[str, tuple[float, float]] | None:
    """(score, full score) in dB of each separator on the window the environment heard last, or None when the
    target is silent in it. ``env`` must use a privileged separator, so its context carries the early image (the
    registry hides it from the others)."""
    from hearnav.env.scoring import binaural_scores
    from hearnav.separation import get_separator

    scored = env.heard.scored
    ctx = env.context(env.cell, env.heading, scored)
    out = {}
    for name in names:
        estimate = get_separator(name)(scored.mixture, ctx)
        score, full = binaural_scores(scored.early, estimate), binaural_scores(scored.target_image, estimate)
        if score is None or full is None:
            return None
        out[name] = (score[0], full[0])
    return out


def episode_means(env, names: list[str], seed: int) -> dict[str, tuple[float, float]]:
    """Mean (score, full score) of each separator over the sounding windows of one seeded random-walk episode."""
    rng = np.random.default_rng(seed)
    env.reset(seed=seed)
    rows = [window_scores(env, names)]
    truncated = False
    while not truncated:
        *_, truncated, _ = env.step(int(rng.integers(4)))
        rows.append(window_scores(env, names))
    rows = [r for r in rows if r is not None]
    return {name: tuple(np.mean([r[name] for r in rows], axis=0)) for name in names}


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--split", default="val")
    parser.add_argument("--episodes", type=int, default=24)
    args = parser.parse_args()
    from scipy import stats

    from hearnav.env import HearNavEnv
    from hearnav.separation import get_separator, separator_names

    names = separator_names()
    env = HearNavEnv(scenes=args.split, separator="oracle-mask")  # privileged: the context carries the early image
    seeds = [int(s.generate_state(1)[0]) for s in np.random.SeedSequence(2026).spawn(args.episodes)]
    per_episode = [episode_means(env, names, seed) for seed in seeds]
    score = {n: np.array([e[n][0] for e in per_episode]) for n in names}
    full = {n: np.array([e[n][1] for e in per_episode]) for n in names}
    print(f"{args.episodes} episodes on the {args.split} scenes, seeded random walk, "
          f"{env.config.budget + 1} windows each (those with the target sounding)")
    print("| separator | privileged | mean score (dB) | 95% CI | gain over the mixture (dB) | full-image score (dB) |")
    print("|---|---|---|---|---|---|")
    for name in sorted(names, key=lambda n: -score[n].mean()):
        ci = stats.bootstrap((score[name],), np.mean, confidence_level=0.95, random_state=0).confidence_interval
        gain = score[name].mean() - score["identity"].mean()
        print(f"| {name} | {'yes' if get_separator(name).privileged else 'no'} | {score[name].mean():.2f} | "
              f"[{ci.low:.2f}, {ci.high:.2f}] | {gain:+.2f} | {full[name].mean():.2f} |")


if __name__ == "__main__":
    main()
