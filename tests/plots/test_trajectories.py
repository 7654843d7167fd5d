"""Trajectory figures of a tiny run: panels per policy, marker shapes, blocked moves, the score-map underlay."""

import numpy as np
import pytest

from hearnav.errors import ConfigError
from hearnav.plots import style
from hearnav.plots.rundata import load_run
from hearnav.plots.runplots import plot_trajectories
from hearnav.plots.trajectories import episode_figure, legend_handles
from tests.plots import run_fixtures
from tests.plots.run_fixtures import POLICIES, non_blank

# the shared tiny run and the fixtures it needs (assigned, so the test functions' parameters use them)
env_cache = run_fixtures.env_cache
private_cache = run_fixtures.private_cache
run_dir = run_fixtures.run_dir
scene_dir = run_fixtures.scene_dir
suite_file = run_fixtures.suite_file


@pytest.fixture
def episode(run_dir, suite_file):
    from hearnav.plots.episodes import make_env, reset_episode, run_suite, sources_of

    run = load_run(run_dir)
    env = make_env(run_suite(run, str(suite_file)))
    rows = {r["policy"]: r for r in run.ok_rows if r["episode_index"] == 0}
    reset_episode(env, rows["still"]["episode_seed"], rows["still"]["scene"])
    return env, rows, sources_of(env)


def test_one_panel_per_policy_with_units_and_shapes(episode):
    env, rows, sources = episode
    colours = {p: style.policy_colour(k) for k, p in enumerate(POLICIES)}
    fig = episode_figure(env.world.scene, env.world.grid, 0, 1, rows, colours, sources, 1.0)
    panels = [ax for ax in fig.axes if ax.get_visible()]
    assert len(panels) == len(POLICIES)
    assert all(ax.get_xlabel() == "x (m)" and ax.get_ylabel() == "y (m)" for ax in panels)
    assert [ax.get_title().split(":")[0] for ax in panels] == list(rows)
    assert fig.get_suptitle().startswith("Episode 0 (env-test-room, seed 1): each policy's path")
    assert sources[0].role == "target" and all(s.role == "distractor" for s in sources[1:])
    # the target and distractors differ by shape, not only colour, and the legend names both
    handles = {h.get_label(): h for h in legend_handles(POLICIES, False)}
    assert handles["target"].get_marker() != handles["distractor"].get_marker()
    assert {"target", "distractor", "stand-off ring", "doorway", "start", "end", "blocked move"} <= set(handles)


def test_stand_off_rings_have_the_configured_radius(episode):
    env, rows, sources = episode
    fig = episode_figure(env.world.scene, env.world.grid, 0, 1, rows, {p: "k" for p in rows}, sources, 0.75)
    from matplotlib.patches import Circle

    rings = [p for p in fig.axes[0].patches if isinstance(p, Circle)]
    assert len(rings) == len(sources) and all(r.get_radius() == 0.75 for r in rings)
    assert sorted(tuple(np.round(r.center, 6)) for r in rings) == sorted(tuple(np.round(s.xy, 6)) for s in sources)


def test_blocked_moves_are_marked_where_they_happened(episode):
    env, rows, sources = episode
    row = dict(rows["still"], poses=[[0, 0], [0, 0], [0, 1]], collided_steps=[1])
    fig = episode_figure(env.world.scene, env.world.grid, 0, 1, {"still": row}, {"still": "k"}, sources, 1.0)
    crosses, = [c for c in fig.axes[0].collections if c.get_gid() == "blocked"]
    assert np.allclose(crosses.get_offsets(), env.world.grid.centres[[0]])  # one 'x' at the cell of step 1


def test_score_map_underlay_has_a_colour_bar_in_db_and_marks_the_bound(episode):
    from hearnav.bench.oracle import episode_bound
    from hearnav.plots.scoremap import score_map

    env, rows, sources = episode
    bound = episode_bound(env, rows["still"]["episode_seed"]).pose
    smap = score_map(env, env.config.eval_windows, env.config.budget)
    fig = episode_figure(env.world.scene, env.world.grid, 0, 1, rows, {p: "k" for p in rows}, sources, 1.0, smap,
                         bound)
    bar = [ax for ax in fig.axes if ax.get_ylabel().endswith("(dB)")]
    assert bar and bar[0].get_ylabel() == "separator score, best heading, mean of 2 windows (dB)"
    marks = [c for c in fig.axes[0].collections if c.get_gid() == "bound"]
    assert len(marks) == 1 and np.allclose(marks[0].get_offsets(), env.world.grid.centres[[bound[0]]])


def test_trajectories_with_score_map_are_written(run_dir, suite_file, tmp_path):
    run = load_run(run_dir)
    paths = plot_trajectories(run, tmp_path, episodes="1", with_score_map=True, suite=str(suite_file))
    assert [p.name for p in paths] == ["trajectories-episode0001.png", "trajectories-episode0001.svg"]
    assert non_blank(paths[0])


def test_score_map_is_each_cells_best_heading(episode):
    from hearnav.plots.scoremap import score_map

    env, _, _ = episode
    smap = score_map(env, 2, env.config.budget)
    grid = env.world.grid
    cells = [0, grid.n_cells // 2]
    poses = [(c, h) for c in cells for h in range(grid.n_headings)]
    direct = np.nanmean(env.scores_ahead(poses, 2, offset=env.config.budget), axis=0).reshape(len(cells), -1)
    assert smap.score_db[cells] == pytest.approx(direct.max(axis=1))
    assert smap.heading[cells].tolist() == direct.argmax(axis=1).tolist()


def test_rows_without_poses_get_one_clear_line(run_dir, tmp_path):
    import json
    import shutil

    old = tmp_path / "old"
    shutil.copytree(run_dir, old)
    rows = [json.loads(line) for line in (old / "episodes.jsonl").read_text().splitlines()]
    (old / "episodes.jsonl").write_text("".join(json.dumps({k: v for k, v in r.items() if k != "poses"}) + "\n"
                                                for r in rows))
    with pytest.raises(ConfigError) as err:
        plot_trajectories(load_run(old), tmp_path / "figs")
    assert str(err.value) == (f"RUN_DIR '{old}': expected rows with 'poses' (the pose after every step), found rows "
                              f"without them (written by an older hearnav); rerun 'hearnav bench' into a new folder "
                              f"to plot trajectories")
    assert not (tmp_path / "figs").exists()


def test_a_changed_suite_is_refused(run_dir, suite_file, tmp_path):
    import yaml

    changed = tmp_path / "changed.yaml"
    data = yaml.safe_load(suite_file.read_text())
    data["seed"] += 1
    changed.write_text(yaml.safe_dump(data))
    with pytest.raises(ConfigError, match=r"expected the suite this run used \(digest [0-9a-f]+\), found digest"):
        plot_trajectories(load_run(run_dir), tmp_path / "figs", suite=str(changed))
