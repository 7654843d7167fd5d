"""Constants and seeding shared by every sound generator.

Every random number in this package comes from a :class:`numpy.random.Generator` built here from a
:class:`numpy.random.SeedSequence` whose entropy names the category, the pool, the voice and the take.
The two pools use different entropy words, so their seeds are disjoint by construction.
"""

from __future__ import annotations

import zlib

import numpy as np

from hearnav.errors import SoundError, unknown_name

#: The two pools of every category: ``seen`` for training, ``unseen`` for held-out evaluation.
POOLS: tuple[str, ...] = ("seen", "unseen")
#: Sample rate in Hz used when none is given.
DEFAULT_FS = 16000
#: Lowest sample rate accepted, in Hz.
MIN_FS = 8000
#: Arbitrary root of every seed of this package (changing it changes every generated sound).
ROOT_ENTROPY = 0x4EA2_50D5
_TAG_VOICE_TABLE = 0
_TAG_TAKE = 1


def category_key(name: str) -> int:
    """Stable integer key of a category name (CRC-32, unlike ``hash`` the same in every process)."""
    return zlib.crc32(name.encode("utf-8"))


def check_pool(pool: str) -> str:
    """Return ``pool`` if it is one of :data:`POOLS`, else raise :class:`SoundError`."""
    if pool not in POOLS:
        raise SoundError(unknown_name("sound pool", str(pool), POOLS))
    return pool


def pool_index(pool: str) -> int:
    """Index of a pool name in :data:`POOLS`; the caller has validated the name."""
    return POOLS.index(pool)


def take_rng(category: str, pool: str, voice: int, take: int) -> np.random.Generator:
    """Generator for one take of one voice; same arguments give the same stream.

    Parameters
    ----------
    category, pool : str
        Registered category name and pool name.
    voice, take : int
        Non-negative voice index and take number.
    """
    words = [ROOT_ENTROPY, category_key(category), _TAG_TAKE, pool_index(pool), int(voice), int(take)]
    return np.random.default_rng(np.random.SeedSequence(words))


def table_rng(category: str, pool: str) -> np.random.Generator:
    """Generator used once to build the fixed table of voices of one pool."""
    words = [ROOT_ENTROPY, category_key(category), _TAG_VOICE_TABLE, pool_index(pool), 0, 0]
    return np.random.default_rng(np.random.SeedSequence(words))


def voice_columns(category: str, pool: str, n: int,
                  ranges: dict[str, tuple[tuple[float, float], ...]]) -> list[dict[str, float]]:
    """Parameters of a pool's ``n`` voices: each key of ``ranges`` spread over its ranges (in key order).

    Returns
    -------
    One ``{key: value}`` dict per voice.
    """
    rng = table_rng(category, pool)
    columns = {key: spread(rng, n, r) for key, r in ranges.items()}
    return [{key: float(col[i]) for key, col in columns.items()} for i in range(n)]


def n_samples(duration_s: float, fs: int) -> int:
    """Number of samples of a sound of ``duration_s`` seconds at ``fs`` Hz: ``round(duration_s * fs)``."""
    return int(round(duration_s * fs))


def pool_columns(category: str, pool: str, sizes: dict[str, int],
                 ranges: dict[str, dict[str, tuple[tuple[float, float], ...]]],
                 keys: tuple[str, ...]) -> tuple[np.random.Generator, list[np.ndarray]]:
    """The voice-table generator of a (checked) pool (:func:`table_rng`) and, drawn from it in order, the pool's
    ``sizes[pool]`` values of each key spread over its ranges (:func:`spread`); the generator is returned for
    further draws."""
    check_pool(pool)
    rng = table_rng(category, pool)
    return rng, [spread(rng, sizes[pool], ranges[pool][key]) for key in keys]


def spread(rng: np.random.Generator, n: int, ranges: tuple[tuple[float, float], ...]) -> np.ndarray:
    """``n`` values spread over one or more disjoint ranges, alternating between them.

    Within a range the values are stratified (one per equal sub-interval, randomly placed), so a pool's
    voices cover its range evenly and never leave it.

    Parameters
    ----------
    rng : numpy.random.Generator
    n : int
        Number of values.
    ranges : tuple of (low, high)
        Closed ranges; value ``i`` falls in ``ranges[i % len(ranges)]``.

    Returns
    -------
    numpy.ndarray, shape (n,)
    """
    out = np.empty(n)
    n_ranges = len(ranges)
    for r, (low, high) in enumerate(ranges):
        idx = np.arange(r, n, n_ranges)
        if idx.size == 0:
            continue
        strata = (rng.permutation(idx.size) + rng.uniform(0.1, 0.9, idx.size)) / idx.size
        out[idx] = low + (high - low) * strata
    return out
