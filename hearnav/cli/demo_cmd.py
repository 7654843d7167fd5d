"""``hearnav demo``: benchmark the baselines on a short suite, save some audio, and write the plots and the report."""

from __future__ import annotations

import os
from pathlib import Path

from hearnav.cli.paths import output_folder

#: The demo's policies, in the order they run; those not registered are skipped with a note.
DEMO_POLICIES = ("still", "face-arrival", "random-walk", "follow-bearing", "ppo-tiny", "approach")
DEMO_SUITE = "demo"
#: Episodes of each policy whose audio is saved.
DEMO_AUDIO = 2


def register(sub) -> None:
    """Add the ``demo`` subcommand."""
    p = sub.add_parser("demo", help="benchmark the baselines on a short suite and write plots and a report",
                       description="Build what is needed, benchmark the baselines on the short demo suite "
                                   "(maple-flat), save a few WAVs, and write figures and report.html. A few minutes "
                                   "on 2 cores.")
    p.add_argument("--out", type=Path, default=Path("hearnav-demo"), help="results folder (default ./hearnav-demo)")
    p.add_argument("--workers", type=int, default=0, help="worker processes (default: up to 2, one per CPU)")
    p.set_defaults(run=run)


def demo_policies(note) -> list[str]:
    """The demo's policies that are registered; ``note`` is told about each one skipped."""
    from hearnav.bench.registry import policy_names

    names = set(policy_names())
    for name in DEMO_POLICIES:
        if name not in names:
            note(f"skipping policy {name!r}: not registered in this installation")
    return [p for p in DEMO_POLICIES if p in names]


def run(args) -> int:
    from hearnav.bench import run as run_bench
    from hearnav.bench.suites import load_suite
    from hearnav.cli.report_cmd import make_report
    from hearnav.errors import ConfigError
    from hearnav.progress import Feedback
    from hearnav.plots.rundata import load_run
    from hearnav.report import format_table

    out = output_folder(args.out)
    if args.workers < 0:
        raise ConfigError(f"--workers {args.workers}: expected 0 (automatic) or a positive count; give --workers 2")
    suite = load_suite(DEMO_SUITE)
    workers = args.workers or max(1, min(2, os.cpu_count() or 1))
    with Feedback() as feedback:
        policies = demo_policies(feedback.note)
        feedback.note(f"demo: {len(policies)} policies ({', '.join(policies)}) on suite {suite.name!r}: "
                      f"{suite.description.rstrip('.')}; results in {out.resolve()}")
        summary = run_bench(suite, policies, out, workers=workers, reference="still", save_audio=DEMO_AUDIO,
                            progress=feedback)
        feedback.close_bar()
        feedback.note("drawing the figures and writing the report")
        report, paths = make_report(load_run(out), out / "report.html", score_map=True, feedback=feedback)
    print(format_table(summary))
    print(f"\nfigures: {len(paths)} file(s) in {(report.parent / 'figures').resolve()}")
    print(f"audio: {(out / 'audio').resolve()}")
    print(f"report: {report.resolve()}  (open it in a browser; it works offline)")
    return 1 if summary.failures else 0
