"""Dry (anechoic) sound sources: seeded generators of sound categories and the user's own sound files.

Every category has a ``seen`` and an ``unseen`` pool of voices; the unseen pool differs in its
parameter ranges and its seeds, for held-out evaluation. Built-in categories: ``talker``, ``music``,
``alarm``, ``hum`` and ``noise``. Every sound is float32 mono at the reference active level
:data:`REFERENCE_RMS`.
"""

from __future__ import annotations

from hearnav.sounds.builtin import register_builtin
from hearnav.sounds.common import DEFAULT_FS, POOLS
from hearnav.sounds.level import REFERENCE_RMS, active_rms, normalise_level
from hearnav.sounds.registry import (
    categories,
    draw,
    generate,
    pool_size,
    register_category,
    unregister_category,
)
from hearnav.sounds.wavs import WavFolder, register_wav_folder

register_builtin()

__all__ = [
    "CATEGORIES",
    "DEFAULT_FS",
    "POOLS",
    "REFERENCE_RMS",
    "WavFolder",
    "active_rms",
    "categories",
    "draw",
    "generate",
    "normalise_level",
    "pool_size",
    "register_category",
    "register_wav_folder",
    "unregister_category",
]


def __getattr__(name: str) -> tuple[str, ...]:
    # CATEGORIES is computed on access so that it includes categories registered later.
    if name == "CATEGORIES":
        return categories()
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
