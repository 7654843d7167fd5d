"""The navigable grid: which cells exist, which are kept, and how forward moves work."""

from __future__ import annotations

import math
from collections import deque
from pathlib import Path

import numpy as np
import pytest
import shapely

from hearnav.errors import ConfigError
from hearnav.scene.grid import HEADING_COUNTS, LISTENER_RADIUS, build_grid, candidate_mask, free_floor
from hearnav.scene.loader import from_dict, load_scene

MAPLE = Path(__file__).resolve().parents[2] / "scenes" / "maple-flat.yaml"


def empty_room(width: float, depth: float, spacing: float = 0.5, obstacles: list | None = None,
               start: list[float] | None = None, spots: list | None = None) -> dict:
    """A box room with a spot in the middle and, unless given, a start region covering the whole floor."""
    return {
        "name": "box-room",
        "description": "An empty box room.",
        "split": "test",
        "ceiling_height": 2.5,
        "outline": [[0, 0], [width, 0], [width, depth], [0, depth], [0, 0]],
        "materials": {"walls": "plasterboard", "floor": "hard_surface", "ceiling": "hard_surface"},
        "obstacles": obstacles or [],
        "grid": {"spacing": spacing, "ear_height": 1.5,
                 "start_region": {"box": start or [0, 0, width, depth]}},
        "spots": spots or [{"name": "middle", "position": [width / 2, depth / 2], "height": 1.2}],
    }


def grid_of(data: dict, n_headings: int = 4):
    return build_grid(from_dict(data, "grid-test.yaml"), n_headings)


def cell(grid, x: float, y: float) -> int:
    """The id of the cell centred at (x, y); fails when there is none."""
    hits = np.nonzero(np.all(np.isclose(grid.centres, [x, y]), axis=1))[0]
    assert hits.size == 1, f"no cell at ({x}, {y})"
    return int(hits[0])


def has_cell(grid, x: float, y: float) -> bool:
    return bool(np.any(np.all(np.isclose(grid.centres, [x, y]), axis=1)))


# A wall from the south wall at x = 3 (thickness 0.1, so faces at 2.95 and 3.05) splits a 6 x 4 m room.
# Cells at x = 2.75 and 3.25 are both exactly 0.2 m from the wall, so they are candidates on both sides.
def split_room(wall_end_y: float) -> dict:
    wall = {"name": "wall", "partition": {"start": [3.0, 0.0], "end": [3.0, wall_end_y], "thickness": 0.1},
            "height": "ceiling", "material": "plasterboard"}
    return empty_room(6, 4, obstacles=[wall], start=[0.5, 0.5, 2.5, 3.5],
                      spots=[{"name": "west", "position": [1.5, 2.0], "height": 1.2}])


@pytest.fixture(scope="module")
def room_3x2():
    return grid_of(empty_room(3, 2))


@pytest.fixture(scope="module")
def maple():
    scene = load_scene(MAPLE)
    return scene, build_grid(scene)


# --- which cells exist ----------------------------------------------------------------------------


def test_hand_computed_3x2_room(room_3x2):
    # Lattice points start half a spacing in from the outline's lower corner, 0.5 m apart:
    #   x = 0.25, 0.75, 1.25, 1.75, 2.25, 2.75 (the next, 3.25, is past the east wall at 3)  -> 6 columns
    #   y = 0.25, 0.75, 1.25, 1.75            (the next, 2.25, is past the north wall at 2)  -> 4 rows
    # The outermost points are 0.25 m from the nearest wall, >= LISTENER_RADIUS = 0.2 m, so all are kept:
    #   6 x 4 = 24 cells.
    g = room_3x2
    assert LISTENER_RADIUS == 0.2  # the project's body radius of the listener (common practice)
    assert g.n_cells == 24
    xs = np.unique(np.round(g.centres[:, 0], 9))
    ys = np.unique(np.round(g.centres[:, 1], 9))
    np.testing.assert_allclose(xs, [0.25, 0.75, 1.25, 1.75, 2.25, 2.75])
    np.testing.assert_allclose(ys, [0.25, 0.75, 1.25, 1.75])
    np.testing.assert_allclose(g.origin, [0.25, 0.25])
    assert g.index.shape == (6, 4)
    assert sorted(g.index.ravel().tolist()) == list(range(24))
    assert g.spacing == 0.5
    # the start region covers the whole floor
    assert sorted(g.start_cells.tolist()) == list(range(24))


def test_narrower_room_loses_the_outer_cells():
    # 2.9 x 1.9 m: x = 2.75 is 0.15 m from the east wall and y = 1.75 is 0.15 m from the north wall, so the
    # lattice keeps 5 x 3 = 15 cells (x = 0.25..2.25, y = 0.25..1.25).
    g = grid_of(empty_room(2.9, 1.9))
    assert g.n_cells == 15
    assert g.centres[:, 0].max() == pytest.approx(2.25)
    assert g.centres[:, 1].max() == pytest.approx(1.25)


@pytest.mark.parametrize("which", ["base", "maple"])
def test_cell_centres_are_clear_of_every_surface_and_on_free_floor(which, base_scene, maple):
    if which == "maple":
        scene, g = maple
    else:
        scene = from_dict(base_scene, "base.yaml")
        g = build_grid(scene)
    assert g.n_cells > 0
    room = shapely.Polygon(scene.outline)
    solids = [shapely.Polygon(ob.polygon) for ob in scene.obstacles]
    for x, y in g.centres:
        p = shapely.Point(x, y)
        assert room.contains(p)
        assert room.exterior.distance(p) >= LISTENER_RADIUS - 1e-9
        for solid in solids:
            assert not solid.contains(p)
            assert solid.exterior.distance(p) >= LISTENER_RADIUS - 1e-9
    assert np.all(shapely.contains_xy(free_floor(scene), g.centres[:, 0], g.centres[:, 1]))


def test_low_obstacles_also_remove_floor(base_scene):
    # the 0.75 m table is low, but the listener cannot stand in it: no cell within 0.2 m of its box [1, 1, 2, 1.8]
    g = build_grid(from_dict(base_scene, "base.yaml"))
    x, y = g.centres[:, 0], g.centres[:, 1]
    near_table = (x > 1.0 - 0.2) & (x < 2.0 + 0.2) & (y > 1.0 - 0.2) & (y < 1.8 + 0.2)
    assert not np.any(near_table)


def test_start_cells_lie_in_the_start_region(base_scene):
    g = build_grid(from_dict(base_scene, "base.yaml"))
    x0, y0, x1, y1 = base_scene["grid"]["start_region"]["box"]
    assert g.start_cells.size > 0
    c = g.centres[g.start_cells]
    assert np.all((c[:, 0] >= x0) & (c[:, 0] <= x1) & (c[:, 1] >= y0) & (c[:, 1] <= y1))
    others = np.setdiff1d(np.arange(g.n_cells), g.start_cells)
    c = g.centres[others]
    assert not np.any((c[:, 0] >= x0) & (c[:, 0] <= x1) & (c[:, 1] >= y0) & (c[:, 1] <= y1))


# --- which cells are kept -------------------------------------------------------------------------


def walk(grid, start: int) -> set[int]:
    """Every cell reachable from ``start`` by forward moves with 4 headings (a search independent of build_grid)."""
    seen, queue = {start}, deque([start])
    while queue:
        c = queue.popleft()
        for h in range(4):
            n = grid.forward(c, h)
            if n >= 0 and n not in seen:
                seen.add(n)
                queue.append(n)
    return seen


def test_region_behind_a_full_partition_is_excluded():
    data = split_room(4.0)  # wall to wall: no doorway
    scene = from_dict(data, "split.yaml")
    g = build_grid(scene)
    # the east part is free floor with candidate cells...
    origin, mask = candidate_mask(scene, 0.5)
    gi, gj = np.nonzero(mask)
    assert np.any(origin[0] + gi * 0.5 > 3.0)
    assert np.any(np.isclose(origin[0] + gi * 0.5, 3.25))
    # ...but none of them is 4-connected to the start region, so none is kept
    assert np.all(g.centres[:, 0] < 3.0)
    # x = 0.25..2.75 is 6 columns, y = 0.25..3.75 is 8 rows: 48 cells west of the wall
    assert g.n_cells == 48
    assert not has_cell(g, 3.25, 1.75)


def test_doorway_joins_both_sides():
    g = grid_of(split_room(2.5))  # wall from y = 0 to 2.5, doorway from 2.5 to 4
    assert has_cell(g, 3.25, 0.25) and has_cell(g, 5.75, 0.25)
    # every kept cell can be walked to from the start region
    assert walk(g, int(g.start_cells[0])) == set(range(g.n_cells))


def test_kept_cells_are_exactly_those_reachable_from_the_start(maple):
    _, g = maple
    reached: set[int] = set()
    for s in g.start_cells.tolist():
        if s not in reached:
            reached |= walk(g, s)
    assert reached == set(range(g.n_cells))


def test_no_move_crosses_a_thin_wall():
    g = grid_of(split_room(2.5))
    west, east = cell(g, 2.75, 0.25), cell(g, 3.25, 0.25)  # both kept: joined through the doorway
    assert g.forward(west, 0) == -1  # +x would pass through the wall
    assert g.forward(east, 2) == -1  # -x likewise
    assert east not in g.neighbours(west)
    # north of the wall's end at y = 2.5 the move is open
    assert g.forward(cell(g, 2.75, 3.25), 0) == cell(g, 3.25, 3.25)


@pytest.mark.parametrize("n_headings", HEADING_COUNTS)
def test_every_open_move_keeps_the_listener_clear(maple, n_headings):
    # whatever the floorplan, the segment between the centres of an open move stays LISTENER_RADIUS from
    # every wall and obstacle face (checked here with shapely, independently of the grid's own bookkeeping)
    scene, _ = maple
    g = build_grid(scene, n_headings)
    rings = [shapely.LinearRing(scene.outline)] + [shapely.LinearRing(ob.polygon) for ob in scene.obstacles]
    surfaces = shapely.union_all(rings)
    n_open = 0
    for c in range(g.n_cells):
        for h in range(n_headings):
            n = g.forward(c, h)
            if n >= 0:
                n_open += 1
                segment = shapely.LineString([g.centres[c], g.centres[n]])
                assert surfaces.distance(segment) >= LISTENER_RADIUS - 1e-9, (c, h)
                assert np.allclose(g.centres[n] - g.centres[c], g.step(h) * g.spacing)
    assert n_open > g.n_cells  # most cells have somewhere to go


def test_start_region_in_the_sealed_part_keeps_only_that_part():
    data = split_room(4.0)
    data["grid"]["start_region"]["box"] = [3.5, 0.5, 5.5, 3.5]
    data["spots"] = [{"name": "east", "position": [4.5, 2.0], "height": 1.2}]
    g = grid_of(data)
    assert np.all(g.centres[:, 0] > 3.0)
    assert g.n_cells == 48


# --- moves ----------------------------------------------------------------------------------------


def test_heading_counts():
    assert HEADING_COUNTS == (4, 8)


@pytest.mark.parametrize("n", [0, 3, 6, 16])
def test_unsupported_heading_count(n):
    with pytest.raises(ConfigError, match=rf"^n_headings must be one of \(4, 8\) \(got {n}\)$"):
        grid_of(empty_room(3, 2), n)


@pytest.mark.parametrize("n", HEADING_COUNTS)
def test_heading_angles(n):
    g = grid_of(empty_room(3, 2), n)
    for h in range(n):
        angle = g.heading_angle(h)
        assert angle == pytest.approx(2 * math.pi * h / n)
        # the forward step points along the heading (counter-clockwise from +x)
        step = g.step(h).astype(float)
        np.testing.assert_allclose(step / np.linalg.norm(step), [math.cos(angle), math.sin(angle)], atol=1e-12)
    assert g.heading_angle(0) == 0.0
    assert g.heading_angle(n // 4) == pytest.approx(math.pi / 2)
    assert g.heading_angle(n // 2) == pytest.approx(math.pi)


def test_forward_with_4_headings(room_3x2):
    g = room_3x2
    corner = cell(g, 0.25, 0.25)
    assert g.forward(corner, 0) == cell(g, 0.75, 0.25)  # east
    assert g.forward(corner, 1) == cell(g, 0.25, 0.75)  # north
    assert g.forward(corner, 2) == -1  # west: the wall
    assert g.forward(corner, 3) == -1  # south: the wall
    top = cell(g, 2.75, 1.75)
    assert g.forward(top, 0) == -1 and g.forward(top, 1) == -1
    assert g.forward(top, 2) == cell(g, 2.25, 1.75)
    assert g.forward(top, 3) == cell(g, 2.75, 1.25)


def test_forward_with_8_headings():
    g = grid_of(empty_room(3, 2), 8)
    c = cell(g, 0.75, 0.75)
    expected = {
        0: (1.25, 0.75), 1: (1.25, 1.25), 2: (0.75, 1.25), 3: (0.25, 1.25),
        4: (0.25, 0.75), 5: (0.25, 0.25), 6: (0.75, 0.25), 7: (1.25, 0.25),
    }
    for h, (x, y) in expected.items():
        assert g.forward(c, h) == cell(g, x, y), h
    corner = cell(g, 0.25, 0.25)
    assert [g.forward(corner, h) >= 0 for h in range(8)] == [True, True, True, False, False, False, False, False]


def test_forward_and_back_return_to_the_same_cell():
    for n in HEADING_COUNTS:
        g = grid_of(empty_room(3, 2), n)
        for c in range(g.n_cells):
            for h in range(n):
                nxt = g.forward(c, h)
                if nxt >= 0:
                    assert g.forward(nxt, (h + n // 2) % n) == c


def test_diagonal_moves_do_not_cut_corners():
    # a small post over the lattice point (1.25, 0.25) removes that cell only
    post = {"name": "post", "box": [1.15, 0.15, 1.35, 0.35], "height": 1.0, "material": "wood_16mm"}
    g = grid_of(empty_room(3, 2, obstacles=[post], spots=[{"name": "s", "position": [2.0, 1.3], "height": 1.2}]), 8)
    assert not has_cell(g, 1.25, 0.25)
    a, b = cell(g, 0.75, 0.25), cell(g, 1.25, 0.75)
    assert g.forward(a, 1) == -1  # north-east would clip the post's corner
    assert g.forward(b, 5) == -1  # and back, south-west
    assert g.forward(a, 2) == cell(g, 0.75, 0.75)  # the way round is open
    assert g.forward(cell(g, 0.75, 0.75), 0) == b
    c = cell(g, 1.75, 0.25)
    assert g.forward(c, 3) == -1  # north-west past the post's other side
    assert g.forward(cell(g, 0.75, 0.75), 1) == cell(g, 1.25, 1.25)  # away from the post diagonals are open


def test_diagonal_moves_do_not_pass_through_a_post():
    # a 0.1 m post at (1, 1), the middle of four cells: each cell is 0.29 m from it and each side of the square
    # 0.205 m (the solid is shrunk by 5 mm), so the four cells and the four axis moves are open, but the
    # diagonals run through the post
    post = {"name": "post", "box": [0.95, 0.95, 1.05, 1.05], "height": 1.0, "material": "wood_16mm"}
    g = grid_of(empty_room(3, 2, obstacles=[post], spots=[{"name": "s", "position": [2.0, 1.0], "height": 1.2}]), 8)
    sw, se, nw, ne = (cell(g, x, y) for x, y in ((0.75, 0.75), (1.25, 0.75), (0.75, 1.25), (1.25, 1.25)))
    assert g.forward(sw, 0) == se and g.forward(sw, 2) == nw and g.forward(se, 2) == ne and g.forward(nw, 0) == ne
    assert g.forward(sw, 1) == -1 and g.forward(ne, 5) == -1
    assert g.forward(se, 3) == -1 and g.forward(nw, 7) == -1


def test_diagonal_moves_do_not_cross_a_thin_wall():
    g = grid_of(split_room(2.5), 8)
    assert g.forward(cell(g, 2.75, 0.75), 1) == -1  # north-east through the wall
    assert g.forward(cell(g, 2.75, 0.75), 7) == -1  # south-east through the wall
    # a diagonal from (2.75, 2.25) to (3.25, 2.75) passes (3, 2.5), the wall's end: blocked both ways
    assert g.forward(cell(g, 2.75, 2.25), 1) == -1
    assert g.forward(cell(g, 3.25, 2.75), 5) == -1
    # one row further north the diagonal passes (3, 3), clear of the wall
    assert g.forward(cell(g, 2.75, 3.25), 7) == cell(g, 3.25, 2.75)
    assert g.forward(cell(g, 2.75, 3.25), 1) == cell(g, 3.25, 3.75)


# --- cell_at --------------------------------------------------------------------------------------


def test_cell_at_each_centre_is_that_cell(room_3x2):
    g = room_3x2
    for c in range(g.n_cells):
        assert g.cell_at(g.centres[c]) == c


def test_cell_at_picks_the_nearest_centre(room_3x2):
    g = room_3x2
    assert g.cell_at([0.3, 0.2]) == cell(g, 0.25, 0.25)
    assert g.cell_at([1.4, 0.9]) == cell(g, 1.25, 0.75)
    assert g.cell_at([1.6, 1.1]) == cell(g, 1.75, 1.25)
    assert g.cell_at(np.array([2.9, 1.95])) == cell(g, 2.75, 1.75)
    assert g.cell_at([10.0, -5.0]) == cell(g, 2.75, 0.25)  # far outside: still the nearest cell


def test_cell_at_inside_an_obstacle_gives_a_navigable_cell(base_scene):
    g = build_grid(from_dict(base_scene, "base.yaml"))
    c = g.cell_at([1.5, 1.4])  # the table's middle
    assert 0 <= c < g.n_cells
    assert g.index[tuple(g.ij[c])] == c
