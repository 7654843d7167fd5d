"""Doorways found on plans: the gap along a partition's line to the next wall."""

import numpy as np
import pytest

from hearnav.plots.plan import doorways
from hearnav.scene.library import load_named
from hearnav.scene.loader import from_dict
from tests.env.conftest import small_scene


def test_doorway_between_partition_and_outline():
    scene = from_dict(small_scene(), "test")  # a partition x = 4 from y = 0 to 2.5 in a 4 m deep room
    (p, q), = doorways(scene)
    assert np.allclose(sorted([p[1], q[1]]), [2.5, 4.0], atol=0.01) and np.allclose([p[0], q[0]], 4.0)


def test_doorway_between_two_partitions_of_the_bundled_flat():
    (p, q), = doorways(load_named("maple-flat"))  # study walls end at x = 2.2 and start at x = 3.2, y = 5.25
    assert sorted([p[0], q[0]]) == pytest.approx([2.2, 3.2], abs=0.01)
    assert p[1] == q[1] == pytest.approx(5.25)


def test_a_half_height_screen_makes_no_doorway():
    assert doorways(load_named("hazel-office")) == []  # its only partition is a 1.5 m screen
