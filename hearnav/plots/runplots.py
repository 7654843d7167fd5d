"""The figures of a run folder, written as PNG and SVG: trajectories (with an optional score map) and gains."""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path

from hearnav.errors import ConfigError
from hearnav.plots import style
from hearnav.plots.episodes import make_env, reset_episode, run_suite, sources_of, standoff_m
from hearnav.plots.rundata import Run, check_policies, episode_indices, rows_of
from hearnav.plots.trajectories import episode_figure, missing_poses_message

#: ``progress(stage, done, total)``, as the benchmark reports it.
Progress = Callable[[str, int, int], None]


def _quiet(stage: str, done: int, total: int) -> None:
    return None


def plot_trajectories(run: Run, out: str | Path, episodes: str | None = None, first: int | None = None,
                      policies: list[str] | None = None, with_score_map: bool = False, suite: str | None = None,
                      progress: Progress = _quiet) -> list[Path]:
    """One figure per chosen episode (``trajectories-episodeNNNN.png/.svg`` in ``out``); returns the paths.

    The episodes are rebuilt from the run's suite and each row's seed, for the positions of the sources and,
    with ``with_score_map``, the score map on the windows the benchmark scores end poses on (``eval_windows``
    windows after the budget) and the oracle bound's pose (:func:`hearnav.bench.oracle.episode_bound`).
    """
    names = check_policies(run, policies)
    indices = episode_indices(run, episodes, first)
    chosen = {k: rows_of(run, k, names) for k in indices}
    if any(row.get("poses") is None for rows in chosen.values() for row in rows.values()):
        raise ConfigError(missing_poses_message(str(run.folder)))
    if not any(chosen.values()):
        raise ConfigError(f"RUN_DIR {str(run.folder)!r}: expected finished ('ok') rows of episodes {indices} for "
                          f"{', '.join(names)}, found none; choose other --episodes or --policy")
    env = make_env(run_suite(run, suite))
    colours = {name: style.policy_colour(k) for k, name in enumerate(run.policies)}
    written: list[Path] = []
    for done, (index, rows) in enumerate(chosen.items()):
        progress("trajectories", done, len(chosen))
        if not rows:
            continue
        row = next(iter(rows.values()))
        reset_episode(env, row["episode_seed"], row.get("scene"))
        smap = bound = None
        if with_score_map:
            from hearnav.bench.oracle import episode_bound
            from hearnav.plots.scoremap import score_map

            cfg = env.config
            bound = episode_bound(env, int(row["episode_seed"])).pose  # resets the episode again
            smap = score_map(env, cfg.eval_windows, cfg.budget)
        sources = sources_of(env)
        fig = episode_figure(env.world.scene, env.world.grid, index, int(row["episode_seed"]), rows, colours,
                             sources, standoff_m(env), smap, bound, [p for p in run.policies if p in rows])
        written += style.save(fig, out, f"trajectories-episode{index:04d}")
    progress("trajectories", len(chosen), len(chosen))
    return written


def plot_gains(run: Run, out: str | Path, reference: str | None = None) -> list[Path]:
    """The gain figures of a run (``gains-distribution``, ``gains-paired``, ``gains-timing``); returns the paths."""
    from hearnav.plots import gains

    if not run.ok_rows:
        raise ConfigError(f"RUN_DIR {str(run.folder)!r}: expected finished ('ok') episode rows, found only failed "
                          f"ones; see their 'error' field and rerun 'hearnav bench'")
    reference = reference or run.reference or "still"
    written = style.save(gains.distribution_figure(run), out, "gains-distribution")
    if reference in run.policies:
        written += style.save(gains.paired_figure(run, reference), out, "gains-paired")
    written += style.save(gains.timing_figure(run), out, "gains-timing")
    return written
