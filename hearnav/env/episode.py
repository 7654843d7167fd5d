"""Drawing an episode: scene, target and distractor spots, their sounds and levels, the start pose."""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from hearnav import sounds
from hearnav.env.config import EnvConfig
from hearnav.env.standoff import ring_cells
from hearnav.errors import ConfigError, short_repr, unknown_name
from hearnav.scene.grid import Grid
from hearnav.scene.model import Scene
from hearnav.tables.sounds import TAKES, dry_signal


@dataclass(frozen=True)
class SourcePlan:
    """One source of an episode: where it stands and what it plays."""

    spot: int
    category: str
    pool: str
    voice: int
    take: int  # one of the voice's rendered takes, 0 <= take < hearnav.tables.sounds.TAKES
    offset: int  # the sound starts at sample offset % its length (the take loops)
    level_db: float
    role: str  # "target" or "distractor"

    def info(self, scene: Scene) -> dict:
        """A plain dict for info (no arrays)."""
        return {"role": self.role, "spot": scene.spots[self.spot].name, "category": self.category,
                "pool": self.pool, "voice": self.voice, "take": self.take, "offset": self.offset,
                "level_db": round(self.level_db, 6)}


@dataclass(frozen=True)
class EpisodePlan:
    """Everything random about an episode, drawn before it starts."""

    scene: str
    sources: tuple[SourcePlan, ...]  # the target first
    start_cell: int
    start_heading: int


def allowed_categories(scene: Scene, spot: int, categories: list[str]) -> tuple[str, ...]:
    """The categories of ``categories`` (the config's ``sound_categories``) a spot accepts, in that order.

    Episodes draw only from the configured categories, never from whatever else is registered, so registering
    a plug-in does not change a suite's episodes.
    """
    spec = scene.spots[spot].categories
    return tuple(c for c in categories if spec is None or c in spec)


def check_categories(cfg: EnvConfig) -> None:
    """Raise ConfigError unless every configured category is registered and targets are among them."""
    registered = sounds.categories()
    for option, names in (("sound_categories", cfg.sound_categories), ("target_category", cfg.target_categories)):
        for category in names or ():
            if category not in registered:
                raise ConfigError(f"option {option!r}: {unknown_name('sound category', category, registered)}")
    for category in cfg.target_categories or ():
        if category not in cfg.sound_categories:
            raise ConfigError(f"option 'target_category': {category!r} is not drawn (expected one of "
                              f"sound_categories: {', '.join(cfg.sound_categories)}); add it to sound_categories")


def _start(grid: Grid, target_xy: np.ndarray, min_dist: float, ring: np.ndarray, rng: np.random.Generator) -> int:
    """A start cell at least ``min_dist`` from the target and outside the stand-off ring (``ring``: (n_cells,)
    bool, :func:`hearnav.env.standoff.ring_cells`): from the start region if one is, else from every navigable
    cell (:func:`check_start_distance` has made sure one is)."""
    ok = (np.linalg.norm(grid.centres - target_xy, axis=1) >= min_dist) & ~ring
    for pool in (grid.start_cells, np.arange(grid.n_cells)):
        far = pool[ok[pool]]
        if far.size:
            return int(rng.choice(far))
    raise ConfigError(f"no navigable cell outside the stand-off rings is {min_dist:g} m from the target (expected "
                      f"one); lower min_start_distance or standoff_m")


def start_reach(grid: Grid, xy: np.ndarray, ring: np.ndarray | None = None) -> float:
    """Distance in metres from ``xy`` to the farthest navigable cell centre outside ``ring`` (default: none):
    the largest start distance there (0 when no cell is left)."""
    keep = np.ones(grid.n_cells, bool) if ring is None else ~ring
    return float(np.linalg.norm(grid.centres[keep] - xy, axis=1).max()) if keep.any() else 0.0


def check_start_distance(cfg: EnvConfig, scene_name: str, scene: Scene, grid: Grid, targets: list[int]) -> None:
    """Raise ConfigError if ``min_start_distance`` cannot be met for some target spot of the scene by a cell
    outside the stand-off rings of every spot (whichever sources an episode draws), naming the largest distance
    every target spot allows. Draws nothing, so valid configurations draw as before."""
    wanted = cfg.min_start_distance
    ring = ring_cells(grid, np.array([s.position[:2] for s in scene.spots]), cfg.standoff_m)
    if not (~ring).any():
        raise ConfigError(f"option 'standoff_m': {cfg.standoff_m:g} m leaves no start cell in scene "
                          f"{short_repr(scene_name)} (expected a navigable cell outside every spot's stand-off ring); "
                          f"lower standoff_m or choose other scenes")
    reach = {s: start_reach(grid, scene.spots[s].position[:2], ring) for s in targets}
    spot = min(reach, key=reach.get)
    if reach[spot] < wanted:
        largest = math.floor(reach[spot] * 100) / 100
        raise ConfigError(f"option 'min_start_distance': {wanted:g} m cannot be met in scene {short_repr(scene_name)} "
                          f"(expected at most {largest:.2f} m: no navigable cell outside the stand-off rings is "
                          f"farther from target spot {short_repr(scene.spots[spot].name)}); lower min_start_distance "
                          f"or standoff_m, or choose other scenes")


def draw_episode(rng: np.random.Generator, cfg: EnvConfig, scene_name: str, scene: Scene, grid: Grid) -> EpisodePlan:
    """Draw the random parts of an episode in a fixed order from ``rng``."""
    n_spots = len(scene.spots)
    wanted = cfg.target_categories

    def target_options(spot: int) -> tuple[str, ...]:
        cats = allowed_categories(scene, spot, cfg.sound_categories)
        return cats if wanted is None else tuple(c for c in cats if c in wanted)

    targets = [s for s in range(n_spots) if target_options(s)]
    if not targets:
        raise ConfigError(f"scene {scene_name!r} has no spot that accepts target category {cfg.target_category!r} "
                          f"(expected at least one); choose other scenes or another category")
    check_start_distance(cfg, scene_name, scene, grid, targets)
    target = int(rng.choice(targets))
    lo, hi = cfg.distractors
    n_dist = int(rng.integers(lo, hi + 1))
    others = [s for s in range(n_spots) if s != target]
    chosen = [int(s) for s in rng.permutation(others)[: min(n_dist, len(others))]]
    plans = []
    for role, spot in [("target", target)] + [("distractor", s) for s in chosen]:
        cats = target_options(spot) if role == "target" else allowed_categories(scene, spot, cfg.sound_categories)
        category = str(rng.choice(cats))
        voice = int(rng.integers(sounds.pool_size(category, cfg.sound_pool)))
        take = int(rng.integers(TAKES))
        offset = int(rng.integers(2**31 - 1))
        level = 0.0 if role == "target" else float(rng.uniform(*cfg.distractor_level_db))
        plans.append(SourcePlan(spot, category, cfg.sound_pool, voice, take, offset, level, role))
    ring = ring_cells(grid, np.array([scene.spots[p.spot].position[:2] for p in plans]), cfg.standoff_m)
    start = _start(grid, scene.spots[target].position[:2], cfg.min_start_distance, ring, rng)
    heading = int(rng.integers(grid.n_headings))
    return EpisodePlan(scene_name, tuple(plans), start, heading)


def dry_signals(plan: EpisodePlan, n_samples: int, fs: int) -> list[np.ndarray]:
    """Dry signals of every source, level-adjusted, ``n_samples`` long: excerpts of the voices' takes, rendered
    once into the store (:func:`hearnav.tables.dry_signal`)."""
    signals = [dry_signal(s.category, s.pool, s.voice, s.take, s.offset, n_samples, fs) for s in plan.sources]
    for s, x in zip(plan.sources, signals):
        x *= np.float32(10 ** (s.level_db / 20))
    return signals
