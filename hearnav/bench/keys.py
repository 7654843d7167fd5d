"""The result key: one digest of everything that changes a benchmark result.

A run folder's manifest (``DIR/run.json``), every row of ``DIR/episodes.jsonl``, the summary and the
oracle-bound cache file carry it, so results of another suite, scene version, acoustic setting, code version
or plug-in are never mixed with, or reused for, this run's. Its parts:

- ``suite``: :meth:`Suite.digest` (the suite, its environment options, the identities of its plug-ins);
- ``scenes``: per scene the suite draws from, a digest of the scene's validated content (see
  :func:`scene_digest`), so that editing a file under the same name (``HEARNAV_SCENES``) changes the key;
- ``acoustics``: :meth:`AcousticSettings.key` (the settings and the response-model version);
- ``code``: :func:`code_version`; ``source``: a digest of the hearnav package's Python files;
  ``dependencies``: the versions of the numerical libraries results depend on;
- ``plugin_code``: per plug-in the suite uses, a digest of the file that defines it.
"""

from __future__ import annotations

import functools
import hashlib
import inspect
import json
from collections.abc import Mapping
from importlib import metadata
from pathlib import Path
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    from hearnav.bench.suites import Suite
    from hearnav.scene.model import Scene

#: Libraries whose version can change a score (responses, FFTs, resampling).
DEPENDENCIES = ("numpy", "scipy", "pyroomacoustics")
KEY_LENGTH = 16


def code_version() -> str:
    """The hearnav version and response-model version that produced results."""
    from hearnav import __version__
    from hearnav.acoustics.settings import MODEL_VERSION

    return f"{__version__}+model{MODEL_VERSION}"


def _sha(text: str) -> str:
    return hashlib.sha256(text.encode("utf-8")).hexdigest()[:KEY_LENGTH]


@functools.lru_cache(maxsize=1)
def source_digest() -> str:
    """Digest of every Python file of the hearnav package (relative path and bytes), once per process."""
    root = Path(__file__).resolve().parents[1]
    h = hashlib.sha256()
    for path in sorted(root.rglob("*.py")):
        h.update(path.relative_to(root).as_posix().encode() + b"\0" + path.read_bytes() + b"\0")
    return h.hexdigest()[:KEY_LENGTH]


def dependency_versions() -> dict[str, str]:
    """Installed versions of :data:`DEPENDENCIES` ("missing" for one that is not installed)."""
    found = {}
    for name in DEPENDENCIES:
        try:
            found[name] = metadata.version(name)
        except metadata.PackageNotFoundError:
            found[name] = "missing"
    return found


def scene_digest(scene: Scene) -> str:
    """Digest of a scene's validated content and of the coefficients its materials resolve to.

    The validated fields are hashed, not the file's bytes: whitespace, comments, key order and the
    free-text ``description`` do not change results, so editing them keeps the key. Named materials are
    hashed through their resolved absorption and scattering, so a changed material table changes the key.

    Parameters
    ----------
    scene : Scene
        A validated scene.

    Returns
    -------
    str
        16 hex digits.
    """
    materials = [scene.walls, scene.floor, scene.ceiling, *(o.material for o in scene.obstacles)]
    payload = {"spec": scene.spec.model_dump(mode="json", exclude={"description"}),
               "materials": [[m.name, list(m.absorption), list(m.scattering)] for m in materials]}
    return _sha(json.dumps(payload, sort_keys=True))


def code_digest(obj: object) -> str:
    """Digest of the source file that defines a plug-in (a function, class or instance), or "unknown" when
    it has none (built in, or defined at an interactive prompt)."""
    for candidate in (obj, type(obj)):
        try:
            path = inspect.getsourcefile(candidate)
        except TypeError:
            continue
        if path and Path(path).is_file():
            return hashlib.sha256(Path(path).read_bytes()).hexdigest()[:KEY_LENGTH]
    return "unknown"


def key_parts(suite: Suite) -> dict[str, Any]:
    """Every input of a suite's results that the key covers (see the module docstring); loads its scenes."""
    from hearnav.env.worlds import scene_list
    from hearnav.scene.library import load_named

    cfg = suite.env_config()
    return {"suite": suite.digest(),
            "scenes": {name: scene_digest(load_named(name)) for name in scene_list(cfg.scenes, cfg.procedural_pool)},
            "acoustics": cfg.acoustics.key(),
            "code": code_version(),
            "source": source_digest(),
            "dependencies": dependency_versions(),
            "plugin_code": {name: code_digest(obj) for name, obj in suite.plugin_objects().items()}}


def result_key(parts: Mapping[str, Any]) -> str:
    """The key of :func:`key_parts`: 16 hex digits of their SHA-256."""
    return _sha(json.dumps(parts, sort_keys=True))


def changed_parts(stored: object, current: Mapping[str, Any]) -> list[str]:
    """Names of the parts that differ between a stored manifest's ``key_parts`` and ``current`` (a scene is
    named ``scene NAME``); empty if ``stored`` is not a mapping."""
    if not isinstance(stored, Mapping):
        return []
    changed = []
    for part, value in current.items():
        old = stored.get(part)
        if part == "scenes" and isinstance(old, Mapping) and isinstance(value, Mapping):
            changed += [f"scene {name}" for name in sorted(set(old) | set(value)) if old.get(name) != value.get(name)]
        elif old != value:
            changed.append(part)
    return changed
