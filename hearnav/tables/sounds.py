"""Dry sounds generated once: each clip is a part of the store (``sounds/`` beside ``tables/``), memory-mapped.

A clip is keyed by its category, pool, voice, take, length and sampling rate, and by the generator's identity:
the source of the built-in sound generators and the numpy and scipy versions. Only the built-in categories are
stored; a category registered by the user (its generator may read files the key cannot see) is generated each
time. The folder is bounded: after a clip is written, the least recently used clips are removed until the
folder holds at most :data:`SOUNDS_BYTES`.
"""

from __future__ import annotations

import contextlib
import functools
import os
from pathlib import Path

import numpy as np
import scipy

from hearnav import sounds
from hearnav.sounds import builtin, registry
from hearnav.tables.store import PartWriter, digest, open_part, remove, source_digest, tables_dir

#: Most bytes the clips of the store may take on disk (about 1200 clips of 27 s at 16 kHz).
SOUNDS_BYTES = 1 << 30


def sounds_dir() -> Path:
    """Folder of the stored clips, beside the tables."""
    return tables_dir().parent / "sounds"


@functools.cache
def _generator_identity() -> str:
    """Digest of what a built-in clip depends on besides its arguments: the sounds code and library versions."""
    return digest(source_digest(*sorted(Path(sounds.__file__).parent.glob("*.py"))), np.__version__,
                  scipy.__version__)


def _builtin(category: str) -> bool:
    generator = registry.get_category(category).generator
    return any(module.NAME == category and module.generate is generator for module in builtin.BUILTIN)


def dry_signal(category: str, pool: str, voice: int, take: int, n_samples: int, fs: int) -> np.ndarray:
    """(n_samples,) read-only float32 dry sound (:func:`hearnav.sounds.generate`), from the store when built in."""
    if not _builtin(category):
        return _generate(category, pool, voice, take, n_samples, fs)
    key = digest("clip", category, pool, voice, take, n_samples, fs, _generator_identity())
    folder = sounds_dir() / f"{category}-{key}"
    built = []

    def build(out: PartWriter) -> None:
        out.put("signal", _generate(category, pool, voice, take, n_samples, fs))
        built.append(True)

    signal = open_part(folder, key, ("signal",), build, keep=False)["signal"]
    if built:
        bound_folder(sounds_dir(), SOUNDS_BYTES)
    else:
        with contextlib.suppress(OSError):  # removed meanwhile, or a read-only cache: the clip is still good
            os.utime(folder)  # recently used: removed last
    return signal


def _generate(category: str, pool: str, voice: int, take: int, n_samples: int, fs: int) -> np.ndarray:
    x = sounds.generate(category, pool, voice, take, n_samples / fs, fs)
    x.flags.writeable = False
    return x


def bound_folder(root: Path, max_bytes: int) -> None:
    """Remove the least recently used part folders of ``root`` until they take at most ``max_bytes``."""
    entries = []
    for entry in os.scandir(root):
        if entry.is_dir() and not entry.name.startswith("."):
            try:
                size = sum(f.stat().st_size for f in os.scandir(entry.path))
                entries.append((entry.stat().st_mtime, size, Path(entry.path)))
            except FileNotFoundError:  # removed meanwhile by another process
                continue
    total = sum(size for _, size, _ in entries)
    for _, size, folder in sorted(entries):
        if total <= max_bytes:
            break
        remove(folder)
        total -= size
