"""``hearnav bench``: run policies on a suite, write per-episode rows and a summary, print the table."""

from __future__ import annotations

import json
import os
import sys
import tempfile
from pathlib import Path


def register(sub) -> None:
    """Add the ``bench`` subcommand."""
    p = sub.add_parser("bench", help="run policies on a benchmark suite",
                       description="Run policies on a suite's fixed episodes. Writes DIR/episodes.jsonl (one row "
                                   "per policy x episode) and DIR/summary.json; rerunning resumes.")
    p.add_argument("--policy", action="append", required=True, metavar="P",
                   help="a registered name, module:attr or path/to/file.py:attr (repeat for several)")
    p.add_argument("--suite", default="smoke", help="smoke, val, test, or a suite YAML file (default smoke)")
    p.add_argument("--out", type=Path, required=True, help="results folder")
    p.add_argument("--workers", type=int, default=1, help="worker processes (default 1)")
    p.add_argument("--reference", default="still", help="policy the others are compared with (default still)")
    p.add_argument("--save-audio", type=int, default=0, metavar="K",
                   help="write WAVs for the first K episodes of each policy (peak -1 dBFS; start playback quietly)")
    p.set_defaults(run=run)


def code_version() -> str:
    """The hearnav version and response-model version that produced results."""
    from hearnav import __version__
    from hearnav.acoustics.settings import MODEL_VERSION

    return f"{__version__}+model{MODEL_VERSION}"


def _write_json(path: Path, data: dict) -> None:
    fd, tmp = tempfile.mkstemp(dir=path.parent, suffix=".tmp")
    with os.fdopen(fd, "w") as f:
        json.dump(data, f, indent=2, sort_keys=True)
        f.flush()
        os.fsync(f.fileno())
    os.replace(tmp, path)


def run(args) -> int:
    from tqdm import tqdm

    from hearnav.acoustics import cache_dir
    from hearnav.bench import results, stats
    from hearnav.bench.registry import resolve
    from hearnav.bench.runner import Task, compute_oracles, run_tasks
    from hearnav.bench.suites import load_suite
    from hearnav.errors import ConfigError

    if args.workers < 1:
        raise ConfigError(f"--workers must be at least 1 (got {args.workers})")
    if args.save_audio < 0:
        raise ConfigError(f"--save-audio must be 0 or more (got {args.save_audio})")
    suite = load_suite(args.suite)
    for ref in args.policy:  # unknown names fail here, in one line, before any work
        resolve(ref)
    out: Path = args.out
    out.mkdir(parents=True, exist_ok=True)
    results.check_manifest(out, {"suite": suite.name, "suite_hash": suite.digest(), "code_version": code_version()})
    rows_path = out / "episodes.jsonl"
    results.repair(rows_path)
    done = results.done_keys(results.read_rows(rows_path))
    seeds = suite.episode_seeds()
    with tqdm(total=len(seeds), desc="oracle bounds", unit="ep", file=sys.stderr, disable=None) as bar:
        oracles = compute_oracles(suite, cache_dir() / "oracle", args.workers, progress=bar.update)
    audio_dir = str(out / "audio") if args.save_audio else None
    tasks = [Task(ref, k, s, oracles[s], audio_dir if k < args.save_audio else None)
             for ref in args.policy for k, s in enumerate(seeds) if (ref, s) not in done]
    with results.ResultWriter(rows_path) as writer, \
            tqdm(total=len(tasks), desc=f"{suite.name}", unit="ep", file=sys.stderr, disable=None) as bar:
        for row in run_tasks(suite, tasks, args.workers):
            writer.append(row)
            bar.update()
    rows = results.read_rows(rows_path)
    summary = stats.summary(rows, reference=args.reference)
    summary_doc = {"suite": suite.name, "suite_hash": suite.digest(), "code_version": code_version(),
                   "reference": args.reference, "reference_missing": summary.get("reference_missing", False),
                   "policies": stats.policy_entries(summary), "comparisons": summary.get("comparisons", {})}
    _write_json(out / "summary.json", summary_doc)
    print(stats.format_table(summary))
    failed = sum(1 for r in rows if r.get("status") == "failed")
    if failed:
        print(f"{failed} episode(s) failed; see the 'error' field in {rows_path}", file=sys.stderr)
    return 1 if failed else 0
