"""``hearnav plot trajectories|gains|training`` and ``hearnav score-map``: figures as PNG and SVG."""

from __future__ import annotations

from pathlib import Path

from hearnav.cli.paths import output_file, output_folder

FIGURES = "figures"


def _kind(kinds, name: str, brief: str, description: str, folder: str, run) -> object:
    """One ``hearnav plot KIND`` parser: its positional input folder, ``--out`` (default FOLDER/figures) and the
    function that runs it."""
    k = kinds.add_parser(name, help=brief, description=description)
    k.add_argument(folder.lower(), type=Path, metavar=folder)
    k.add_argument("--out", type=Path, help=f"figures folder (default {folder}/{FIGURES})")
    k.set_defaults(run=run)
    return k


def register(sub) -> None:
    """Add the ``plot`` and ``score-map`` subcommands."""
    p = sub.add_parser("plot", help="figures of a benchmark run (PNG and SVG)",
                       description="Draw figures of a run folder written by 'hearnav bench'.")
    kinds = p.add_subparsers(dest="kind", metavar="KIND", required=True)
    t = _kind(kinds, "trajectories", "one figure per episode: each policy's path on the plan",
              "One figure per episode: the plan, the sources and their stand-off rings, and each policy's path with "
              "heading ticks, start, end and blocked moves.", "RUN_DIR", run_trajectories)
    which = t.add_mutually_exclusive_group()
    which.add_argument("--episodes", metavar="I,J,...", help="episode indices, e.g. 0,3,7")
    which.add_argument("--first", type=int, metavar="K", help="the first K episodes (default 3)")
    t.add_argument("--policy", action="append", metavar="P", help="draw only these policies (repeat)")
    t.add_argument("--score-map", action="store_true",
                   help="underlay the separator's score at every cell (best heading) on the windows the end pose "
                        "is scored on, and mark the oracle bound's pose (slower: scores every pose)")
    t.add_argument("--suite", help="the run's suite (a name or YAML file), if run.json's suite name does not find it")
    g = _kind(kinds, "gains", "gain distributions, paired differences per scene, gain during vs at the end",
              "Per-episode gains by policy (privileged policies apart), paired differences against the reference "
              "per scene, and the gain during vs at the episode's end.", "RUN_DIR", run_gains)
    g.add_argument("--reference", help="policy the others are compared with (default the summary's)")
    tr = _kind(kinds, "training", "learning curves from the trainer's progress.csv",
               "Return, validation gain and entropy against environment steps, from the progress.csv of a training "
               "folder; --run adds a run's baselines as lines.", "TRAIN_DIR", run_training)
    tr.add_argument("--run", dest="baseline_run", type=Path, metavar="RUN_DIR",
                    help="a benchmark run whose agents' mean gains to draw")
    s = sub.add_parser("score-map", help="the separator's score at every cell for one arrangement of sources",
                       description="Score every cell (best heading) of a scene with the target and distractors at "
                                   "named spots, over K windows, and draw the map; no run needed.")
    s.add_argument("scene", metavar="SCENE")
    s.add_argument("--target", required=True, metavar="SPOT")
    s.add_argument("--distractor", action="append", default=[], metavar="SPOT", help="a distractor's spot (repeat)")
    s.add_argument("--target-category", metavar="C", help="the target's sound (default the first its spot accepts)")
    s.add_argument("--distractor-category", metavar="C", help="the distractors' sound (default each spot's first)")
    s.add_argument("--windows", type=int, default=4, metavar="K", help="windows averaged (default 4)")
    s.add_argument("--seed", type=int, default=0, help="seed of the sounds' takes (default 0)")
    s.add_argument("--config", default="default", help="environment config (default: default)")
    s.add_argument("--out", type=Path, required=True, metavar="FILE",
                   help="image file (.png; an .svg is written beside it)")
    s.set_defaults(run=run_score_map)


def _where(paths: list[Path], folder: Path) -> int:
    print(f"{len(paths)} figure file(s) in {folder.resolve()}")
    for path in paths:
        print(f"  {path}")
    return 0


def run_trajectories(args) -> int:
    from hearnav.progress import Feedback
    from hearnav.plots.rundata import load_run
    from hearnav.plots.runplots import plot_trajectories

    run = load_run(args.run_dir)
    out = output_folder(args.out or args.run_dir / FIGURES)
    with Feedback() as feedback:
        paths = plot_trajectories(run, out, args.episodes, args.first, args.policy, args.score_map, args.suite,
                                  feedback)
    return _where(paths, out)


def run_gains(args) -> int:
    from hearnav.plots.rundata import load_run
    from hearnav.plots.runplots import plot_gains

    run = load_run(args.run_dir)
    out = output_folder(args.out or args.run_dir / FIGURES)
    return _where(plot_gains(run, out, args.reference), out)


def run_training(args) -> int:
    from hearnav.plots.rundata import load_run
    from hearnav.plots.training import plot_training

    run = load_run(args.baseline_run) if args.baseline_run else None
    out = output_folder(args.out or args.train_dir / FIGURES)
    return _where(plot_training(args.train_dir, out, run), out)


def run_score_map(args) -> int:
    from hearnav.env import HearNavEnv
    from hearnav.errors import ConfigError
    from hearnav.plots import style
    from hearnav.plots.arrangement import arrange, spot_indices
    from hearnav.scene.library import load_named
    from hearnav.plots.episodes import sources_of, standoff_m
    from hearnav.progress import Feedback
    from hearnav.plots.scoremap import score_map
    from hearnav.plots.trajectories import arrangement_figure

    out = output_file(args.out)
    if out.suffix.lower() not in ("", ".png", ".svg"):
        raise ConfigError(f"--out {str(out)[:80]!r}: expected a .png or .svg file name, found suffix {out.suffix!r}; "
                          f"name the file NAME.png (an SVG is written beside it)")
    if not 1 <= args.windows <= 64:
        raise ConfigError(f"--windows {args.windows}: expected 1 to 64 windows; choose a value in that range")
    if not args.distractor:
        raise ConfigError("--distractor: expected at least one distractor spot, found none; add --distractor SPOT")
    spot_indices(load_named(args.scene), args.target, args.distractor)  # names checked before any building
    env = HearNavEnv(args.config, scenes=[args.scene], distractors=(1, 8), min_start_distance=0.0,
                     budget=args.windows)
    with Feedback() as feedback:
        feedback.note(f"setting up {args.scene} (the first use of a scene builds its responses)")
        arrange(env, args.target, args.distractor, args.target_category, args.distractor_category, args.seed)
        smap = score_map(env, args.windows, 0, lambda d, n: feedback("scoring cells", d, n))
    sources = sources_of(env)
    dist = ", ".join(f"{s.category} at {s.spot}" for s in sources[1:])
    title = (f"{args.scene}: separator score with the target ({sources[0].category} at {sources[0].spot}) "
             f"against {dist}")
    fig = arrangement_figure(env.world.scene, env.world.grid, sources, standoff_m(env), smap, title)
    folder = out.parent if str(out.parent) else Path(".")
    return _where(style.save(fig, folder, out.stem if out.suffix else out.name), folder)
