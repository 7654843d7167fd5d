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
                   help="write WAVs for the first K episodes of each policy (-23 LUFS, true peak at most -1 dBTP; start "
                        "playback quietly)")
    p.set_defaults(run=run)


def run(args) -> int:
    from hearnav.bench import run as run_bench
    from hearnav.bench.session import worker_count
    from hearnav.bench.suites import load_suite
    from hearnav.progress import Feedback
    from hearnav.report import format_table

    output_folder(args.out)
    suite = load_suite(str(args.suite))
    workers = worker_count(args.workers, suite.episodes) if args.workers >= 1 else args.workers
    if workers != args.workers:
        print(f"hearnav: note: --workers {args.workers} capped at {workers} (at most one per episode, "
              f"{suite.episodes}, and one per CPU, {os.cpu_count()})", file=sys.stderr)
    with Feedback() as feedback:  # tqdm bars on a terminal, a line every few seconds in a log
        summary = run_bench(suite, args.policy, args.out, workers=workers, reference=args.reference,
                            save_audio=args.save_audio, progress=feedback, episode_timeout=args.episode_timeout)
    print(format_table(summary))
    failed = summary.failures
    if failed:
        print(f"{failed} episode(s) failed; see the 'error' field in {args.out / 'episodes.jsonl'}", file=sys.stderr)
    print(f"hearnav: results in {args.out} (episodes.jsonl, summary.json{', audio/' if args.save_audio else ''})",
          file=sys.stderr)
    return 1 if failed else 0
