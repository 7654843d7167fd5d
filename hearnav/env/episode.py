"""Drawing an episode: scene, target and distractor spots, their sounds and levels, the start pose."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from hearnav import sounds
from hearnav.env.config import EnvConfig
from hearnav.errors import ConfigError, unknown_name
from hearnav.scene.grid import Grid
from hearnav.scene.model import Scene
from hearnav.tables.sounds import dry_signal


@dataclass(frozen=True)
class SourcePlan:
    """One source of an episode: where it stands and what it plays."""

    spot: int
    category: str
    pool: str
    voice: int
    take: int
    level_db: float
    role: str  # "target" or "distractor"

    def info(self, scene: Scene) -> dict:
        """A plain dict for info (no arrays)."""
        return {"role": self.role, "spot": scene.spots[self.spot].name, "category": self.category,
                "pool": self.pool, "voice": self.voice, "take": self.take, "level_db": round(self.level_db, 6)}


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


def _start(grid: Grid, target_xy: np.ndarray, min_dist: float, rng: np.random.Generator) -> int:
    dist = np.linalg.norm(grid.centres - target_xy, axis=1)
    for pool in (grid.start_cells, np.arange(grid.n_cells)):
        far = pool[dist[pool] >= min_dist]
        if far.size:
            return int(rng.choice(far))
    return int(np.argmax(dist))


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
        take = int(rng.integers(2**31 - 1))
        level = 0.0 if role == "target" else float(rng.uniform(*cfg.distractor_level_db))
        plans.append(SourcePlan(spot, category, cfg.sound_pool, voice, take, level, role))
    start = _start(grid, scene.spots[target].position[:2], cfg.min_start_distance, rng)
    heading = int(rng.integers(grid.n_headings))
    return EpisodePlan(scene_name, tuple(plans), start, heading)


def dry_signals(plan: EpisodePlan, n_samples: int, fs: int) -> list[np.ndarray]:
    """Dry signals of every source, level-adjusted, ``n_samples`` long (each clip generated once into the store,
    :func:`hearnav.tables.dry_signal`)."""
    return [(dry_signal(s.category, s.pool, s.voice, s.take, n_samples, fs) * np.float32(10 ** (s.level_db / 20)))
            .astype(np.float32) for s in plan.sources]
