"""env.step rate of the default configuration with and without resets, against its floor and against
re-simulating the room.

In one process it measures:
- the first-load cost of the dry sounds: rendering every voice of the configured pool into a fresh, empty clip
  store (a temporary folder: what the first use of a cache pays once), then opening them from HEARNAV_CACHE;
- the time to open every scene's tables once (a process pays it once: each part's CRC-32 is checked);
- steps per second of HearNavEnv (default config) over seeded random-action episodes, after a warm-up: with
  resets counted (what training pays) and env.step alone, and the mean reset time;
- the floor for the same windows: bare FFT mixing from cached response spectra (one FFT of the dry segments,
  padded to a multiple of four rows as the environment does so pocketfft transforms them together, a product
  per source, the inverse FFT of the two ears) plus one STFT/ISTFT pair;
- re-simulating the room with pyroomacoustics at every step (hybrid image sources + ray tracing at both
  ears, then convolution), which is how a user would wire it by hand.
The env and the floor run in alternating chunks of episodes, so the ratio is measured under the same machine
load. Usage: python benchmarks/step_speed.py [--episodes 30] [--resim 2] [--chunk 5]
"""

from __future__ import annotations

import os
import sys
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))  # this checkout's hearnav
os.environ.setdefault("PRA_NUM_THREADS", "1")
for _var in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ[_var] = "1"

import argparse  # noqa: E402
import time  # noqa: E402

import numpy as np  # noqa: E402
import scipy.fft as sfft  # noqa: E402


def run_episodes(env, seeds: list[int]) -> tuple[float, float, int, list]:
    """Seconds spent in env.step and in env.reset, steps taken, and (world, cell, heading, time) of every step for
    the floor."""
    spent, reset_s, steps, record = 0.0, 0.0, 0, []
    for seed in seeds:
        rng = np.random.default_rng(seed)
        t0 = time.perf_counter()
        env.reset(seed=seed)
        reset_s += time.perf_counter() - t0
        truncated = False
        while not truncated:
            action = int(rng.integers(4))
            t0 = time.perf_counter()
            _, _, _, truncated, _ = env.step(action)
            spent += time.perf_counter() - t0
            steps += 1
            record.append((env.world, env.sources, env.cell, env.heading, env.heard.window.start))
    return spent, reset_s, steps, record


def first_load(env) -> None:
    """Print the time to render the configured pool's clips into an empty store, then to open them from the cache."""
    import tempfile

    from hearnav.tables import sounds as clips

    cfg, n = env.config, env.sources[0].signal.size  # every source of an episode is as long as the clips
    with tempfile.TemporaryDirectory(prefix="hearnav-clips-") as tmp:
        t0 = time.perf_counter()
        voices = clips.prerender(cfg.sound_categories, cfg.sound_pool, n, env.fs, Path(tmp))
        cold = time.perf_counter() - t0
        clips.forget_opened()
    t0 = time.perf_counter()
    clips.prerender(cfg.sound_categories, cfg.sound_pool, n, env.fs)
    print(f"first load of the clip store: {cold:.1f} s cold ({voices} voices x {clips.TAKES} takes of "
          f"{clips.clip_length(n, env.fs) / env.fs:g} s, {cfg.sound_pool} pool); {time.perf_counter() - t0:.2f} s "
          f"from HEARNAV_CACHE (built there if absent)")


def floor_time(record: list) -> float:
    """Seconds for bare FFT mixing of the recorded windows from cached spectra, plus one STFT/ISTFT pair."""
    from hearnav.listening import ROW_BLOCK
    from hearnav.separation.stft import istft, stft

    spent = 0.0
    for world, sources, cell, heading, start in record:
        lw = world.listening
        spectra = [lw.spectrum(cell, heading, s.spot) for s in sources]  # cached: not timed as work
        t0 = time.perf_counter()
        lo = start - lw.history
        segs = np.zeros((ROW_BLOCK * -(-len(sources) // ROW_BLOCK), lw.n_fft), np.float32)  # as the env pads rows
        for i, s in enumerate(sources):
            segs[i, : lw.history + lw.window_len] = s.signal[lo: start + lw.window_len]
        seg = sfft.rfft(segs, axis=-1)
        mix = sfft.irfft(sum(seg[i][None] * spectra[i] for i in range(len(sources))), lw.n_fft, axis=-1)
        window = mix[:, lw.history: lw.history + lw.window_len]
        istft(stft(window, 512, 128)[0], lw.window_len, 512, 128)
        spent += time.perf_counter() - t0
    return spent


def resim_time(env, n_steps: int) -> float:
    """Seconds per step of re-simulating the room with pyroomacoustics at the listener's two ears."""
    import pyroomacoustics as pra

    from hearnav.acoustics import room as room_mod
    from hearnav.physics.head import ear_axes

    settings = env.config.acoustics
    scene, grid = env.world.scene, env.world.grid
    total = 0.0
    for k in range(n_steps):
        cell = (env.cell + k) % grid.n_cells
        centre = np.r_[grid.centres[cell], scene.ear_height]
        ears = centre + settings.head_radius * ear_axes(grid.heading_angle(env.heading))
        t0 = time.perf_counter()
        room_mod.configure(settings)
        room = pra.Room(room_mod.room_walls(scene), fs=settings.fs, max_order=settings.ism_order, ray_tracing=True)
        room.set_ray_tracing(receiver_radius=settings.receiver_radius)
        for src, sig in zip(env.plan.sources, env.sources):
            room.add_source(scene.spots[src.spot].position, signal=sig.signal[: env.window_len * 2])
        room.add_microphone_array(ears.T)
        room.simulate()
        total += time.perf_counter() - t0
    return total / n_steps


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--episodes", type=int, default=30)
    parser.add_argument("--warmup", type=int, default=10)
    parser.add_argument("--resim", type=int, default=2, help="steps re-simulated with pyroomacoustics")
    parser.add_argument("--chunk", type=int, default=5, help="episodes per chunk; the env and the floor alternate")
    args = parser.parse_args()
    from hearnav.env import HearNavEnv

    env = HearNavEnv(config="default")
    seeds = [int(s.generate_state(1)[0]) for s in np.random.SeedSequence(7).spawn(args.warmup + args.episodes)]
    t0 = time.perf_counter()
    env.reset(seed=seeds[0])
    env.step(0)
    print(f"first reset and step of the process: {time.perf_counter() - t0:.2f} s (tables opened from the store, "
          f"built first if absent)")
    first_load(env)
    t0 = time.perf_counter()
    env.preload()  # every scene's tables, as a long training run has after its first episodes
    print(f"opening the tables of all {len(env.scene_names)} scenes: {time.perf_counter() - t0:.1f} s (once per "
          f"process: each part's CRC-32 is checked; not counted in the resets below)")
    t0 = time.perf_counter()
    run_episodes(env, seeds[: args.warmup])
    print(f"warm-up: {args.warmup} episodes in {time.perf_counter() - t0:.1f} s (scene builds come from the cache)")
    # The env and the floor alternate in chunks of episodes, so a change of machine speed during the run
    # (these machines are shared) weighs on both alike. A chunk's windows (about 40 MB of response spectra)
    # do not fit in the last-level cache, so the floor does not find the env's data cached.
    step_total = floor_total = reset_total = 0.0
    steps = 0
    measured = seeds[args.warmup:]
    for k in range(0, len(measured), args.chunk):
        spent, reset_s, n, record = run_episodes(env, measured[k: k + args.chunk])
        step_total += spent
        reset_total += reset_s
        steps += n
        floor_total += floor_time(record)
    step_s, floor_s = step_total / steps, floor_total / steps
    resim_s = resim_time(env, args.resim)
    paid_s = (step_total + reset_total) / steps
    print(f"with resets: {1 / paid_s:8.1f} steps/s ({paid_s * 1e3:.2f} ms per step, {steps / len(measured):.0f} steps "
          f"per episode)  [goal >= 500 steps/s]")
    print(f"env.reset: {reset_total / len(measured) * 1e3:.1f} ms mean over {len(measured)} resets  [goal <= 10 ms]")
    print(f"env.step: {1 / step_s:8.1f} steps/s ({step_s * 1e3:.2f} ms)  [goal >= 300 steps/s]")
    print(f"floor:    {1 / floor_s:8.1f} steps/s ({floor_s * 1e3:.2f} ms) bare FFT mixing + one STFT/ISTFT pair")
    print(f"ratio step / floor: {step_s / floor_s:.2f}x  [goal <= 1.5x]")
    print(f"re-simulating with pyroomacoustics: {resim_s:.2f} s per step; env.step is {resim_s / step_s:.0f}x "
          f"faster  [goal >= 100x]")


if __name__ == "__main__":
    main()
