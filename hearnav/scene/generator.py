"""Seeded procedural floorplans: a rectangle cut into rooms by partitions with doorways, then furnished.

The generator builds a scene *spec* (the same dictionary a YAML file parses to) and passes it through
:func:`hearnav.scene.loader.from_dict`, so a generated scene is validated exactly like a bundled file.
A draw that fails validation or the extra quality checks (room reachability, cell budget, a plausible
reverberation time) is redrawn from a derived seed ``SeedSequence([seed, attempt])``; the same seed
therefore always yields the same scene.

Partitions stand on the lines of the 0.5 m navigation lattice and doorways are centred on (or start at
the end of a wall next to) lattice lines, so every doorway leaves the listener a passage.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

import numpy as np
import shapely

from hearnav.errors import ConfigError, SceneError
from hearnav.scene.format import RESERVED_PREFIX, SPLITS
from hearnav.scene.grid import build_grid
from hearnav.scene.loader import from_dict
from hearnav.scene.materials import FURNITURE_SCATTERING, ROOM_SCATTERING
from hearnav.scene.model import Scene

#: Prefix of generated scene names: ``gen-<seed>``.
PREFIX = RESERVED_PREFIX
#: Attempts (derived seeds) before giving up.
MAX_TRIES = 50
SPACING = 0.5
WALL_THICKNESS = 0.1
AREA_RANGE = (30.0, 90.0)
CEILING_RANGE = (2.4, 3.2)
EAR_RANGE = (1.2, 1.6)
MIN_ROOM_SIDE = 2.0
DOOR_WIDTHS = (0.8, 0.9, 1.0, 1.1, 1.2)
MAX_OBSTACLES = 8
MAX_CELLS = 350
#: Accepted Eyring RT60 (s) at 500 Hz and 1 kHz. The rendered responses' T30 of generated flats runs 10-30 %
#: above Eyring's estimate (measured: 0.38 -> 0.46 s, 0.41 -> 0.48 s, 0.45 -> 0.56 s, 0.48 -> 0.62 s), so
#: they measure about 0.3-0.6 s, the range of furnished flats and living rooms (common practice).
RT60_RANGE = (0.25, 0.45)
SPOT_MARGIN = 0.4  # horizontal clearance (m) of spots from every wall and obstacle

WALL_MATERIALS = ("plasterboard", "plasterboard", "wooden_lining", "brick_wall_rough", "rough_lime_wash")
FLOOR_MATERIALS = ("carpet_hairy", "carpet_soft_10mm", "carpet_tufted_9.5mm", "carpet_cotton", "wood_16mm",
                   "linoleum_on_concrete")
CEILING_MATERIALS = ("plasterboard", "ceiling_plasterboard", "acoustical_plaster_25mm", "ceiling_fissured_tile")


@dataclass(frozen=True)
class _Item:
    """A kind of furniture: plan size ranges (m), height (m), materials, whether it stands at a wall."""

    name: str
    width: tuple[float, float]
    depth: tuple[float, float]
    height: float
    materials: tuple[str, ...]
    at_wall: bool


FURNITURE = (
    _Item("sofa", (1.6, 2.2), (0.8, 0.95), 0.8, ("chairs_heavy_upholstered", "chairs_upholstered_cloth"), True),
    _Item("table", (1.2, 1.8), (0.8, 1.0), 0.75, ("wood_16mm",), False),
    _Item("counter", (1.8, 3.0), (0.6, 0.65), 0.9, ("wood_16mm", "hard_surface"), True),
    _Item("island", (1.2, 2.0), (0.8, 1.0), 0.9, ("wood_16mm",), False),
    _Item("bookcase", (0.8, 1.6), (0.35, 0.4), 1.9, ("wood_16mm",), True),
    _Item("bed", (1.9, 2.1), (1.4, 1.6), 0.55, ("chairs_medium_upholstered",), True),
    _Item("desk", (1.2, 1.6), (0.7, 0.8), 0.75, ("wood_16mm",), True),
    _Item("armchair", (0.8, 0.9), (0.8, 0.9), 0.85, ("chairs_upholstered_cloth", "chairs_upholstered_leather"), False),
)

#: Spot kinds: name, allowed categories, height range (m).
SPOT_KINDS = (
    ("talker", ("talker",), (1.1, 1.7)),
    ("radio", ("music", "talker"), (0.8, 1.2)),
    ("tv", ("talker", "music"), (0.9, 1.2)),
    ("phone", ("alarm", "talker"), (0.7, 1.1)),
    ("smoke-alarm", ("alarm",), (1.6, 1.8)),
    ("fridge", ("hum",), (0.8, 1.2)),
    ("fan", ("hum", "noise"), (0.6, 1.8)),
    ("window", ("noise",), (1.0, 1.6)),
    ("speaker", ("music",), (1.0, 1.8)),
    ("kettle", ("hum", "alarm", "noise"), (0.9, 1.1)),
)


@dataclass(frozen=True)
class _Rect:
    """A room between wall centre lines (or the outline)."""

    x0: float
    y0: float
    x1: float
    y1: float

    def side(self, axis: int) -> float:
        return (self.x1 - self.x0) if axis == 0 else (self.y1 - self.y0)


def _r(v: float) -> float:
    """Round to 5 mm, as a plain float."""
    return round(round(float(v) / 0.005) * 0.005, 3)


def _snap(v: float, step: float = 0.05) -> float:
    return _r(round(v / step) * step)


def _material(name: str, scattering: float) -> dict:
    """A table material with the scattering of what it stands for (a furnished room's surface, furniture)."""
    return {"name": name, "scattering": scattering}


def _uniform(rng: np.random.Generator, lo: float, hi: float) -> float:
    """A uniform draw on [lo, hi], snapped to 5 cm; NaN when the interval is empty."""
    return _snap(rng.uniform(lo, hi)) if hi >= lo else float("nan")


def _lattice(lo: float, hi: float) -> np.ndarray:
    """Lattice lines (0.25 + 0.5 k) strictly between lo and hi."""
    k = np.arange(np.ceil((lo - SPACING / 2) / SPACING), np.floor((hi - SPACING / 2) / SPACING) + 1)
    v = SPACING / 2 + k * SPACING
    return v[(v > lo + 1e-9) & (v < hi - 1e-9)]


class _Plan:
    """Mutable state of one draw: outline size, rooms, partitions, doorways."""

    def __init__(self, width: float, depth: float):
        self.size = (width, depth)
        self.rooms = [_Rect(0.0, 0.0, width, depth)]
        self.walls: list[dict] = []
        self.doors: list[tuple[int, float, float, float]] = []  # (wall axis, line, gap start, gap end)

    def inner(self, room: _Rect) -> _Rect:
        """The room's free floor between wall faces."""
        h = WALL_THICKNESS / 2
        w, d = self.size
        return _Rect(room.x0 + (h if room.x0 > 0 else 0), room.y0 + (h if room.y0 > 0 else 0),
                     room.x1 - (h if room.x1 < w else 0), room.y1 - (h if room.y1 < d else 0))

    def _door_near(self, axis: int, line: float, at: float) -> bool:
        return any(a == axis and abs(ln - line) < 1e-9 and g0 - 0.6 < at < g1 + 0.6 for a, ln, g0, g1 in self.doors)

    def split(self, rng: np.random.Generator) -> bool:
        """Cut the largest splittable room by a partition with a doorway; False when none can be cut."""
        for room in sorted(self.rooms, key=lambda r: -r.side(0) * r.side(1)):
            axis = 0 if room.side(0) >= room.side(1) else 1  # the wall stands across the longer side
            lo, hi = (room.x0, room.x1) if axis == 0 else (room.y0, room.y1)
            a0, a1 = (room.y0, room.y1) if axis == 0 else (room.x0, room.x1)
            cands = [c for c in _lattice(lo + MIN_ROOM_SIDE, hi - MIN_ROOM_SIDE)
                     if not self._door_near(1 - axis, a0, c) and not self._door_near(1 - axis, a1, c)]
            if cands:
                self._add_wall(rng, room, axis, float(rng.choice(cands)))
                return True
        return False

    def _add_wall(self, rng: np.random.Generator, room: _Rect, axis: int, c: float) -> None:
        inner = self.inner(room)
        s0, s1 = (inner.y0, inner.y1) if axis == 0 else (inner.x0, inner.x1)
        width = float(rng.choice(DOOR_WIDTHS))
        # a doorway centred on a lattice line with a stub of at least 0.3 m on either side, or at one end
        centres = _lattice(s0 + width / 2 + 0.3, s1 - width / 2 - 0.3)
        if centres.size and rng.random() < 0.5:
            mid = float(rng.choice(centres))
            gap, pieces = (mid - width / 2, mid + width / 2), [(s0, mid - width / 2), (mid + width / 2, s1)]
        elif rng.random() < 0.5:
            gap, pieces = (s0, s0 + width), [(s0 + width, s1)]
        else:
            gap, pieces = (s1 - width, s1), [(s0, s1 - width)]
        for k, (p0, p1) in enumerate(pieces):
            start, end = ([c, p0], [c, p1]) if axis == 0 else ([p0, c], [p1, c])
            self.walls.append({
                "name": f"wall-{len(self.rooms)}{'ab'[k]}",
                "partition": {"start": [_r(v) for v in start], "end": [_r(v) for v in end],
                              "thickness": WALL_THICKNESS},
                "height": "ceiling",
                "material": _material("plasterboard", ROOM_SCATTERING),
            })
        self.doors.append((axis, c, gap[0], gap[1]))
        self.rooms.remove(room)
        if axis == 0:
            self.rooms += [_Rect(room.x0, room.y0, c, room.y1), _Rect(c, room.y0, room.x1, room.y1)]
        else:
            self.rooms += [_Rect(room.x0, room.y0, room.x1, c), _Rect(room.x0, c, room.x1, room.y1)]

    def door_zones(self) -> shapely.Geometry:
        """Discs around doorways that furniture must leave free."""
        pts = [(line, (g0 + g1) / 2) if axis == 0 else ((g0 + g1) / 2, line) for axis, line, g0, g1 in self.doors]
        return shapely.union_all([shapely.Point(p).buffer(1.1) for p in pts]) if pts else shapely.Polygon()


def _place_furniture(rng: np.random.Generator, plan: _Plan, count: int) -> list[dict]:
    placed: list[dict] = []
    shapes: list[shapely.Polygon] = []
    zones = plan.door_zones()
    for item in rng.permutation(len(FURNITURE))[:count]:
        it = FURNITURE[int(item)]
        for _ in range(30):
            room = plan.inner(plan.rooms[int(rng.integers(len(plan.rooms)))])
            length, depth = _snap(rng.uniform(*it.width)), _snap(rng.uniform(*it.depth))
            if it.at_wall:
                side = int(rng.integers(4))  # back flush with the west, east, south or north face
                w, d = (depth, length) if side < 2 else (length, depth)
                x = {0: room.x0, 1: room.x1 - w}.get(side, _uniform(rng, room.x0, room.x1 - w))
                y = {2: room.y0, 3: room.y1 - d}.get(side, _uniform(rng, room.y0, room.y1 - d))
            else:  # free-standing, with room to walk around it
                w, d = (length, depth) if rng.random() < 0.5 else (depth, length)
                x = _uniform(rng, room.x0 + 0.6, room.x1 - w - 0.6)
                y = _uniform(rng, room.y0 + 0.6, room.y1 - d - 0.6)
            if np.isnan(x) or np.isnan(y):
                continue
            box = [_r(x), _r(y), _r(x + w), _r(y + d)]
            shape = shapely.box(*box)
            if (box[0] < room.x0 - 1e-9 or box[1] < room.y0 - 1e-9 or box[2] > room.x1 + 1e-9
                    or box[3] > room.y1 + 1e-9 or shape.intersects(zones)
                    or any(shape.distance(o) < 0.6 for o in shapes)):
                continue
            shapes.append(shape)
            placed.append({"name": f"{it.name}-{len(placed) + 1}", "box": box, "height": it.height,
                           "material": _material(str(rng.choice(it.materials)), FURNITURE_SCATTERING)})
            break
    return placed


def _place_spots(rng: np.random.Generator, plan: _Plan, obstacles: list[shapely.Polygon], count: int) -> list[dict]:
    spots: list[dict] = []
    rooms = [plan.rooms[int(k)] for k in rng.permutation(len(plan.rooms))]
    for n, kind in enumerate(rng.permutation(len(SPOT_KINDS))[:count]):
        name, cats, (h0, h1) = SPOT_KINDS[int(kind)]
        room = plan.inner(rooms[n % len(rooms)])
        for _ in range(60):
            x = _uniform(rng, room.x0 + SPOT_MARGIN, room.x1 - SPOT_MARGIN)
            y = _uniform(rng, room.y0 + SPOT_MARGIN, room.y1 - SPOT_MARGIN)
            p = shapely.Point(x, y)
            if any(o.distance(p) < SPOT_MARGIN for o in obstacles):
                continue
            if any(np.hypot(x - s["position"][0], y - s["position"][1]) < 1.0 for s in spots):
                continue
            spots.append({"name": name, "position": [x, y], "height": _snap(rng.uniform(h0, h1)),
                          "categories": list(cats)})
            break
    return spots


def _obstacle_shape(ob: dict) -> shapely.Polygon:
    """The plan shape of a generated box or partition."""
    if "box" in ob:
        return shapely.box(*ob["box"])
    line = shapely.LineString([ob["partition"]["start"], ob["partition"]["end"]])
    return line.buffer(ob["partition"]["thickness"] / 2, cap_style="flat")


def _draw(seed: int, attempt: int, split: str) -> tuple[dict, list[tuple[float, ...]]]:
    """One candidate spec (not yet validated) and its rooms as (x0, y0, x1, y1) between wall centre lines."""
    rng = np.random.default_rng(np.random.SeedSequence([seed, attempt]))
    area, aspect = rng.uniform(*AREA_RANGE), rng.uniform(1.0, 1.8)
    width = max(5.0, round(np.sqrt(area * aspect) * 2) / 2)
    depth = max(4.5, round(area / width * 2) / 2)
    plan = _Plan(width, depth)
    for _ in range(int(rng.integers(2, 5)) - 1):
        if not plan.split(rng):
            break
    n_furniture = max(1, min(MAX_OBSTACLES - len(plan.walls), int(rng.integers(2, 7))))
    obstacles = plan.walls + _place_furniture(rng, plan, n_furniture)
    spots = _place_spots(rng, plan, [_obstacle_shape(ob) for ob in obstacles], int(rng.integers(4, 7)))
    start = plan.inner(plan.rooms[int(rng.integers(len(plan.rooms)))])
    ceiling = _snap(rng.uniform(*CEILING_RANGE))
    spec = {
        "name": f"{PREFIX}{seed}",
        "description": f"Generated floorplan (seed {seed}): {width:g} m x {depth:g} m, {len(plan.rooms)} rooms.",
        "split": split,
        "ceiling_height": ceiling,
        "outline": [[0.0, 0.0], [width, 0.0], [width, depth], [0.0, depth], [0.0, 0.0]],
        "materials": {"walls": _material(str(rng.choice(WALL_MATERIALS)), ROOM_SCATTERING),
                      "floor": _material(str(rng.choice(FLOOR_MATERIALS)), ROOM_SCATTERING),
                      "ceiling": _material(str(rng.choice(CEILING_MATERIALS)), ROOM_SCATTERING)},
        "obstacles": obstacles,
        "grid": {"spacing": SPACING, "ear_height": _snap(rng.uniform(*EAR_RANGE)),
                 "start_region": {"box": [_r(start.x0 + 0.2), _r(start.y0 + 0.2),
                                          _r(start.x1 - 0.2), _r(start.y1 - 0.2)]}},
        "spots": spots,
    }
    return spec, [dataclasses.astuple(r) for r in plan.rooms]


def _acceptable(scene: Scene, rooms: list[tuple[float, ...]]) -> bool:
    """Quality checks beyond validity: spots, cell budget, start cells, every room reachable, RT60."""
    if len(scene.spots) < 4 or len(scene.obstacles) > MAX_OBSTACLES:
        return False
    grid = build_grid(scene)
    if grid.n_cells > MAX_CELLS or grid.start_cells.size < 3:
        return False
    c = grid.centres
    for x0, y0, x1, y1 in rooms:
        if not np.any((c[:, 0] > x0) & (c[:, 0] < x1) & (c[:, 1] > y0) & (c[:, 1] < y1)):
            return False
    rt = scene.eyring_rt60()
    lo, hi = RT60_RANGE
    return bool(np.all((rt[2:4] >= lo) & (rt[2:4] <= hi)))


def _check_args(seed: int, split: str) -> None:
    if isinstance(seed, bool) or not isinstance(seed, (int, np.integer)) or seed < 0:
        raise ConfigError(f"generator seed must be a non-negative integer (got {seed!r})")
    if split not in SPLITS:
        raise ConfigError(f"generator split must be one of {', '.join(SPLITS)} (got {split!r})")


def _generate(seed: int, split: str) -> tuple[dict, Scene]:
    _check_args(seed, split)
    seed = int(seed)
    last = ""
    for attempt in range(MAX_TRIES):
        spec, rooms = _draw(seed, attempt, split)
        try:
            scene = from_dict(spec, f"{PREFIX}{seed}")
        except SceneError as exc:
            last = str(exc)
            continue
        if _acceptable(scene, rooms):
            return spec, scene
    raise SceneError(f"{PREFIX}{seed}: (top level): no acceptable floorplan in {MAX_TRIES} attempts "
                     f"(last problem: {last or 'the quality checks'})")


def generate_spec(seed: int, split: str = "train") -> dict:
    """The scene spec dictionary for ``seed`` (what a YAML file of the scene would parse to).

    Parameters
    ----------
    seed : non-negative integer; the same seed always gives the same spec.
    split : "train", "val" or "test"; only labels the scene (the layout depends on the seed alone).

    Returns
    -------
    dict ready for :func:`hearnav.scene.loader.from_dict`.
    """
    return _generate(seed, split)[0]


def generate_scene(seed: int, split: str = "train") -> Scene:
    """A validated generated scene named ``gen-<seed>`` (see :func:`generate_spec`)."""
    return _generate(seed, split)[1]


#: Most digits of the seed in a generated scene's name (a 64-bit seed has at most 20).
MAX_SEED_DIGITS = 20


def parse_name(name: str) -> int | None:
    """The seed of a generated scene name ``gen-<seed>`` (at most :data:`MAX_SEED_DIGITS` digits), else None."""
    tail = name[len(PREFIX):] if name.startswith(PREFIX) else ""
    return int(tail) if tail.isdigit() and tail.isascii() and len(tail) <= MAX_SEED_DIGITS else None

