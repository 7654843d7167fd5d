"""The 3-D room built for pyroomacoustics: closed solids, normals away from the air, every position inside."""

import numpy as np
import pytest

from hearnav.acoustics import room
from hearnav.scene.grid import build_grid
from hearnav.scene.library import load_named, scene_names


@pytest.mark.parametrize("name", scene_names())
def test_spots_and_cells_are_inside_the_room(name):
    # pyroomacoustics' own inside test counts face crossings, so it only agrees with the plan when every
    # obstacle is a closed solid (its documented requirement); a position it calls outside would be silent.
    import pyroomacoustics as pra

    scene = load_named(name)
    r = pra.Room(room.room_walls(scene), fs=16000, max_order=1)
    assert all(r.is_inside(s.position) for s in scene.spots)
    grid = build_grid(scene)
    assert all(r.is_inside(np.r_[c, scene.ear_height]) for c in grid.centres)
    # the air volume pyroomacoustics computes equals the plan's (room minus solids) within 0.1 %
    assert r.get_volume() == pytest.approx(scene.volume, rel=1e-3)


def test_wall_normals_point_away_from_the_air():
    # pyroomacoustics wants obstacle normals pointing into the obstacle (out of the air): for a point just on
    # the air side of each face, the normal points away from it.
    scene = load_named("maple-flat")
    import pyroomacoustics as pra

    r = pra.Room(room.room_walls(scene), fs=16000, max_order=1)
    for wall in room.room_walls(scene):
        centre = wall.corners.mean(axis=1)
        assert r.is_inside(centre - 0.002 * wall.normal), wall.name  # 2 mm: inside the 5 mm gaps
        assert not r.is_inside(centre + 0.002 * wall.normal), wall.name
