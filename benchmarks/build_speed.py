"""Build the default scene's responses on one core, compare the fast renderer with the straightforward one, time
the procedural generator.

Prints: stage times of a full build (no cache), the cache size, and, for a sample of (cell, spot) pairs, the
time per binaural early response of the fast renderer (affine head shadow + band trains + batched FFT) and of
the straightforward one (each path's frequency response evaluated bin by bin), with their ratio, measured in
the same run. Usage: python benchmarks/build_speed.py [SCENE] [--sample N]
"""

from __future__ import annotations

import os

for _var in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS", "PRA_NUM_THREADS"):
    os.environ[_var] = "1"  # one core, as the goal states

import argparse  # noqa: E402
import tempfile  # noqa: E402
import time  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("scene", nargs="?", default=None, help="scene name (default: the default scene)")
    parser.add_argument("--sample", type=int, default=16, help="cells rendered both ways (16 = one build batch)")
    args = parser.parse_args()

    from hearnav.acoustics import AcousticSettings, room
    from hearnav.acoustics import cache as cache_mod
    from hearnav.acoustics import responses as R
    from hearnav.acoustics.synthesis import PathSet, early_direct, early_fast
    from hearnav.acoustics.settings import RESPONSE_LEAD
    from hearnav.physics.geometry import heading_angles
    from hearnav.scene.grid import build_grid
    from hearnav.scene.library import DEFAULT_SCENE, load_named

    scene = load_named(args.scene or DEFAULT_SCENE)
    settings = AcousticSettings(n_threads=1)
    grid = build_grid(scene, settings.n_headings)
    print(f"scene {scene.name}: {scene.floor_area:.1f} m^2, {grid.n_cells} cells x {settings.n_headings} headings x "
          f"{len(scene.spots)} spots = {grid.n_cells * settings.n_headings * len(scene.spots)} binaural responses")

    t0 = time.perf_counter()
    receivers = np.c_[grid.centres, np.full(grid.n_cells, scene.ear_height)]
    images = room.image_sources(scene, settings, receivers)
    t_ism = time.perf_counter() - t0
    with tempfile.TemporaryDirectory() as tmp:
        os.environ["HEARNAV_CACHE"] = tmp
        t0 = time.perf_counter()
        resp = R.build_responses(scene, grid, settings)
        t_build = time.perf_counter() - t0
        path = Path(tmp) / "r.npz"
        t0 = time.perf_counter()
        cache_mod.save(resp, path, "bench")
        t_save = time.perf_counter() - t0
        size = path.stat().st_size
        t0 = time.perf_counter()
        cache_mod.load(path)
        t_load = time.perf_counter() - t0
    print(f"full build (image sources, ray tracing, rendering): {t_build:.1f} s  [goal <= 30 s on one core]")
    print(f"  image sources alone: {t_ism:.2f} s; save {t_save:.2f} s; load {t_load:.2f} s")
    print(f"  cache file {size / 1e6:.1f} MB  [goal < 100 MB]; response length {resp.length / resp.fs * 1000:.0f} ms")

    # Sample: the first cells, every spot, every heading, the same paths for both renderers.
    spots = np.array([s.position for s in scene.spots])
    paths, *_ = R._pair_paths(images, receivers[: args.sample], spots, room.air_coefficients(settings),
                              (resp.length - RESPONSE_LEAD) / settings.fs, settings.speed_of_sound)
    headings = heading_angles(settings.n_headings)
    n = paths.n_pairs * settings.n_headings
    length = resp.early.shape[-1]
    common = (headings, settings.fs, settings.speed_of_sound, settings.head_radius, length, RESPONSE_LEAD)
    t0 = time.perf_counter()
    fast = early_fast(paths, *common)
    t_fast = (time.perf_counter() - t0) / n
    t0 = time.perf_counter()
    slow = early_direct(paths, *common)
    t_slow = (time.perf_counter() - t0) / n
    err = np.linalg.norm(np.fft.rfft(fast - slow, axis=-1)[..., : int(0.9 * length / 2)]) / np.linalg.norm(
        np.fft.rfft(slow, axis=-1)[..., : int(0.9 * length / 2)])
    print(f"sample: {n} binaural early responses, {paths.vectors.shape[0]} paths")
    print(f"  fast renderer:            {t_fast * 1e3:8.3f} ms per response")
    print(f"  straightforward renderer: {t_slow * 1e3:8.3f} ms per response")
    print(f"  ratio: {t_slow / t_fast:.1f}x faster  [goal >= 20x]; relative difference below 0.9 Nyquist {err:.1e}")
    del PathSet

    from hearnav.scene import generator

    t0 = time.perf_counter()
    for seed in range(100, 110):
        generator.generate_scene(seed)
    print(f"procedural scenes: {(time.perf_counter() - t0) / 10 * 1e3:.0f} ms per scene (gen-100 .. gen-109)  "
          f"[goal < 500 ms]")


if __name__ == "__main__":
    main()
