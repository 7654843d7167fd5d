"""Physical and size bounds of a scene, checked before any geometry is computed.

A scene is a room people live or work in, so each bound is generous for such a room and small enough that
a mistyped or hostile value (a 2 km outline, a 1e300 ceiling, a million corners) is refused in one line
instead of running into a long computation or a MemoryError. ``scenes/FORMAT.md`` lists them.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from hearnav.scene import format as fmt

if TYPE_CHECKING:
    from hearnav.scene.checks import Problems

#: Largest extent (m) of the outline along x and along y: a large hall.
MAX_EXTENT = 100.0
#: Largest ceiling height (m): an atrium.
MAX_CEILING = 20.0
#: Largest absolute value (m) of any coordinate: the room may sit anywhere within this distance of the origin.
MAX_COORDINATE = 10_000.0
#: Most corners of one polygon (the outline or an obstacle's), counting the repeated last corner.
MAX_CORNERS = 2000
#: Most obstacles in a scene (a full 100 m hall with this many and MAX_SPOTS spots checks in a few seconds;
#: the bundled scenes have at most 8, and the image-source model's cost grows with every face).
MAX_OBSTACLES = 500
#: Most source spots in a scene.
MAX_SPOTS = 100
#: Allowed grid spacing in metres.
SPACING_RANGE = (0.1, 2.0)
#: Most lattice points of the grid over the outline's bounding box (each becomes a cell with its own responses).
MAX_LATTICE_POINTS = 100_000


def _points(spec: fmt.SceneSpec) -> list[tuple[str, list[list[float]]]]:
    """Every field of the spec that holds plan coordinates, with its path, as a list of [x, y] points."""
    found = [("outline", spec.outline), ("grid.start_region.box", [spec.grid.start_region.box[:2],
                                                                   spec.grid.start_region.box[2:]])]
    for k, ob in enumerate(spec.obstacles):
        if ob.polygon is not None:
            found.append((f"obstacles[{k}].polygon", ob.polygon))
        if ob.box is not None:
            found.append((f"obstacles[{k}].box", [ob.box[:2], ob.box[2:]]))
        if ob.partition is not None:
            found.append((f"obstacles[{k}].partition", [ob.partition.start, ob.partition.end]))
    found += [(f"spots[{k}].position", [sp.position]) for k, sp in enumerate(spec.spots)]
    return found


def _check_counts(spec: fmt.SceneSpec, problems: Problems) -> None:
    for path, items, most, what in [("outline", spec.outline, MAX_CORNERS, "corners"),
                                    ("obstacles", spec.obstacles, MAX_OBSTACLES, "obstacles"),
                                    ("spots", spec.spots, MAX_SPOTS, "spots")]:
        if len(items) > most:
            problems.add(path, f"too many {what} (expected at most {most}, got {len(items)})")
    for k, ob in enumerate(spec.obstacles):
        if ob.polygon is not None and len(ob.polygon) > MAX_CORNERS:
            problems.add(f"obstacles[{k}].polygon", f"too many corners (expected at most {MAX_CORNERS}, got {len(ob.polygon)})")


def check_limits(spec: fmt.SceneSpec, problems: Problems) -> bool:
    """Add a problem line for every value beyond the bounds above; True when all are within.

    Uses only array arithmetic on the spec's numbers (which the format has already made finite), so it is
    safe to run before any shapely work.
    """
    known = len(problems)
    _check_counts(spec, problems)
    if spec.ceiling_height > MAX_CEILING:
        problems.add("ceiling_height", f"room too high (expected at most {MAX_CEILING:g} m, "
                                       f"got {spec.ceiling_height:g})")
    for path, pts in _points(spec):
        worst = float(np.max(np.abs(np.asarray(pts, dtype=float)))) if len(pts) else 0.0
        if worst > MAX_COORDINATE:
            problems.add(path, f"coordinate too far from the origin (expected every coordinate within "
                               f"+/-{MAX_COORDINATE:g} m, got {worst:g}); move the plan near (0, 0)")
    if len(spec.outline) and len(problems) == known:
        _check_size(np.asarray(spec.outline, dtype=float), spec.grid.spacing, problems)
    return len(problems) == known


def _check_size(outline: np.ndarray, spacing: float, problems: Problems) -> None:
    """The outline's extent, and the number of lattice points the grid lays over its bounding box."""
    size = outline.max(axis=0) - outline.min(axis=0)
    if np.any(size > MAX_EXTENT):
        problems.add("outline", f"room too large (expected at most {MAX_EXTENT:g} m across in x and in y, got "
                                f"{size[0]:g} x {size[1]:g} m); check the units (metres)")
    elif spacing >= SPACING_RANGE[0]:
        nx, ny = (int(n) for n in np.floor((size - spacing / 2) / spacing) + 1)  # as grid.candidate_mask lays them
        if nx * ny > MAX_LATTICE_POINTS:
            problems.add("grid.spacing", f"grid too fine for the room (expected at most {MAX_LATTICE_POINTS} lattice "
                                         f"points, got {nx} x {ny} at {spacing:g} m); raise the spacing")
