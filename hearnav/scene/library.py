"""The library of bundled scenes: find, list and load floorplans by name, and write the format's JSON Schema.

Bundled scenes are the ``*.yaml`` files of the repository's ``scenes/`` folder (next to the ``hearnav``
package; found in an editable install). The environment variable ``HEARNAV_SCENES`` names further folders
(separated by ``os.pathsep``); a file there adds a scene, or replaces a bundled scene of the same name.
Names ``gen-<seed>`` are reserved for :mod:`hearnav.scene.generator`.
"""

from __future__ import annotations

import functools
import json
import os
from pathlib import Path

from hearnav import bundled
from hearnav.errors import ConfigError, SceneError, unknown_name
from hearnav.scene import generator
from hearnav.scene.format import SPLITS, SceneSpec
from hearnav.scene.loader import load_scene
from hearnav.scene.model import Scene

#: The scene used when none is named: a furnished two-room flat of 58 m^2 (train split).
DEFAULT_SCENE = "maple-flat"
#: Environment variable with extra scene folders.
ENV_VAR = "HEARNAV_SCENES"
_SCHEMA_DIALECT = "https://json-schema.org/draft/2020-12/schema"


def scenes_dir() -> Path:
    """The bundled scenes folder (:func:`hearnav.bundled.folder`)."""
    return bundled.folder("scenes")


def search_dirs() -> list[Path]:
    """Folders searched for scene files, lowest precedence first: bundled, then ``HEARNAV_SCENES``."""
    dirs = [scenes_dir()]
    for entry in os.environ.get(ENV_VAR, "").split(os.pathsep):
        if not entry.strip():
            continue
        path = Path(entry).expanduser()
        if not path.is_dir():
            raise ConfigError(f"{ENV_VAR}: {entry!r} is not a folder (expected folders of scene YAML files, "
                              f"separated by {os.pathsep!r})")
        dirs.append(path)
    return dirs


def _files_by_name() -> dict[str, Path]:
    found: dict[str, Path] = {}
    for folder in search_dirs():
        for path in sorted(folder.glob("*.yaml")):
            if generator.parse_name(path.stem) is not None:
                raise SceneError(f"{path}: (top level): file name {path.stem!r} is reserved for generated scenes "
                                 f"(expected a name not of the form gen-<seed>); rename the file")
            found[path.stem] = path
    return found


def scene_files() -> list[Path]:
    """The scene file of every named scene, sorted by name (later folders override earlier ones)."""
    return [path for _, path in sorted(_files_by_name().items())]


def _check_split(split: str) -> None:
    if split not in SPLITS:
        raise ConfigError(f"unknown split {split!r} (expected one of {', '.join(SPLITS)})")


def scene_names(split: str | None = None) -> list[str]:
    """Names of the file-based scenes, sorted; only those of ``split`` when it is given."""
    names = sorted(_files_by_name())
    if split is None:
        return names
    _check_split(split)
    return [name for name in names if load_named(name).split == split]


@functools.lru_cache(maxsize=None)
def _load(name: str, source: str) -> Scene:
    """Load scene ``name`` from ``source`` (a file path, or "generator")."""
    if source == "generator":
        return generator.generate_scene(generator.parse_name(name))
    scene = load_scene(source)
    if scene.name != name:
        raise SceneError(f"{source}: name: scene name does not match the file name (expected {name!r}, "
                         f"got {scene.name!r}); rename the file or the scene")
    return scene


def load_named(name: str) -> Scene:
    """The scene called ``name``: a bundled or ``HEARNAV_SCENES`` file, or ``gen-<seed>`` from the generator.

    Raises
    ------
    SceneError
        For an unknown name (the message lists close or valid names) or an invalid file.
    """
    if generator.parse_name(name) is not None:
        return _load(name, "generator")
    files = _files_by_name()
    if name not in files:
        raise SceneError(unknown_name("scene", name, files) + " (generated scenes are named gen-<seed>)")
    return _load(name, str(files[name]))


def clear_cache() -> None:
    """Forget loaded scenes (after editing files or changing ``HEARNAV_SCENES``)."""
    _load.cache_clear()


def schema_text() -> str:
    """The JSON Schema of the scene format, as written to ``scenes/scene.schema.json``."""
    schema = {"$schema": _SCHEMA_DIALECT, **SceneSpec.model_json_schema()}
    return json.dumps(schema, indent=2, ensure_ascii=False) + "\n"


def write_schema(path: str | Path | None = None) -> Path:
    """Write the JSON Schema (default: ``scenes/scene.schema.json``); returns the path written."""
    path = Path(path) if path is not None else scenes_dir() / "scene.schema.json"
    path.write_text(schema_text(), encoding="utf-8")
    return path


if __name__ == "__main__":
    print(write_schema())
