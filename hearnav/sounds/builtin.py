"""Registration of the built-in categories, in the order of :data:`BUILTIN`."""

from __future__ import annotations

from hearnav.sounds import alarm, hum, music, noise, talker
from hearnav.sounds.common import POOLS
from hearnav.sounds.registry import categories, register_category

#: Built-in category modules; each has ``NAME``, ``voices(pool)`` and ``generate(...)``.
BUILTIN = (talker, music, alarm, hum, noise)
#: Their names, in the same order.
BUILTIN_NAMES: tuple[str, ...] = tuple(module.NAME for module in BUILTIN)


def register_builtin() -> None:
    """Register every built-in category that is not registered yet."""
    for module in BUILTIN:
        if module.NAME not in categories():
            register_category(module.NAME, module.generate, {pool: len(module.voices(pool)) for pool in POOLS})
