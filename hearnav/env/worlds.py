"""Scenes, grids and listening worlds the environment uses, built once per process and reused."""

from __future__ import annotations

import os
from dataclasses import dataclass
from functools import lru_cache

from hearnav.acoustics import AcousticSettings, Responses, load_or_build
from hearnav.errors import ConfigError
from hearnav.listening import ListeningWorld
from hearnav.scene.grid import Grid, build_grid
from hearnav.scene.format import SPLITS
from hearnav.scene.library import load_named, scene_names
from hearnav.scene.model import Scene



@dataclass(frozen=True)
class World:
    """A scene with its grid, responses and mixing engine."""

    scene: Scene
    grid: Grid
    responses: Responses
    listening: ListeningWorld


#: Memory (bytes) this process may spend on precomputed response spectra, over all worlds
#: (HEARNAV_SPECTRA_MB overrides). A world's spectra are kept in single precision when they fit, else in half
#: precision; worlds beyond the budget compute spectra on demand through a bounded cache.
DEFAULT_SPECTRA_MB = 4096
_spent = 0


def spectra_budget() -> int:
    """Bytes of the spectra budget: HEARNAV_SPECTRA_MB megabytes (default 4096)."""
    raw = os.environ.get("HEARNAV_SPECTRA_MB", str(DEFAULT_SPECTRA_MB))
    try:
        mb = float(raw)
    except ValueError:
        mb = -1.0
    if not mb >= 0 or mb == float("inf"):
        raise ConfigError(f"HEARNAV_SPECTRA_MB must be a number of megabytes >= 0 (got {raw!r}); e.g. "
                          f"HEARNAV_SPECTRA_MB=2048, or unset it for {DEFAULT_SPECTRA_MB}")
    return int(mb * 2**20)


@lru_cache(maxsize=32)
def get_world(name: str, settings: AcousticSettings, window: int) -> World:
    """The world of a named scene (built into the response cache on first use)."""
    global _spent
    scene = load_named(name)
    grid = build_grid(scene, settings.n_headings)
    responses = load_or_build(scene, settings, grid)
    listening = ListeningWorld(responses, window)
    budget = spectra_budget()
    for precision in ("single", "half"):  # single precision is faster to mix; half fits twice as many worlds
        if _spent + listening.table_bytes(precision) <= budget:
            listening.precompute(precision)
            _spent += listening.table_bytes(precision)
            break
    return World(scene, grid, responses, listening)


def resolve_scenes(scenes: str | list[str], procedural_pool: int) -> tuple[str, ...]:
    """Scene names from a split, 'procedural' (gen-0 .. gen-(pool-1)), or a list of names (each checked)."""
    if isinstance(scenes, str):
        if scenes in SPLITS:
            names = scene_names(scenes)
            if not names:
                raise ConfigError(f"option 'scenes': split {scenes!r} has no scenes (expected at least one)")
            return tuple(names)
        if scenes == "procedural":
            return tuple(f"gen-{k}" for k in range(procedural_pool))
        scenes = [scenes]
    if not scenes:
        raise ConfigError("option 'scenes': expected a split, 'procedural' or a non-empty list of names, got []")
    for name in scenes:
        load_named(name)  # raises SceneError listing the valid names
    return tuple(scenes)
