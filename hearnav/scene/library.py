"""The library of bundled scenes: find, list and load floorplans by name, and write the format's JSON Schema.

Bundled scenes are the ``*.yaml`` files of the repository's ``scenes/`` folder (next to the ``hearnav``
package; found in an editable install). The environment variable ``HEARNAV_SCENES`` names further folders
(separated by ``os.pathsep``); a file there adds a scene, or replaces a bundled scene of the same name.
Names starting ``gen-`` are reserved for :mod:`hearnav.scene.generator` (``gen-<seed>``): a file named so is
never loaded by name, and checking or listing it reports the clash. A file that fails to load does not stop
the others from being listed (:func:`load_all`).
"""

from __future__ import annotations

import functools
import json
import os
from pathlib import Path

from hearnav import bundled
from hearnav.errors import ConfigError, SceneError, short_repr, unknown_name
from hearnav.scene import generator
from hearnav.scene.format import RESERVED_PREFIX, SPLITS, SceneSpec
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


def _all_files() -> dict[str, Path]:
    """Every scene file by file name, including those that take the reserved prefix (later folders win)."""
    found: dict[str, Path] = {}
    for folder in search_dirs():
        for path in sorted(folder.glob("*.yaml")):
            found[path.stem] = path
    return found


def _files_by_name() -> dict[str, Path]:
    """The scene files that can be loaded by name: all but those that take the reserved prefix."""
    return {name: path for name, path in _all_files().items() if not name.startswith(RESERVED_PREFIX)}


def scene_files() -> list[Path]:
    """Every scene file, sorted by name (later folders override earlier ones); ``hearnav scenes check`` checks
    these, so a file that takes the reserved prefix is among them and is reported."""
    return [path for _, path in sorted(_all_files().items())]


def load_all(split: str | None = None) -> tuple[list[Scene], list[str]]:
    """Every scene file's scene (only ``split``'s when given), and one line for each file that fails to load.

    A broken file (say a NaN coordinate in a ``HEARNAV_SCENES`` folder) must not hide the good scenes: its
    line names the file, its first problem and how many there are.
    """
    if split is not None:
        _check_split(split)
    scenes, failed = [], []
    for path in scene_files():
        try:
            scene = _load(path.stem, str(path))
        except SceneError as exc:
            first = exc.problems[0].removeprefix(f"{path}: ")
            more = f" (and {len(exc.problems) - 1} more)" if len(exc.problems) > 1 else ""
            failed.append(f"{path}: skipped: {first}{more}; run 'hearnav scenes check {path}' for every problem")
            continue
        if split is None or scene.split == split:
            scenes.append(scene)
    return scenes, failed


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
    return load_scene(source)  # which checks that the scene is named after its file


def load_named(name: str) -> Scene:
    """The scene called ``name``: a bundled or ``HEARNAV_SCENES`` file, or ``gen-<seed>`` from the generator.

    Raises
    ------
    SceneError
        For an unknown name (the message lists close or valid names) or an invalid file.
    """
    if name.startswith(RESERVED_PREFIX):
        return _load_generated(name)
    files = _files_by_name()
    if name not in files:
        raise SceneError(unknown_name("scene", name, files) + " (generated scenes are named gen-<seed>)")
    return _load(name, str(files[name]))


def _load_generated(name: str) -> Scene:
    """Scene ``gen-<seed>``, unless the name is malformed or a scene file takes it."""
    if generator.parse_name(name) is None:
        raise SceneError(f"scene name {short_repr(name)} takes the prefix {RESERVED_PREFIX!r} of generated scenes "
                         f"(expected {RESERVED_PREFIX}<seed> with a seed of 1 to {generator.MAX_SEED_DIGITS} digits, "
                         f"e.g. {RESERVED_PREFIX}17)")
    clash = _all_files().get(name)
    if clash is not None:
        raise SceneError(f"{clash}: name: file name {name!r} is reserved for generated scenes (expected a name not "
                         f"starting with {RESERVED_PREFIX!r}); rename the file and its scene")
    return _load(name, "generator")


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
