"""Scenes: the file format, validation, the navigable grid and the library of bundled floorplans."""

from hearnav.scene.format import SceneSpec
from hearnav.scene.grid import Grid, build_grid
from hearnav.scene.loader import load_scene, parse_text
from hearnav.scene.model import Scene

__all__ = ["Grid", "Scene", "SceneSpec", "build_grid", "load_scene", "parse_text"]
