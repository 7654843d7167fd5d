"""Geometric checks of a structurally valid scene, and its resolution into a :class:`Scene`.

Each check adds one problem line ``field.path: what is wrong (expected ..., got ...)``.
"""

from __future__ import annotations

import numpy as np
import shapely
from scipy import ndimage

from hearnav import sounds
from hearnav.errors import did_you_mean
from hearnav.scene import format as fmt
from hearnav.scene import materials as mats
from hearnav.scene.limits import SPACING_RANGE, check_limits
from hearnav.scene.model import SOLID_GAP, Scene, SolidObstacle, SourceSpot, counter_clockwise

#: A source spot must be at least this far (m) from every surface.
SPOT_CLEARANCE = 0.3
# Raster step (m) for the check that sound can travel through air from a spot to the listener.
_AIR_STEP = 0.05


class Problems(list):
    """Problem lines collected while checking a scene."""

    def add(self, path: str, message: str) -> None:
        self.append(f"{path}: {message}")


def _fmt_pt(p) -> str:
    return f"[{p[0]:g}, {p[1]:g}]"


def closed_polygon(points: list[list[float]], path: str, problems: Problems) -> np.ndarray | None:
    """Corners of a closed, simple polygon (without the repeated last corner), or None."""
    pts = np.asarray(points, dtype=float)
    if len(pts) < 2 or not np.allclose(pts[0], pts[-1]):
        last = _fmt_pt(pts[-1]) if len(pts) else "nothing"
        problems.add(path, f"polygon is not closed (expected the last corner to repeat the first "
                           f"{_fmt_pt(pts[0]) if len(pts) else ''}, got {last}); append the first corner")
        return None
    pts = pts[:-1]
    distinct = np.unique(np.round(pts, 9), axis=0)
    if len(distinct) < 3:
        problems.add(path, f"polygon has too few corners (expected at least 3 distinct corners, got {len(distinct)})")
        return None
    ring = shapely.LinearRing(pts)
    if not ring.is_simple:
        problems.add(path, "polygon crosses itself (expected a simple polygon whose edges meet only at "
                           "consecutive corners); reorder the corners")
        return None
    if abs(shapely.Polygon(pts).area) < 1e-6:
        problems.add(path, "polygon has zero area (expected corners that enclose an area)")
        return None
    return counter_clockwise(pts)


def checked_material(spec, path: str, problems: Problems) -> mats.Material | None:
    """A material from a table name, a named entry or explicit coefficients."""
    if isinstance(spec, fmt.CustomMaterial):
        return mats.Material("custom", tuple(spec.absorption), mats.scattering_bands(spec.scattering))
    name = spec if isinstance(spec, str) else spec.name
    table = mats.absorption_table()
    if name not in table:
        problems.add(path, f"unknown material {name!r} (expected a name from the material table or "
                           f"explicit absorption coefficients); {did_you_mean(name, table)}")
        return None
    return mats.named(name, None if isinstance(spec, str) else spec.scattering)


def obstacle_polygon(ob: fmt.Obstacle, path: str, problems: Problems) -> np.ndarray | None:
    """The plan polygon of an obstacle from its polygon, box or partition."""
    if ob.polygon is not None:
        return closed_polygon(ob.polygon, f"{path}.polygon", problems)
    if ob.box is not None:
        x0, y0, x1, y1 = ob.box
        if not (x1 > x0 and y1 > y0):
            problems.add(f"{path}.box", f"box is empty (expected [xmin, ymin, xmax, ymax] with xmax > xmin and "
                                        f"ymax > ymin, got {ob.box})")
            return None
        return np.array([[x0, y0], [x1, y0], [x1, y1], [x0, y1]], dtype=float)
    a, b = np.asarray(ob.partition.start, float), np.asarray(ob.partition.end, float)
    length = float(np.linalg.norm(b - a))
    if length < 1e-6:
        problems.add(f"{path}.partition", f"partition has zero length (expected start != end, got {_fmt_pt(a)} twice)")
        return None
    n = np.array([-(b - a)[1], (b - a)[0]]) / length * ob.partition.thickness / 2
    return counter_clockwise(np.array([a - n, b - n, b + n, a + n]))


def _check_heights(spec: fmt.SceneSpec, problems: Problems) -> bool:
    ok = True
    if spec.ceiling_height <= 0:
        problems.add("ceiling_height", f"height must be positive (expected a value > 0 m, got {spec.ceiling_height:g})")
        ok = False
    ear = spec.grid.ear_height
    if ear <= 0:
        problems.add("grid.ear_height", f"height must be positive (expected a value > 0 m, got {ear:g})")
        ok = False
    elif spec.ceiling_height > 0 and ear >= spec.ceiling_height:
        problems.add("grid.ear_height", f"ear height is not below the ceiling (expected < {spec.ceiling_height:g} m, "
                                        f"got {ear:g}); lower the ears or raise the ceiling")
        ok = False
    lo, hi = SPACING_RANGE
    if not lo <= spec.grid.spacing <= hi:
        problems.add("grid.spacing", f"grid spacing out of range (expected {lo:g} to {hi:g} m, got {spec.grid.spacing:g})")
        ok = False
    x0, y0, x1, y1 = box = spec.grid.start_region.box
    if not (x0 < x1 and y0 < y1):
        problems.add("grid.start_region.box", f"start_region.box must be [xmin, ymin, xmax, ymax] with xmin < xmax and "
                                              f"ymin < ymax (got {[float(v) for v in box]}); swap the corners")
        ok = False
    return ok


def _check_unique(kind: str, name: str, path: str, names: set[str], problems: Problems) -> None:
    """Report a name already in ``names`` (an obstacle's or a spot's), then add it."""
    if name in names:
        problems.add(f"{path}.name", f"duplicate {kind} name (expected unique names, got {name!r} twice)")
    names.add(name)


def _checked_obstacles(spec: fmt.SceneSpec, room: shapely.Polygon | None, problems: Problems) -> list[SolidObstacle]:
    solids: list[SolidObstacle] = []
    shapes: list[tuple[str, shapely.Polygon]] = []
    names: set[str] = set()
    for k, ob in enumerate(spec.obstacles):
        path = f"obstacles[{k}]"
        _check_unique("obstacle", ob.name, path, names, problems)
        poly = obstacle_polygon(ob, path, problems)
        material = checked_material(ob.material, f"{path}.material", problems)
        full = ob.height == "ceiling"
        height = spec.ceiling_height if full else float(ob.height)
        if not full and height <= 0:
            problems.add(f"{path}.height", f"height must be positive (expected a value > 0 m, got {height:g})")
            continue
        if not full and spec.ceiling_height > 0 and height > spec.ceiling_height:
            problems.add(f"{path}.height", f"obstacle is taller than the room (expected <= {spec.ceiling_height:g} m "
                                           f"or 'ceiling', got {height:g})")
            continue
        if poly is None or room is None:
            continue
        shape = shapely.Polygon(poly)
        if not room.intersects(shape) or room.touches(shape):
            problems.add(path, f"obstacle {ob.name!r} is outside the outline (expected it inside the room, got "
                               f"bounds {[round(v, 3) for v in shape.bounds]})")
            continue
        if not room.buffer(1e-9).contains(shape):
            problems.add(path, f"obstacle {ob.name!r} cuts a wall (expected it wholly inside the outline, got "
                               f"{shape.difference(room).area:.3g} m^2 outside); move or shrink it")
            continue
        touching = shapely.intersects([other for _, other in shapes], shape) if shapes else []
        for i in np.flatnonzero(touching):  # the cheap test first: an area needs a shared point
            other_name, other = shapes[i]
            if shape.intersection(other).area > 1e-9:
                problems.add(path, f"obstacle {ob.name!r} overlaps obstacle {other_name!r} (expected separate solids); "
                                   f"merge them into one polygon or move one")
        shapes.append((ob.name, shape))
        inner = shape.buffer(-SOLID_GAP, join_style="mitre")
        if inner.is_empty or not isinstance(inner, shapely.Polygon) or not inner.is_valid:
            problems.add(path, f"obstacle {ob.name!r} is too thin (expected every part at least {2 * SOLID_GAP:g} m "
                               f"across, got a shape that vanishes or splits when shrunk by {SOLID_GAP:g} m); thicken it")
            continue
        if material is not None:
            shrunk = counter_clockwise(np.asarray(inner.exterior.coords)[:-1])
            solids.append(SolidObstacle(ob.name, shrunk, height - (SOLID_GAP if full else 0.0), full, material))
    return solids


def _spot_clearance(xyz: np.ndarray, room: shapely.Polygon, footprints: np.ndarray, tops: np.ndarray,
                    ceiling: float) -> float:
    """Distance (m) from a point to the nearest surface: walls, floor, ceiling, obstacle faces.

    ``footprints`` are the obstacles' plan polygons and ``tops`` their heights (m), as arrays.
    """
    p2 = shapely.Point(xyz[:2])
    d = min(room.exterior.distance(p2), xyz[2], ceiling - xyz[2])
    if len(footprints):
        horiz = np.where(shapely.contains(footprints, p2), 0.0, shapely.distance(footprints, p2))
        d = min(d, float(np.min(np.hypot(horiz, np.maximum(0.0, xyz[2] - tops)))))
    return float(d)


def _check_categories(cats: tuple[str, ...], path: str, problems: Problems) -> None:
    """Every category a spot names must be a registered sound category."""
    registered = sounds.categories()
    for i, cat in enumerate(cats):
        if cat not in registered:
            problems.add(f"{path}.categories[{i}]", f"unknown sound category {cat!r} (expected a registered "
                                                    f"category); {did_you_mean(cat, registered)}")


def _checked_spots(spec: fmt.SceneSpec, room: shapely.Polygon | None, solids: list[SolidObstacle],
                   problems: Problems) -> list[SourceSpot]:
    spots: list[SourceSpot] = []
    names: set[str] = set()
    footprints = np.array([shapely.Polygon(ob.polygon) for ob in solids], dtype=object)
    tops = np.array([ob.height for ob in solids], dtype=float)
    for k, sp in enumerate(spec.spots):
        path = f"spots[{k}]"
        _check_unique("spot", sp.name, path, names, problems)
        xyz = np.array([sp.position[0], sp.position[1], sp.height], dtype=float)
        cats = tuple(sp.categories) if sp.categories else None
        _check_categories(cats or (), path, problems)
        spots.append(SourceSpot(sp.name, xyz, cats))
        if room is None:
            continue
        p2 = shapely.Point(xyz[:2])
        if not room.contains(p2):
            problems.add(f"{path}.position", f"spot {sp.name!r} is outside the outline (expected a point inside the room, "
                                             f"got {_fmt_pt(xyz)})")
            continue
        if spec.ceiling_height <= 0:
            continue  # the bad ceiling is reported; heights and clearances cannot be judged against it
        if not 0 < sp.height < spec.ceiling_height:
            problems.add(f"{path}.height", f"spot height out of range (expected between 0 and {spec.ceiling_height:g} m, "
                                           f"got {sp.height:g})")
            continue
        inside = [solids[i].name for i in np.flatnonzero(shapely.contains(footprints, p2) & (xyz[2] <= tops))] \
            if len(solids) else []
        if inside:
            problems.add(f"{path}.position", f"spot {sp.name!r} is inside obstacle {inside[0]!r} (expected free air, got "
                                             f"{_fmt_pt(xyz)} at height {sp.height:g} m)")
            continue
        clearance = _spot_clearance(xyz, room, footprints, tops, spec.ceiling_height)
        if clearance < SPOT_CLEARANCE - 1e-9:
            problems.add(f"{path}.position", f"spot {sp.name!r} is too close to a surface (expected at least "
                                             f"{SPOT_CLEARANCE:g} m of clearance, got {clearance:.2f} m)")
    return spots


def air_regions(scene: Scene) -> tuple[np.ndarray, np.ndarray, float]:
    """Label the plan's regions that air connects, with full-height obstacles as the only barriers.

    Returns
    -------
    origin : (2,) position of raster cell (0, 0).
    labels : (nx, ny) int region label, 0 for solid.
    step : raster step in metres.
    """
    lo, hi = scene.outline.min(axis=0), scene.outline.max(axis=0)
    n = np.ceil((hi - lo) / _AIR_STEP).astype(int) + 1
    gi, gj = np.meshgrid(np.arange(n[0]), np.arange(n[1]), indexing="ij")
    x, y = lo[0] + gi * _AIR_STEP, lo[1] + gj * _AIR_STEP
    air = shapely.Polygon(scene.outline)
    for ob in scene.obstacles:
        if ob.full_height:
            air = air.difference(shapely.Polygon(ob.polygon).buffer(SOLID_GAP))
    labels, _ = ndimage.label(shapely.contains_xy(air, x, y))
    return lo, labels, _AIR_STEP


def check_audible(scene: Scene, grid, problems: Problems) -> None:
    """Every spot must share air with at least one reachable cell."""
    origin, labels, step = air_regions(scene)
    cells = np.round((grid.centres - origin) / step).astype(int)
    reachable = set(np.unique(labels[cells[:, 0], cells[:, 1]]).tolist()) - {0}
    for k, sp in enumerate(scene.spots):
        i, j = np.round((sp.position[:2] - origin) / step).astype(int)
        region = labels[min(max(i, 0), labels.shape[0] - 1), min(max(j, 0), labels.shape[1] - 1)]
        if region not in reachable:
            problems.add(f"spots[{k}]", f"spot {sp.name!r} cannot be heard from any reachable cell (expected air "
                                        f"connecting it to the start region's cells, got a region sealed off by "
                                        f"full-height obstacles); add a doorway or move the spot")


def check_file_name(name: str, stem: str, problems: Problems) -> None:
    """A scene file must be named after its scene, and neither may take the generator's prefix."""
    prefix = fmt.RESERVED_PREFIX
    if name.startswith(prefix):
        problems.add("name", f"name {name!r} takes the prefix {prefix!r} reserved for generated scenes (expected a "
                             f"name not starting with {prefix!r}); rename the scene and its file")
    elif name != stem:
        problems.add("name", f"scene name does not match the file name (expected {stem!r}, got {name!r}); rename the "
                             f"file or the scene")


def check_scene(spec: fmt.SceneSpec, text: str, stem: str | None = None) -> tuple[Scene | None, Problems]:
    """Check a structurally valid spec; return the scene (None on any problem) and the problems.

    ``stem`` is the file name without ``.yaml`` for a scene read from a file (see :func:`check_file_name`).
    """
    problems = Problems()
    if stem is not None:
        check_file_name(spec.name, stem, problems)
    _check_heights(spec, problems)
    if not check_limits(spec, problems):
        return None, problems  # no geometry on values beyond the bounds: it could run for minutes
    outline = closed_polygon(spec.outline, "outline", problems)
    room = shapely.Polygon(outline) if outline is not None else None
    walls = checked_material(spec.materials.walls, "materials.walls", problems)
    floor = checked_material(spec.materials.floor, "materials.floor", problems)
    ceiling = checked_material(spec.materials.ceiling, "materials.ceiling", problems)
    solids = _checked_obstacles(spec, room, problems)  # a bad ear height or spacing must not hide obstacle problems
    spots = _checked_spots(spec, room, solids, problems)
    if problems:
        return None, problems
    scene = Scene(spec, outline, tuple(solids), walls, floor, ceiling, tuple(spots), text)
    from hearnav.scene.grid import build_grid

    grid = build_grid(scene)
    if grid.n_cells == 0:
        problems.add("grid", f"no navigable cell (expected free floor at least 0.2 m from every surface connected to "
                             f"the start region {spec.grid.start_region.box}, got none); move the start region or "
                             f"reduce the spacing")
        return None, problems
    check_audible(scene, grid, problems)
    return (None if problems else scene), problems
