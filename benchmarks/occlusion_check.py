"""Fraction of occluded-to-line-of-sight moves that raise the separator's SI-SDR, over the bundled scenes.

Usage: python benchmarks/occlusion_check.py [--separator delay-and-sum] [--per-spot 3]
"""

from __future__ import annotations

import argparse

import numpy as np


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--separator", default="delay-and-sum")
    parser.add_argument("--per-spot", type=int, default=3)
    args = parser.parse_args()
    from hearnav.acoustics import AcousticSettings
    from occlusion import check_scene
    from hearnav.env.worlds import get_world
    from hearnav.scene.library import scene_names

    rng = np.random.default_rng(2026)
    results = []
    for name in scene_names():
        rows = check_scene(get_world(name, AcousticSettings(), 8000), rng, args.separator, args.per_spot)
        results += rows
        if rows:
            gains = np.array([r.gain_db for r in rows])
            print(f"{name:22s} moves {len(rows):3d}  raised {np.mean(gains > 0):5.0%}  mean gain {gains.mean():+6.2f} dB")
        else:
            print(f"{name:22s} no occluded-to-visible move")
    gains = np.array([r.gain_db for r in results])
    print(f"all: {len(gains)} moves, {np.mean(gains > 0):.0%} raise {args.separator}'s SI-SDR, "
          f"median gain {np.median(gains):+.2f} dB")


if __name__ == "__main__":
    main()
