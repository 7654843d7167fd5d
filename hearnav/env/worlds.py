"""Worlds the environment uses: thin views of a scene's tables in the store (:mod:`hearnav.tables`)."""

from __future__ import annotations

from dataclasses import dataclass

from hearnav.acoustics import AcousticSettings
from hearnav.tables.maps import PoseMaps
from hearnav.errors import ConfigError
from hearnav.listening import ListeningWorld
from hearnav.scene.format import SPLITS
from hearnav.scene.grid import Grid
from hearnav.scene.library import load_named, scene_names
from hearnav.scene.model import Scene
from hearnav.tables import scene as scene_tables


@dataclass(frozen=True)
class World:
    """A scene with its grid, its pose tables and its mixing engine, all read-only views of the store."""

    scene: Scene
    grid: Grid
    poses: scene_tables.PoseTables
    listening: ListeningWorld


def get_world(name: str, settings: AcousticSettings, window_len: int) -> World:
    """The world of a named scene (its tables are built into the store on first use, then memory-mapped)."""
    scene = load_named(name)
    poses = scene_tables.pose_tables(scene, settings)
    return World(scene, poses.grid, poses, ListeningWorld(scene_tables.response_spectra(scene, settings, window_len)))


def get_maps(name: str, settings: AcousticSettings, size: int, fov_rad: float) -> PoseMaps:
    """The egocentric maps of every pose of a named scene (:func:`hearnav.tables.pose_maps`)."""
    return scene_tables.pose_maps(load_named(name), settings, size, fov_rad)


def scene_list(scenes: str | list[str], procedural_pool: int) -> tuple[str, ...]:
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
