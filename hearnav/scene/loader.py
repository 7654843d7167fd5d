"""Read scene files: YAML text -> validated :class:`Scene`, or a :class:`SceneError` with every problem."""

from __future__ import annotations

from pathlib import Path

import yaml
from pydantic import ValidationError

from hearnav.errors import SceneError
from hearnav.scene.checks import check_scene
from hearnav.scene.errors_report import problems_from
from hearnav.scene.format import SceneSpec
from hearnav.scene.model import Scene
from hearnav.yamlfile import YamlRefused, load_yaml_text


def parse_text(text: str, source: str, stem: str | None = None) -> Scene:
    """Validate scene YAML text; ``source`` names it in messages, ``stem`` is the file name it must match."""
    if not text.strip():
        raise SceneError(f"{source}: (top level): file is empty (expected a YAML mapping of scene fields, got nothing)")
    try:
        data = load_yaml_text(text)
    except YamlRefused as exc:
        raise SceneError(f"{source}: (top level): refused: {exc}") from None
    except yaml.YAMLError as exc:
        mark = getattr(exc, "problem_mark", None)
        where = f"line {mark.line + 1}, column {mark.column + 1}" if mark else "unknown place"
        what = getattr(exc, "problem", None) or str(exc).splitlines()[0]
        raise SceneError(f"{source}: (top level): not valid YAML (expected YAML text, got a syntax error at "
                         f"{where}: {what})") from None
    if not isinstance(data, dict):
        raise SceneError(f"{source}: (top level): wrong type (expected a YAML mapping of scene fields, "
                         f"got {type(data).__name__})")
    return from_dict(data, source, text, stem)


def from_dict(data: dict, source: str, text: str | None = None, stem: str | None = None) -> Scene:
    """Validate a scene given as a dictionary (the parsed YAML); a file's scene is also checked against ``stem``."""
    try:
        spec = SceneSpec.model_validate(data)
    except ValidationError as exc:
        raise SceneError([f"{source}: {p}" for p in problems_from(exc)]) from None
    canonical = text if text is not None else yaml.safe_dump(data, sort_keys=True)
    scene, problems = check_scene(spec, canonical, stem)
    if problems:
        raise SceneError([f"{source}: {p}" for p in problems])
    return scene


def load_scene(path: str | Path) -> Scene:
    """Load and validate one scene file; its scene must be named after it (``kitchen.yaml``: ``kitchen``)."""
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError) as exc:
        raise SceneError(f"{path}: (top level): cannot read the file (expected a readable UTF-8 YAML file, "
                         f"got {type(exc).__name__}: {exc})") from None
    return parse_text(text, str(path), path.stem)


def dump_spec(spec: SceneSpec) -> str:
    """YAML text of a scene spec, as the generator writes it."""
    return yaml.safe_dump(spec.model_dump(mode="json", exclude_none=True), sort_keys=False)
