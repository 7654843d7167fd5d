"""Dry sounds rendered once: the takes of each voice are a part of the store (``sounds/`` beside ``tables/``),
memory-mapped and shared by every process.

An episode plays an excerpt of a clip: one of :data:`TAKES` takes of a voice, started at a drawn offset and looped
(:func:`render_clip` makes the loop seamless). Clips are the episode's length rounded up to a multiple of
:data:`CLIP_STEP_S` (:func:`clip_length`), so the scenes' slightly different signal lengths share one set and no
sample repeats within an episode. So a pool holds a finite set of clips, rendered on first use of each voice (or
ahead, :func:`prerender`) and only mapped afterwards: a reset copies excerpts instead of synthesising sound.

A voice's part is keyed by its category, pool, voice, the number of takes, the clip length and sampling rate, the
generator's identity (the source of the sound generators, the numpy and scipy versions) and the source of
:func:`render_clip`, so a changed generator, version, length or rate never reuses a stale clip; opening checks
the part's manifest, headers and CRC-32 (:mod:`hearnav.tables.store`) and rebuilds it when they fail. Only the
built-in categories are stored: a category registered by the user (its generator may read files the key cannot
see; a WAV folder is already in memory) is rendered the same way at every reset, not stored. The folder is
bounded: after a part is written, the least recently opened parts are removed until it holds at most
:data:`SOUNDS_BYTES`.
"""

from __future__ import annotations

import contextlib
import functools
import operator
import os
from pathlib import Path

import numpy as np
import scipy

from hearnav import sounds
from hearnav.errors import SoundError, short_repr
from hearnav.sounds import builtin, registry
from hearnav.tables.store import PartWriter, digest, open_part, remove, source_digest, tables_dir

#: Takes rendered per voice; an episode draws one of them (``0 <= take < TAKES``).
TAKES = 4
#: Clips are a whole number of these seconds long.
CLIP_STEP_S = 8.0
#: Length of the equal-power cross-fade that closes a clip's loop, seconds.
LOOP_FADE_S = 0.05
#: Most bytes the clips of the store may take on disk (every voice of both built-in pools at 30 s is ~0.45 GB).
SOUNDS_BYTES = 2 << 30
# Voices this process has opened, by folder (memory maps of the page cache); the oldest dropped beyond the bound.
_MEMO_MAX = 256
_opened: dict[Path, np.ndarray] = {}


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


def render_clip(category: str, pool: str, voice: int, take: int, n_samples: int, fs: int) -> np.ndarray:
    """One take of a voice as a seamless loop of ``n_samples``.

    The sound (:func:`hearnav.sounds.generate`) is rendered :data:`LOOP_FADE_S` longer than the clip, and that
    extra tail is cross-faded into the clip's start with equal-power (sine/cosine) gains, so the loop's end runs
    on into its start without a step (common practice for looping audio).

    Returns
    -------
    (n_samples,) float32.
    """
    fade = min(int(round(LOOP_FADE_S * fs)), n_samples)
    x = sounds.generate(category, pool, voice, take, (n_samples + fade) / fs, fs)
    clip = x[:n_samples].copy()
    ramp = (np.arange(fade) + 0.5) / fade * (np.pi / 2)
    clip[:fade] = x[:fade] * np.sin(ramp) + x[n_samples:] * np.cos(ramp)
    return clip


def clip_length(n_samples: int, fs: int) -> int:
    """Samples of the clips that an ``n_samples`` signal is cut from: ``n_samples`` rounded up to a multiple of
    :data:`CLIP_STEP_S`."""
    step = int(round(CLIP_STEP_S * fs))
    return -(-n_samples // step) * step


def voice_clips(category: str, pool: str, voice: int, n_samples: int, fs: int, root: Path | None = None) -> np.ndarray:
    """(TAKES, n_samples) read-only float32 clips (:func:`render_clip`) of a built-in voice, from the store.

    ``root`` is the clips' folder (default :func:`sounds_dir`).
    """
    key = digest("clips", category, pool, voice, TAKES, n_samples, fs, _generator_identity(),
                 source_digest(render_clip))
    folder = (root or sounds_dir()) / f"{category}-{pool}-{voice}-{key}"
    if folder in _opened:
        return _opened[folder]
    built = []

    def build(out: PartWriter) -> None:
        clips = out.empty("clips", (TAKES, n_samples), np.float32)
        for take in range(TAKES):
            clips[take] = render_clip(category, pool, voice, take, n_samples, fs)
        built.append(True)

    clips = open_part(folder, key, ("clips",), build, keep=False)["clips"]
    if built:
        bound_folder(folder.parent, SOUNDS_BYTES)
    else:
        with contextlib.suppress(OSError):  # removed meanwhile, or a read-only cache: the clips are still good
            os.utime(folder)  # recently opened: removed last
    while len(_opened) >= _MEMO_MAX:
        del _opened[next(iter(_opened))]
    _opened[folder] = clips
    return clips


def dry_signal(category: str, pool: str, voice: int, take: int, offset: int, n_samples: int, fs: int) -> np.ndarray:
    """(n_samples,) float32 dry sound, a new array: take ``take`` of a voice (:func:`render_clip`,
    :func:`clip_length` long) looped from sample ``offset % length``; from the store when the category is built in."""
    take = _check_take(take)
    length = clip_length(n_samples, fs)
    if _builtin(category):
        clip = voice_clips(category, pool, voice, length, fs)[take]
    else:
        clip = render_clip(category, pool, voice, take, length, fs)
    start = operator.index(offset) % length
    end = start + n_samples
    return clip[start:end].copy() if end <= length else np.concatenate((clip[start:], clip[:end - length]))


def _check_take(take: object) -> int:
    if isinstance(take, (int, np.integer)) and not isinstance(take, bool) and 0 <= take < TAKES:
        return int(take)
    raise SoundError(f"take must be an integer in 0..{TAKES - 1} (the takes rendered per voice), got "
                     f"{short_repr(take)}; draw it with rng.integers({TAKES})")


def prerender(categories: tuple[str, ...] | list[str], pool: str, n_samples: int, fs: int,
              root: Path | None = None) -> int:
    """Render every voice of a pool of the built-in ``categories`` for ``n_samples`` signals into the store ahead
    of the first resets (user categories are not stored and are skipped); returns the number of voices."""
    voices = 0
    for category in categories:
        if _builtin(category):
            for voice in range(sounds.pool_size(category, pool)):
                voice_clips(category, pool, voice, clip_length(n_samples, fs), fs, root)
                voices += 1
    return voices


def forget_opened() -> None:
    """Drop this process's memo of opened voices (tests; a process never needs it)."""
    _opened.clear()


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
