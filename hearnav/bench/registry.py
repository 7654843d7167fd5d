"""Policy registration: a decorator, the ``hearnav.policies`` entry-point group, and command-line references.

A command-line reference is a registered name, ``module:attr``, or ``path/to/file.py:attr``. The bundled
baselines are the files in the repository's ``baselines/`` folder, loaded like user files.
"""

from __future__ import annotations

import importlib
import importlib.util
import sys
from collections.abc import Callable
from importlib.metadata import entry_points
from pathlib import Path
from typing import Any

from hearnav.bench.policy import as_policy
from hearnav.errors import PolicyError, unknown_name

ENTRY_POINT_GROUP = "hearnav.policies"
BASELINES_DIR = Path(__file__).resolve().parents[2] / "baselines"
_REGISTRY: dict[str, Any] = {}
_loaded = False


def register_policy(name: str, obj: Any = None) -> Callable:
    """Register a policy class, factory or instance under ``name``; usable as a decorator."""
    def add(target: Any) -> Any:
        if not isinstance(name, str) or not name:
            raise PolicyError(f"policy name must be a non-empty string (got {name!r})")
        if name in _REGISTRY and _REGISTRY[name] is not target:
            raise PolicyError(f"policy {name!r} is already registered; pick another name")
        _REGISTRY[name] = target
        return target

    return add if obj is None else add(obj)


def _load_file(path: Path) -> Any:
    module_name = f"hearnav_user_{abs(hash(str(path.resolve())))}"
    if module_name in sys.modules:
        return sys.modules[module_name]
    spec = importlib.util.spec_from_file_location(module_name, path)
    if spec is None or spec.loader is None:
        raise PolicyError(f"{path}: not a Python file (expected path/to/file.py:attr)")
    module = importlib.util.module_from_spec(spec)
    sys.modules[module_name] = module
    try:
        spec.loader.exec_module(module)
    except Exception as exc:  # a user's file: report it in one line
        del sys.modules[module_name]
        raise PolicyError(f"{path}: importing the policy file failed ({type(exc).__name__}: {exc})") from None
    return module


def load_builtins() -> None:
    """Register the bundled baselines and every installed entry point (once)."""
    global _loaded
    if _loaded:
        return
    _loaded = True
    if BASELINES_DIR.is_dir():
        for path in sorted(BASELINES_DIR.glob("*.py")):
            if not path.name.startswith("_"):
                _load_file(path)
    for ep in entry_points(group=ENTRY_POINT_GROUP):
        if ep.name not in _REGISTRY:
            try:
                _REGISTRY[ep.name] = ep.load()
            except Exception as exc:
                raise PolicyError(f"entry point {ep.name!r} ({ep.value}) failed to load "
                                  f"({type(exc).__name__}: {exc})") from None


def policy_names() -> list[str]:
    """Registered policy names, sorted."""
    load_builtins()
    return sorted(_REGISTRY)


def resolve(reference: str) -> tuple[str, Any]:
    """(display name, policy object) for a registered name, ``module:attr`` or ``file.py:attr``."""
    load_builtins()
    if reference in _REGISTRY:
        return reference, as_policy(_REGISTRY[reference])
    if ":" in reference:
        where, attr = reference.rsplit(":", 1)
        if where.endswith(".py"):
            path = Path(where)
            if not path.is_file():
                raise PolicyError(f"policy file {where!r} not found (expected path/to/file.py:attr)")
            module = _load_file(path)
        else:
            try:
                module = importlib.import_module(where)
            except ImportError as exc:
                raise PolicyError(f"cannot import module {where!r} for policy {reference!r} ({exc})") from None
        if not hasattr(module, attr):
            raise PolicyError(f"{where} has no attribute {attr!r} (expected module:attr naming a policy)")
        return reference, as_policy(getattr(module, attr))
    raise PolicyError(unknown_name("policy", reference, _REGISTRY) +
                      "; or give module:attr or path/to/file.py:attr")
