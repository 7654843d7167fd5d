"""The oracle bound: its reachable poses counted by hand, and the bound against brute force."""

import itertools
import json

import numpy as np
import pytest

from hearnav.bench.oracle import OracleCache, episode_bound, paired_gains, reachable
from hearnav.bench.runner import end_gain
from hearnav.env import Action, next_pose
from tests.bench.conftest import PAIR
from tests.env.test_actions import Corridor


class CorridorView:
    """The part of the privileged view that reachable() uses, on the hand-made corridor."""

    def next_pose(self, cell, heading, action):
        return next_pose(Corridor(), cell, heading, action)[:2]


# Worked by hand from cell 0 facing +x along a 5-cell corridor with 4 headings (0 +x, 1 +y, 2 -x, 3 -y):
# each step adds the poses one action away from the previous ones; forward only moves along x.
BY_HAND = {
    0: {(0, 0)},
    1: {(0, 0), (1, 0), (0, 1), (0, 3)},
    2: {(0, 0), (1, 0), (0, 1), (0, 3), (2, 0), (1, 1), (1, 3), (0, 2)},
    3: {(0, 0), (1, 0), (0, 1), (0, 3), (2, 0), (1, 1), (1, 3), (0, 2), (3, 0), (2, 1), (2, 3), (1, 2)},
}


@pytest.mark.parametrize("steps", sorted(BY_HAND))
def test_reachable_poses_match_a_hand_count(steps):
    assert sorted(reachable(CorridorView(), (0, 0), steps)) == sorted(BY_HAND[steps])


def test_the_bound_is_the_best_of_every_action_sequence(make_env):
    # Brute force: with a budget of 3, play all 4^3 action sequences and score each end pose against the start
    # pose on the windows after the episode, as the benchmark does; the best gain must equal the bound, which
    # the oracle finds by breadth-first search over poses instead (scores are path-independent because windows
    # are scored after their cross-fade), and no sequence may beat it.
    env = make_env(budget=3, eval_windows=2)
    gains = []
    for actions in itertools.product(list(Action), repeat=3):
        _, info = env.reset(seed=11)
        start = (info["pose"]["cell"], info["pose"]["heading"])
        for a in actions:
            *_, info = env.step(a)
        gains.append(end_gain(env, (info["pose"]["cell"], info["pose"]["heading"]), start)[0])
    bound = episode_bound(env, 11)
    assert bound.gain_db == pytest.approx(max(gains), abs=1e-9)
    assert bound.steps <= 3 and bound.gain_db >= 0.0  # staying put is reachable and gains exactly 0


def test_paired_gains_by_hand():
    # Two poses on three windows, the second window not scored (NaN): the start (index 1) gains 0, the other
    # (1 - 0.5 + 4 - 1) / 2 = 1.75 over the two scored windows.
    scores = np.array([[1.0, 0.5], [np.nan, np.nan], [4.0, 1.0]])
    gains, scored = paired_gains(scores, 1)
    assert gains.tolist() == [1.75, 0.0] and scored == 2
    assert paired_gains(np.full((2, 2), np.nan), 0)[1] == 0


def test_cache_round_trips_and_rewrites_atomically(tmp_path):
    cache = OracleCache(tmp_path, "abc")
    cache.put(3, 1.25)
    cache.put(4, -2.5)
    assert json.loads((tmp_path / "oracle-abc.json").read_text()) == {"3": 1.25, "4": -2.5}
    again = OracleCache(tmp_path, "abc")
    assert (again.get(3), again.get(4), again.get(5)) == (1.25, -2.5, None)
    assert not list(tmp_path.glob("*.tmp"))
    assert np.isfinite(again.get(3))


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_the_bound_stands_where_the_interferer_is_farthest_for_its_distance(make_env, seed):
    # Free field, one noise target and one equally loud noise interferer 3 m apart, the identity separator: each
    # ear hears the target at 1/r_t and the interferer at 1/r_i (the inverse-square law; the far-field
    # spherical head shades both alike when they lie in one direction), so the score follows 20 log10(r_i / r_t)
    # and the best pose outside the 1 m stand-off rings is the cell with the largest r_i / r_t: on the line
    # through both sources, just beyond the target's ring, with the target between the listener and the
    # interferer (analytic, common practice of free-field geometry). The bound must find that cell.
    env = make_env(scenes=[PAIR], budget=40, eval_windows=2, distractors=[1, 1], distractor_level_db=[0.0, 0.0],
                   target_category="noise", sound_categories=["noise"], standoff_m=1.0, min_start_distance=0.0)
    bound = episode_bound(env, seed)
    centres = np.asarray(env.world.grid.centres, float)
    target, other = (env.world.scene.spots[s.spot].position[:2] for s in env.plan.sources)
    r_t, r_i = (np.hypot(*(centres - p).T) for p in (target, other))
    allowed = (r_t >= 1.0) & (r_i >= 1.0)
    best = int(np.argmax(np.where(allowed, r_i / r_t, -np.inf)))
    assert np.hypot(*(centres[bound.pose[0]] - centres[best])) <= env.world.grid.spacing + 1e-9
    # the analytic cell lies beyond the target, away from the interferer
    assert np.dot(centres[best] - target, target - other) > 0
    assert bound.gain_db >= 0.0
