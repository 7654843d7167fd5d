"""Shared fixtures for the scene tests: a small valid scene as a dict, and helpers that mutate copies of it."""

from __future__ import annotations

import copy
import re
import sys
from collections.abc import Callable
from pathlib import Path
from typing import Any

import pytest
import yaml

try:
    import hearnav  # noqa: F401
except ImportError:  # neither installed nor on pytest's pythonpath: run from the working tree
    sys.path.insert(0, str(Path(__file__).resolve().parents[2]))


# A 6 x 4 m room (ceiling 2.5 m) with a table, a full-height partition at x = 4 from the south wall to
# y = 2.5 (leaving a 1.5 m doorway to the north wall), a start region in the west part and four spots,
# two of them behind the partition. Every spot has at least 0.3 m of clearance.
BASE_SCENE: dict[str, Any] = {
    "name": "test-room",
    "description": "A 6 x 4 m room with a table and a partition with a doorway.",
    "split": "train",
    "ceiling_height": 2.5,
    "outline": [[0, 0], [6, 0], [6, 4], [0, 4], [0, 0]],
    "materials": {
        "walls": "plasterboard",
        "floor": {"name": "linoleum_on_concrete", "scattering": 0.1},
        "ceiling": "hard_surface",
    },
    "obstacles": [
        {"name": "table", "box": [1.0, 1.0, 2.0, 1.8], "height": 0.75, "material": "wood_16mm"},
        {
            "name": "divider",
            "partition": {"start": [4.0, 0.0], "end": [4.0, 2.5], "thickness": 0.1},
            "height": "ceiling",
            "material": "plasterboard",
        },
    ],
    "grid": {"spacing": 0.5, "ear_height": 1.5, "start_region": {"box": [0.5, 2.5, 3.5, 3.5]}},
    "spots": [
        {"name": "lamp", "position": [0.5, 3.5], "height": 1.2},
        {"name": "desk", "position": [3.0, 0.6], "height": 1.0},
        {"name": "shelf", "position": [5.0, 1.0], "height": 1.5},
        {"name": "window", "position": [5.5, 3.5], "height": 1.8, "categories": ["talker"]},
    ],
}

# One problem line: "source: field.path: what is wrong ...".
LINE_FORM = re.compile(
    r"^(?P<source>[^:]+): (?P<path>\(top level\)|[a-z_]+(\[\d+\])?(\.[a-z_]+(\[\d+\])?)*): (?P<what>.+)$"
)


def _set(data: Any, dotted: str, value: Any) -> None:
    keys = [int(k) if k.isdigit() else k for k in dotted.split(".")]
    for key in keys[:-1]:
        data = data[key]
    data[keys[-1]] = value


def _drop(data: Any, dotted: str) -> None:
    keys = [int(k) if k.isdigit() else k for k in dotted.split(".")]
    for key in keys[:-1]:
        data = data[key]
    del data[keys[-1]]


def edited(changes: dict[str, Any] | None = None, *, drop: tuple[str, ...] | list[str] = (),
           fn: Callable[[dict], None] | None = None) -> dict:
    """A deep copy of BASE_SCENE with ``changes`` applied.

    ``changes`` maps dotted paths (list indices as numbers, e.g. ``obstacles.0.height``) to new values;
    ``drop`` lists dotted paths to remove; ``fn`` may edit the copy further in place.
    """
    data = copy.deepcopy(BASE_SCENE)
    for dotted, value in (changes or {}).items():
        _set(data, dotted, value)
    for dotted in drop:
        _drop(data, dotted)
    if fn is not None:
        fn(data)
    return data


@pytest.fixture
def base_scene() -> dict:
    """A fresh deep copy of the valid base scene."""
    return copy.deepcopy(BASE_SCENE)


@pytest.fixture
def base_yaml() -> str:
    """The valid base scene as YAML text."""
    return yaml.safe_dump(BASE_SCENE, sort_keys=False)


@pytest.fixture
def scene_edit() -> Callable[..., dict]:
    """The :func:`edited` helper: ``scene_edit({"grid.spacing": 3}, drop=["ceiling_height"])``."""
    return edited


@pytest.fixture
def line_form() -> re.Pattern:
    """The form of one problem line, with groups ``source``, ``path`` and ``what``."""
    return LINE_FORM
