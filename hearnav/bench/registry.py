"""Policy registration: a decorator, the ``hearnav.policies`` entry-point group, and command-line references.

A command-line reference is a registered name, ``module:attr``, or ``path/to/file.py:attr``. The bundled
baselines are the files of the package data's ``baselines/`` folder (:mod:`hearnav.bundled`), loaded like
user files.
"""

from __future__ import annotations

import importlib
import importlib.util
import sys
from collections.abc import Callable
from pathlib import Path
from typing import Any

from hearnav import bundled
from hearnav.bench.policy import as_policy
from hearnav.errors import PolicyError, exception_line
from hearnav.plugins import Registry

POLICIES: Registry[Any] = Registry("policy", "hearnav.policies", PolicyError)
_loaded = False
_MISSING = object()


def register_policy(name: str, obj: Any = None) -> Callable:
    """Register a policy class, factory or instance under ``name`` (a plug-in name,
    :data:`hearnav.plugins.NAME`); usable as a decorator."""
    def add(target: Any) -> Any:
        return POLICIES.add(name, target)

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
        raise PolicyError(f"{path}: importing the policy file failed ({exception_line(exc)})") from None
    return module


def load_builtins() -> None:
    """Register the bundled baselines (once); installed entry points load with the registry's names."""
    global _loaded
    if _loaded:
        return
    _loaded = True
    for path in sorted(bundled.folder("baselines").glob("*.py")):
        if not path.name.startswith("_"):
            _load_file(path)
    import hearnav.train.agents  # noqa: F401  (registers the shipped numpy agents; no torch)


def policy_names() -> list[str]:
    """Registered policy names, sorted."""
    load_builtins()
    return sorted(POLICIES.names())


def _registered_in(module: Any, name: str) -> Any:
    """The policy ``module`` registered as ``name`` (with :func:`register_policy`), else _MISSING."""
    if name not in POLICIES:
        return _MISSING
    item = POLICIES.get(name)
    return item if getattr(item, "__module__", None) == module.__name__ else _MISSING


def load_policy(reference: str) -> tuple[str, Any]:
    """(display name, policy object) for a registered name, ``module:attr``, ``file.py:attr`` or a saved SB3
    model ``ppo:path/to/model.zip`` (also ``a2c:``, ``dqn:``; loads through cloudpickle) or an exported network
    ``npz:path/to/agent.npz`` (:mod:`hearnav.train.numpy_policy`); ``attr`` may
    also be a name the module or file registers with :func:`register_policy` (``my_policy.py:turn-to-target``)."""
    load_builtins()
    from hearnav.train.sb3 import PREFIXES, model_policy  # imports torch only when a model is loaded

    if reference.partition(":")[0] in PREFIXES:  # ppo:DIR/best.zip (a saved SB3 model) or npz:agent.npz
        return reference, model_policy(reference)
    if ":" not in reference:
        try:
            return reference, as_policy(POLICIES.get(reference), reference)
        except PolicyError as exc:
            if reference not in POLICIES:
                raise PolicyError(f"{exc}; or give module:attr or path/to/file.py:attr (a name registered in "
                                  f"your file is path/to/file.py:name)") from None
            raise
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
    found = getattr(module, attr, _MISSING) if attr.isidentifier() else _MISSING
    if found is _MISSING:
        found = _registered_in(module, attr)
    if found is _MISSING:
        raise PolicyError(f"{where} has no attribute {attr!r} (expected module:attr naming a policy, or a name "
                          f"it registers)")
    return reference, as_policy(found, reference)
