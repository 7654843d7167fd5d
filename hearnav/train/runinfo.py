"""The small JSON files of a training folder: train.json (command, seed, versions, wall time) and
checkpoint.json (the last checkpoint), each written atomically."""

from __future__ import annotations

import hashlib
import json
import os
import platform
import sys
from importlib import metadata
from pathlib import Path

from hearnav.errors import ConfigError, shown_path
from hearnav.train.config import TrainConfig

#: Options that may change between a run and its --resume.
RESUMABLE = ("total_steps",)
_PACKAGES = ("hearnav", "numpy", "gymnasium", "torch", "stable_baselines3", "pydantic", "scipy")


def versions() -> dict[str, str | None]:
    """Python, the platform and the installed versions of the packages training depends on."""
    found: dict[str, str | None] = {"python": platform.python_version(), "platform": platform.platform()}
    for name in _PACKAGES:
        try:
            found[name] = metadata.version(name.replace("_", "-"))
        except metadata.PackageNotFoundError:
            found[name] = None
    return found


def config_digest(config: TrainConfig) -> str:
    """Hash of every option a resumed run must share with its start (all but :data:`RESUMABLE`)."""
    data = config.model_dump(mode="json", exclude=set(RESUMABLE))
    return hashlib.sha256(json.dumps(data, sort_keys=True).encode()).hexdigest()[:16]


def write_json(path: Path, data: dict) -> None:
    """Write ``data`` to ``path`` through a temporary file and a rename, so a crash leaves the old file whole."""
    tmp = path.with_name(f".{path.name}.{os.getpid()}.tmp")
    tmp.write_text(json.dumps(data, indent=2, sort_keys=True) + "\n", encoding="utf-8")
    os.replace(tmp, path)


def read_json(path: Path, what: str) -> dict:
    """A JSON object written by :func:`write_json`; ConfigError if it is missing or damaged."""
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise ConfigError(f"{shown_path(path)} not found (expected the {what} of a training run)") from None
    except (ValueError, UnicodeDecodeError) as exc:
        raise ConfigError(f"{shown_path(path)} is not valid JSON ({exc}); expected the {what} of a training "
                          f"run") from None
    if not isinstance(data, dict):
        raise ConfigError(f"{shown_path(path)}: expected a JSON object (the {what}), got {type(data).__name__}")
    return data


def command_line() -> list[str]:
    """The command that started this process."""
    name = Path(sys.argv[0]).name if sys.argv and sys.argv[0] else "hearnav"
    return ["hearnav" if name == "__main__.py" else name, *sys.argv[1:]]
