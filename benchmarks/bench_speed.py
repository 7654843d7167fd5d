"""Time the test suite: oracle bounds once (and again from the cache), then the three scripted baselines.

Runs ``hearnav bench`` twice in a fresh results folder with --workers 2: first the oracle bounds alone are
computed from scratch (their cache file for this suite is moved aside and restored afterwards), then
still, face-arrival and random-walk run on every episode with a warm response cache. Prints both figures.
Usage: python benchmarks/bench_speed.py [--suite test] [--workers 2]
"""

from __future__ import annotations

import argparse
import shutil
import tempfile
import time
from pathlib import Path


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--suite", default="test")
    parser.add_argument("--workers", type=int, default=2)
    args = parser.parse_args()
    from hearnav.acoustics import cache_dir
    from hearnav.bench.oracle import OracleCache
    from hearnav.bench.runner import compute_oracles
    from hearnav.bench.suites import load_suite
    from hearnav.cli import main as cli

    suite = load_suite(args.suite)
    folder = cache_dir() / "oracle"
    cached = OracleCache(folder, suite.result_key()).path
    with tempfile.TemporaryDirectory() as tmp:
        aside = Path(tmp) / "oracle.json"
        if cached.exists():
            shutil.move(cached, aside)
        try:
            t0 = time.perf_counter()
            compute_oracles(suite, folder, args.workers)
            t_oracle = time.perf_counter() - t0
            t0 = time.perf_counter()
            compute_oracles(suite, folder, args.workers)
            t_cached = time.perf_counter() - t0
        finally:
            if aside.exists():
                shutil.move(aside, cached)
        out = Path(tmp) / "run"
        t0 = time.perf_counter()
        status = cli(["bench", "--suite", args.suite, "--out", str(out), "--workers", str(args.workers),
                      "--policy", "still", "--policy", "face-arrival", "--policy", "random-walk"])
        t_run = time.perf_counter() - t0
    print(f"suite {suite.name}: {suite.episodes} episodes, --workers {args.workers}")
    print(f"oracle bounds from scratch: {t_oracle:.0f} s  [goal <= 300 s]; from the cache: {t_cached:.2f} s")
    print(f"three scripted baselines (exit {status}): {t_run:.0f} s  [goal <= 120 s]")


if __name__ == "__main__":
    main()
