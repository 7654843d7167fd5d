"""The bundled baselines, driven through the registry on the small test scenes."""

from __future__ import annotations

import numpy as np
import pytest

import hearnav

from hearnav.bench.policy import is_privileged
from hearnav.bench.registry import load_policy
from tests.bench.conftest import ANECHOIC

NAMES = ("still", "face-arrival", "random-walk", "approach", "greedy-oracle", "follow-bearing")
QUIET_DISTRACTOR = {"distractors": [1, 1], "distractor_level_db": [-30.0, -25.0]}


def run(env, name: str, seed: int, k: int | None = None) -> dict:
    """One episode of a registered baseline: its actions, infos, maps seen, last observation and path."""
    _, policy = load_policy(name)
    obs, info = env.reset(seed=seed)
    extra = {"seed": seed if k is None else k}
    if is_privileged(policy):
        extra["privileged"] = env.unwrapped.privileged
    policy.reset(obs, {**info, **extra})
    actions, infos, maps, truncated = [], [info], [], False
    while not truncated:
        action = policy.act(obs, {**info, **extra})
        actions.append(action)
        maps.append(obs["map"])
        obs, _, _, truncated, info = env.step(action)
        infos.append(info)
    return {"actions": actions, "infos": infos, "maps": maps, "obs": obs, "path": env.unwrapped.path}


def bearing_deg(obs: dict) -> float:
    """The target's bearing relative to the heading, degrees, from the observation."""
    return float(np.degrees(np.arctan2(obs["target"][1], obs["target"][2])))


@pytest.mark.parametrize("name", NAMES)
def test_valid_actions_for_a_whole_episode(make_env, name):
    env = make_env()
    out = run(env, name, seed=3)
    # common practice (gymnasium): every action lies in the action space, and the episode runs to truncation
    assert len(out["actions"]) == env.config.budget
    assert all(isinstance(a, int) and env.action_space.contains(a) for a in out["actions"])
    assert is_privileged(load_policy(name)[1]) == (name in ("approach", "greedy-oracle"))


def test_still_never_moves(make_env):
    out = run(make_env(), "still", seed=1)
    # common practice: a null policy's path length is 0 (the pose never changes)
    assert set(out["actions"]) == {3}
    assert len(set(out["path"])) == 1


def test_random_walk_is_seeded_and_avoids_walls(make_env):
    env = make_env(budget=12)
    first, again, other = (run(env, "random-walk", seed=2, k=k)["actions"] for k in (7, 7, 8))
    # common practice (numpy default_rng seeding): equal seeds repeat, another seed differs
    assert first == again
    assert first != other
    for seed in range(3):
        out = run(env, "random-walk", seed=seed)
        # common practice: no forward move into a cell the egocentric map shows not navigable
        half = out["maps"][0].shape[1] // 2
        assert not any(a == 0 and m[0, half - 1, half] for a, m in zip(out["actions"], out["maps"]))
    free = make_env(scenes=[ANECHOIC], budget=30)  # no partition: every obstacle is a map cell
    for seed in range(3):
        # common practice: where the map shows every obstacle, the walk never collides
        assert not any(i["collided"] for i in run(free, "random-walk", seed=seed)["infos"])


def _target_distance(env, cell: int) -> float:
    view = env.unwrapped.privileged
    return float(np.hypot(*(np.asarray(view.grid.centres)[cell] - view.target_xy)))


def reachable_cells(view, start) -> set[int]:
    """Cells reachable from a pose with the environment's moves (breadth-first over poses)."""
    seen, todo = {tuple(start)}, [tuple(start)]
    while todo:
        pose = todo.pop()
        for action in range(3):
            nxt = tuple(view.next_pose(*pose, action))
            if nxt not in seen:
                seen.add(nxt)
                todo.append(nxt)
    return {c for c, _ in seen}


def test_approach_walks_to_the_best_pose_just_outside_the_ring(make_env):
    env = make_env(budget=40)
    for seed in range(2):
        out = run(env, "approach", seed=seed)
        view = env.unwrapped.privileged
        grid = view.grid
        end = out["path"][-1][0]
        reachable = reachable_cells(view, out["path"][0])
        assert not any(env.unwrapped.moves.blocked[c] for c in reachable)
        nearest = min(_target_distance(env, c) for c in reachable)
        # it ends on the ring's edge: outside the ring, within one cell of the nearest enterable distance
        assert env.config.standoff_m <= _target_distance(env, end) <= nearest + grid.spacing + 1e-9
        # common practice (breadth-first search, Moore 1959): a shortest path, so it arrives and then stays
        assert out["actions"][-1] == 3
        assert not any(i["collided"] for i in out["infos"])


def test_approach_goes_to_the_nearest_reachable_cell_facing_the_target(make_env):
    env = make_env(budget=40)
    obs, info = env.reset(seed=1)
    view = env.unwrapped.privileged
    _, policy = load_policy("approach")
    policy.reset(obs, {**info, "privileged": view})
    policy.act(obs, {**info, "privileged": view})
    depth, todo = {tuple(view.pose): 0}, [tuple(view.pose)]
    for pose in todo:  # breadth-first over poses (Moore 1959)
        for action in range(3):
            nxt = tuple(view.next_pose(*pose, action))
            if nxt not in depth:
                depth[nxt] = depth[pose] + 1
                todo.append(nxt)
    dist = {c: _target_distance(env, c) for c, _ in depth}
    cell, heading = policy.goal
    assert dist[cell] == pytest.approx(min(dist.values()), abs=1e-9)  # nearest reachable cell (outside the ring)
    assert dist[cell] >= env.config.standoff_m - 1e-9
    # facing: the heading's direction is within half a heading step of the bearing to the target (common practice)
    dx, dy = np.asarray(view.target_xy) - np.asarray(view.grid.centres[cell])
    off = np.angle(np.exp(1j * (np.arctan2(dy, dx) - view.grid.heading_angle(heading))))
    assert abs(off) <= np.pi / view.grid.n_headings + 1e-9


def test_greedy_oracle_gains_over_standing_still(make_env):
    env = make_env(budget=4, eval_windows=4)
    returns = []
    for seed in range(5):
        out = run(env, "greedy-oracle", seed)
        returns.append(sum(i["si_sdr_db"] - i["before_si_sdr_db"] for i in out["infos"][1:]
                           if i["before_si_sdr_db"] is not None and i["target_active"]))
    # common practice: a look-ahead on the true paired score does no worse than staying (return exactly 0) in
    # most episodes; its moves are judged on 4 windows, the reward on one, so a single move may still lose
    assert sum(r >= -1e-9 for r in returns) >= 4, returns
    assert any(r > 0 for r in returns), returns


def test_face_arrival_faces_the_source_in_free_field(make_env):
    env = make_env(scenes=[ANECHOIC], **QUIET_DISTRACTOR)
    errors = [abs(bearing_deg(run(env, "face-arrival", seed)["obs"])) for seed in range(6)]
    # Woodworth ITD and spherical-head interaural cues (Woodworth & Schlosberg 1954; Brown & Duda 1998),
    # front-back resolved by one turn: the final heading is within 45 degrees of the target in most episodes
    assert sum(e <= 45.0 for e in errors) >= 4, errors


@pytest.mark.parametrize("cue", ["bearing", "position"])  # in free field both give the spot's bearing
def test_follow_bearing_holds_at_the_ring_edge_facing_the_target_in_an_open_scene(make_env, cue):
    env = make_env(scenes=[ANECHOIC], budget=30, target_cue=cue, **QUIET_DISTRACTOR)
    step = 360.0 / 4
    for seed in range(4):
        out = run(env, "follow-bearing", seed=seed)
        end = out["path"][-1][0]
        spacing = env.unwrapped.world.grid.spacing
        # at the edge: outside the 1 m ring, within one diagonal cell of it, and holding still
        assert 1.0 <= _target_distance(env, end) <= 1.0 + np.sqrt(2) * spacing + 1e-9, seed
        assert out["actions"][-3:] == [3, 3, 3]
        # facing the target: the observed bearing within half a heading step of straight ahead
        assert abs(bearing_deg(out["obs"])) <= step / 2 + 1e-6
        # the map shows every wall and ring in the open scene, so it never collides
        assert not any(i["collided"] for i in out["infos"])


def test_follow_bearing_needs_a_bearing(make_env):
    env = make_env(target_cue="none")
    _, policy = load_policy("follow-bearing")
    obs, info = env.reset(seed=0)
    with pytest.raises(hearnav.PolicyError) as caught:
        policy.reset(obs, info)
    assert str(caught.value) == ("follow-bearing needs a target bearing in observation['target'] (expected "
                                 "target_cue 'bearing' or 'position', got all zeros: target_cue 'none'); make the "
                                 "environment with target_cue='bearing'")


@pytest.mark.parametrize("name", ["still", "face-arrival", "random-walk"])
def test_baselines_without_a_cue_act_alike_under_every_cue(make_env, name):
    # still, face-arrival (binaural features only) and random-walk (the map only) never read the target cue:
    # they keep their meaning, and their actions, whatever the environment gives
    actions = [run(make_env(target_cue=cue), name, seed=2)["actions"] for cue in ("bearing", "none", "position")]
    assert actions[0] == actions[1] == actions[2]
