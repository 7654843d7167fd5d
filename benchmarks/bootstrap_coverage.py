"""Coverage of the summary's 95 % intervals on synthetic tables with a known grand mean.

Each table has S scenes drawn at random (scene effects N(0, scene_sd^2) dB around 10 dB), 10-30 episodes per
scene with N(0, 4^2) dB episode noise. For every (S, scene_sd) the script draws --draws tables and prints how
often the two-level interval (scenes, then episodes; hearnav.bench.stats.bootstrap_ci with scenes) and the
episode-only interval cover 10 dB, and their mean widths. Usage: python benchmarks/bootstrap_coverage.py
[--draws 300] [--resamples 999]
"""

from __future__ import annotations

import argparse

import numpy as np


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--draws", type=int, default=300)
    parser.add_argument("--resamples", type=int, default=999)
    args = parser.parse_args()
    from hearnav.bench.stats import bootstrap_ci

    print("scenes  scene SD dB  two-level covers  width dB  episodes-only covers  width dB")
    for n_scenes in (3, 6, 10):
        for scene_sd in (0.0, 3.0):
            rng = np.random.default_rng(np.random.SeedSequence([n_scenes, int(scene_sd * 10)]))
            hits, widths = np.zeros(2), np.zeros(2)
            for draw in range(args.draws):
                sizes = rng.integers(10, 31, size=n_scenes)
                effects = rng.normal(0.0, scene_sd, n_scenes)
                x = np.concatenate([10.0 + e + rng.normal(0.0, 4.0, n) for e, n in zip(effects, sizes)])
                labels = np.repeat(np.arange(n_scenes), sizes).tolist()
                for k, scenes in enumerate((labels, None)):
                    low, high = bootstrap_ci(x, n_resamples=args.resamples, seed=draw, scenes=scenes)
                    hits[k] += low <= 10.0 <= high
                    widths[k] += high - low
            cover, width = hits / args.draws, widths / args.draws
            print(f"{n_scenes:>6}  {scene_sd:>11.1f}  {cover[0]:>16.3f}  {width[0]:>8.2f}  {cover[1]:>20.3f}  "
                  f"{width[1]:>8.2f}")


if __name__ == "__main__":
    main()
