"""The registry of sound categories, and generation of sounds by category, pool, voice and take.

A category is a generator ``generator(voice, pool, take, duration_s, fs) -> np.ndarray`` (float64,
shape ``(round(duration_s * fs),)``) plus the number of voices in each pool. :func:`generate` checks its
arguments, calls the generator and scales the result to :data:`~hearnav.sounds.level.REFERENCE_RMS`.
"""

from __future__ import annotations

import math
import operator
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from hearnav.errors import SoundError
from hearnav.plugins import Registry, identity
from hearnav.sounds.common import DEFAULT_FS, MIN_FS, POOLS, check_pool, n_samples
from hearnav.sounds.level import normalise_level

Generator = Callable[[int, str, int, float, int], np.ndarray]
#: Takes drawn by :func:`draw` are integers in ``[0, MAX_TAKE)``; any non-negative take may be generated.
MAX_TAKE = 2**31


@dataclass(frozen=True)
class Category:
    """A registered sound category: its generator and the number of voices in each pool."""

    generator: Generator
    n_voices: dict[str, int]


def _as_int(value: object, what: str) -> int:
    if isinstance(value, bool):
        raise SoundError(f"{what} must be an integer, got {value!r}; pass an int")
    try:
        return operator.index(value)  # type: ignore[arg-type]
    except TypeError:
        raise SoundError(f"{what} must be an integer, got {value!r} ({type(value).__name__}); pass an int") from None


def _check_n_voices(name: str, n_voices: dict[str, int] | None) -> dict[str, int]:
    if n_voices is None:
        return {pool: 1 for pool in POOLS}
    if not isinstance(n_voices, dict) or set(n_voices) != set(POOLS):
        got = sorted(n_voices) if isinstance(n_voices, dict) else type(n_voices).__name__
        raise SoundError(
            f"n_voices of category {name!r} must be a dict with the keys {list(POOLS)}, got {got}; "
            "give the number of voices of each pool"
        )
    checked = {}
    for pool in POOLS:
        count = _as_int(n_voices[pool], f"n_voices[{pool!r}] of category {name!r}")
        if count < 1:
            raise SoundError(
                f"n_voices[{pool!r}] of category {name!r} must be at least 1, got {count}; give every pool a voice"
            )
        checked[pool] = count
    return checked


def _category(name: str, generator: object, n_voices: dict[str, int] | None) -> Category:
    if not callable(generator):
        raise SoundError(
            f"generator of category {name!r} must be callable, got {type(generator).__name__}; "
            "pass a function generator(voice, pool, take, duration_s, fs)"
        )
    return Category(generator, _check_n_voices(name, n_voices))


REGISTRY: Registry[Category] = Registry(
    "sound category", "hearnav.sounds", SoundError,
    lambda name, generator: _category(name, generator, getattr(generator, "n_voices", None)))


def register_category(name: str, generator: Generator, n_voices: dict[str, int] | None = None) -> None:
    """Add a sound category.

    Parameters
    ----------
    name : str
        New category name, a plug-in name (:data:`hearnav.plugins.NAME`).
    generator : callable
        ``generator(voice, pool, take, duration_s, fs)`` returning a float array of shape
        ``(round(duration_s * fs),)``; it must be deterministic in its arguments.
    n_voices : dict, optional
        Number of voices per pool, e.g. ``{"seen": 8, "unseen": 4}``; one voice per pool if omitted.

    Raises
    ------
    SoundError
        If the name is taken or malformed, the generator is not callable or ``n_voices`` is invalid.
    """
    REGISTRY.add(name, _category(name, generator, n_voices))  # a new object: refused under a taken name


def unregister_category(name: str) -> None:
    """Remove a registered category (unknown name: :class:`SoundError`)."""
    REGISTRY.remove(name)


def categories() -> tuple[str, ...]:
    """Registered category names, in registration order (the built-ins first)."""
    return REGISTRY.names()


def get_category(name: str) -> Category:
    """The registered category ``name`` (unknown name: :class:`SoundError` listing close matches)."""
    return REGISTRY.get(name)


def category_identity(name: str) -> str:
    """What a category's sounds depend on besides their arguments, for digests: its generator's identity
    (:func:`hearnav.plugins.identity`) and its voice counts."""
    entry = get_category(name)
    voices = ",".join(f"{pool}={entry.n_voices[pool]}" for pool in sorted(entry.n_voices))
    return f"{identity(entry.generator)} [{voices}]"


def pool_size(category: str, pool: str) -> int:
    """Number of distinct voices in one pool of one category."""
    return get_category(category).n_voices[check_pool(pool)]


def check_duration(duration_s: float, fs: int) -> int:
    """Validate a duration in seconds and return its length in samples (at least 1)."""
    try:
        duration = float(duration_s)
    except (TypeError, ValueError):
        raise SoundError(f"duration must be a number of seconds, got {duration_s!r}; pass e.g. 4.0") from None
    if not math.isfinite(duration) or duration <= 0.0:
        raise SoundError(f"duration must be a finite number of seconds > 0, got {duration_s!r}; pass e.g. 4.0")
    n = n_samples(duration, fs)
    if n < 1:
        raise SoundError(
            f"duration {duration} s is shorter than one sample at {fs} Hz: expected at least {1 / fs:.2g} s; "
            "ask for a longer sound"
        )
    return n


def check_fs(fs: int) -> int:
    """Validate a sample rate in Hz (an integral float such as 16000.0 is accepted)."""
    if isinstance(fs, float) and fs.is_integer():
        fs = int(fs)
    fs = _as_int(fs, "sample rate fs")
    if fs < MIN_FS:
        raise SoundError(f"sample rate must be at least {MIN_FS} Hz, got {fs} Hz; use e.g. fs={DEFAULT_FS}")
    return fs


def generate(
    category: str, pool: str, voice: int, take: int, duration_s: float, fs: int = DEFAULT_FS
) -> np.ndarray:
    """One dry sound, scaled to the reference active level.

    Parameters
    ----------
    category : str
        A registered category (see :func:`categories`).
    pool : str
        ``"seen"`` or ``"unseen"``.
    voice : int
        ``0 <= voice < pool_size(category, pool)``.
    take : int
        Any non-negative integer; each take is a different utterance, melody, pattern or noise.
    duration_s : float
        Length in seconds, > 0.
    fs : int
        Sample rate in Hz, at least 8000.

    Returns
    -------
    numpy.ndarray, shape (round(duration_s * fs),), float32
        The same arguments always give the same samples.
    """
    entry = get_category(category)
    check_pool(pool)
    fs = check_fs(fs)
    n = check_duration(duration_s, fs)
    voice = _as_int(voice, "voice")
    count = entry.n_voices[pool]
    if not 0 <= voice < count:
        raise SoundError(
            f"voice of {category}/{pool} must be in 0..{count - 1}, got {voice}; "
            f"pool_size({category!r}, {pool!r}) is {count}"
        )
    take = _as_int(take, "take")
    if take < 0:
        raise SoundError(f"take must be a non-negative integer, got {take}; pass e.g. take=0")
    y = np.asarray(entry.generator(voice, pool, take, float(duration_s), fs), dtype=np.float64)
    if y.shape != (n,):
        raise SoundError(
            f"generator of category {category!r} returned shape {y.shape}, expected ({n},) for "
            f"{duration_s} s at {fs} Hz; make it return round(duration_s * fs) samples"
        )
    if not np.all(np.isfinite(y)):
        raise SoundError(
            f"generator of category {category!r} returned NaN or infinite samples: expected finite samples; "
            "fix the generator"
        )
    try:
        return normalise_level(y, fs)
    except SoundError as err:
        raise SoundError(f"{category}/{pool} voice {voice} take {take}: {err}") from None


def draw(
    category: str, pool: str, rng: np.random.Generator, duration_s: float, fs: int = DEFAULT_FS
) -> tuple[np.ndarray, dict]:
    """A sound of a voice picked uniformly from the pool and a take picked from ``rng``.

    Returns
    -------
    signal : numpy.ndarray, shape (round(duration_s * fs),), float32
    info : dict
        ``{"category", "pool", "voice", "take"}``; ``generate(**info, ...)`` reproduces the signal.
    """
    if not isinstance(rng, np.random.Generator):
        raise SoundError(
            f"rng must be a numpy.random.Generator, got {type(rng).__name__}; "
            "pass np.random.default_rng(np.random.SeedSequence(seed))"
        )
    count = pool_size(category, pool)
    voice = int(rng.integers(count))
    take = int(rng.integers(MAX_TAKE))
    signal = generate(category, pool, voice, take, duration_s, fs)
    return signal, {"category": category, "pool": pool, "voice": voice, "take": take}
