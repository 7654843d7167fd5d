"""``hearnav report RUN_DIR``: one self-contained report.html with the tables, the figures and the saved audio."""

from __future__ import annotations

from pathlib import Path

from hearnav.cli.paths import output_file
from hearnav.errors import HearnavError, exception_line

#: Episodes whose trajectories the report draws.
REPORT_EPISODES = 3
FIGURES = "figures"

_CAPTIONS = {
    "gains-distribution": ("End-of-episode gain by policy",
                           "Each dot is one episode's gain of the end pose over the start pose on the windows after "
                           "the episode; boxes show the quartiles. Privileged policies and the oracle bound are on the "
                           "shaded right."),
    "gains-paired": ("Paired differences against the reference, per scene",
                     "Each dot is one episode: the policy's gain minus the reference policy's gain on the same "
                     "episode; the bar is the mean."),
    "gains-timing": ("Gain during vs at the end of the episode",
                     "Median and interquartile range of the mean paired gain over the episode's steps and of the end "
                     "gain; the dashed line is the oracle bound's median. Rows hold no per-step scores."),
}


def register(sub) -> None:
    """Add the ``report`` subcommand."""
    p = sub.add_parser("report", help="one self-contained report.html of a run (tables, figures, audio)",
                       description="Write RUN_DIR/report.html: the summary and per-scene tables, the paired "
                                   "comparisons, the figures and players for the saved WAVs. It opens offline.")
    p.add_argument("run_dir", type=Path, metavar="RUN_DIR")
    p.add_argument("--train", type=Path, metavar="TRAIN_DIR", help="a training folder whose curves to add")
    p.add_argument("--score-map", action="store_true", help="underlay score maps in the trajectory figures (slower)")
    p.add_argument("--suite", help="the run's suite (a name or YAML file), if run.json's suite name does not find it")
    p.add_argument("--out", type=Path, help="the report file (default RUN_DIR/report.html)")
    p.set_defaults(run=run)


def make_report(run, out: Path, train_dir: Path | None = None, score_map: bool = False,
                suite: str | None = None, feedback=None) -> tuple[Path, list[Path]]:
    """Draw a :class:`~hearnav.plots.rundata.Run`'s figures into ``out``'s folder/figures and write the report;
    returns (report, figure files)."""
    from hearnav.bench.stats import Summary
    from hearnav.report.html import render, write_report
    from hearnav.plots.runplots import plot_gains, plot_trajectories

    folder = out.parent
    figures_dir = folder / FIGURES
    notes: list[str] = []
    report = feedback or (lambda stage, done, total: None)
    report("figures", 0, 3)
    paths = plot_gains(run, figures_dir)
    report("figures", 1, 3)
    try:
        paths += plot_trajectories(run, figures_dir, first=REPORT_EPISODES, with_score_map=score_map, suite=suite)
    except HearnavError as exc:  # the tables and gains still make a report; say why the trajectories are missing
        notes.append(f"No trajectory figures: {exception_line(exc)}")
    report("figures", 2, 3)
    if train_dir is not None:
        from hearnav.plots.training import plot_training

        paths += plot_training(train_dir, figures_dir, run)
    report("figures", 3, 3)
    entries = [_entry(p) for p in paths if p.suffix == ".png"]
    summary = Summary.from_dict(run.summary) if run.summary else None
    title = f"hearnav report: {summary.suite if summary and summary.suite else run.folder.name}"
    write_report(out, render(run.folder, summary, run.rows, entries, folder, title, notes))
    return out, paths


def _entry(png: Path):
    from hearnav.report.html import FigureEntry

    stem = png.stem
    if stem in _CAPTIONS:
        title, caption = _CAPTIONS[stem]
    elif stem.startswith("trajectories-episode"):
        title = f"Episode {int(stem.rsplit('episode', 1)[1])}: paths"
        caption = ("Each panel is one policy on the same episode: the path with a tick for the heading at every "
                   "step, start (circle), end (square), blocked moves (x); the target (star) and distractors (X) "
                   "with their stand-off rings.")
    else:
        title, caption = stem.replace("-", " ").capitalize(), "Learning curves of the training run."
    return FigureEntry(title, caption, png, png.with_suffix(".svg"))


def run(args) -> int:
    from hearnav.progress import Feedback
    from hearnav.plots.rundata import load_run

    run_folder = load_run(args.run_dir)  # a bad RUN_DIR is one line before anything is written
    out = output_file(args.out or args.run_dir / "report.html")
    with Feedback() as feedback:
        report, paths = make_report(run_folder, out, args.train, args.score_map, args.suite, feedback)
    print(f"report: {report.resolve()}")
    print(f"figures: {len(paths)} file(s) in {(report.parent / FIGURES).resolve()}")
    return 0
