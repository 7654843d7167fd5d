"""``hearnav bench``: run policies on a suite, write per-episode rows and a summary, print the table."""

from __future__ import annotations

import os
import sys
from pathlib import Path

from hearnav.cli.paths import output_folder


def register(sub) -> None:
    """Add the ``bench`` subcommand."""
    from hearnav.bench.session import EPISODE_TIMEOUT_S

    p = sub.add_parser("bench", help="run policies on a benchmark suite",
                       description="Run policies on a suite's fixed episodes. Writes DIR/episodes.jsonl (one row "
                                   "per policy x episode) and DIR/summary.json; rerunning resumes.")
    p.add_argument("--policy", action="append", required=True, metavar="P",
                   help="a registered name, module:attr or path/to/file.py:attr (repeat for several)")
    p.add_argument("--suite", default="smoke", help="smoke, val, test, or a suite YAML file (default smoke)")
    p.add_argument("--out", type=Path, required=True, help="results folder")
    p.add_argument("--workers", type=int, default=1, help="worker processes (default 1)")
    p.add_argument("--reference", default="still", help="policy the others are compared with (default still)")
    p.add_argument("--episode-timeout", type=float, default=EPISODE_TIMEOUT_S, metavar="SECONDS",
                   help="fail an episode whose policy takes longer than this, or whose worker process dies, and "
                        f"go on (default {EPISODE_TIMEOUT_S:g})")
    p.add_argument("--save-audio", type=int, default=0, metavar="K",
                   help="write WAVs for the first K episodes of each policy (peak -1 dBFS; start playback quietly)")
    p.set_defaults(run=run)


class _Bars:
    """Progress of a benchmark run as tqdm bars on stderr, one per stage."""

    def __init__(self):
        self.bar = None

    def __call__(self, stage: str, done: int, total: int) -> None:
        from tqdm import tqdm

        if done == 0:
            self.close()
            self.bar = tqdm(total=total, desc=stage, unit="ep", file=sys.stderr, disable=None)
        else:
            self.bar.update(done - self.bar.n)

    def close(self) -> None:
        if self.bar is not None:
            self.bar.close()
            self.bar = None


def run(args) -> int:
    from hearnav.bench import run as run_bench
    from hearnav.bench.session import worker_count
    from hearnav.bench.suites import load_suite
    from hearnav.report import format_table

    output_folder(args.out)
    suite = load_suite(str(args.suite))
    workers = worker_count(args.workers, suite.episodes) if args.workers >= 1 else args.workers
    if workers != args.workers:
        print(f"hearnav: note: --workers {args.workers} capped at {workers} (at most one per episode, "
              f"{suite.episodes}, and one per CPU, {os.cpu_count()})", file=sys.stderr)
    bars = _Bars()
    try:
        summary = run_bench(suite, args.policy, args.out, workers=workers, reference=args.reference,
                            save_audio=args.save_audio, progress=bars, episode_timeout=args.episode_timeout)
    finally:
        bars.close()
    print(format_table(summary))
    failed = summary.failures
    if failed:
        print(f"{failed} episode(s) failed; see the 'error' field in {args.out / 'episodes.jsonl'}", file=sys.stderr)
    return 1 if failed else 0
