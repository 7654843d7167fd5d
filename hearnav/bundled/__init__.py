"""Where the bundled data is: scenes, environment configs, suites and the baseline policies.

In a wheel the repository's top-level ``scenes/``, ``configs/`` and ``baselines/`` folders are package data
of this package (``pyproject.toml`` maps them here) and are read through :mod:`importlib.resources`. In a
source checkout or an editable install they are read where they are, next to the ``hearnav`` package.
"""

from __future__ import annotations

from importlib.resources import files
from pathlib import Path

#: The bundled folders.
KINDS = ("scenes", "configs", "baselines")
_CHECKOUT = Path(__file__).resolve().parents[2]


def folder(kind: str) -> Path:
    """The folder of one kind of bundled data (one of :data:`KINDS`)."""
    if kind not in KINDS:
        raise ValueError(f"bundled data kind must be one of {KINDS} (got {kind!r})")
    packaged = Path(str(files(__name__) / kind))
    return packaged if packaged.is_dir() else _CHECKOUT / kind
