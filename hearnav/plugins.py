"""One registry for every kind of plug-in: separators, sound categories and policies.

Each kind has a :class:`Registry` with the same name rule and the same handling of duplicates, and an
entry-point group through which an installed package adds plug-ins of that kind:

| kind | registry | entry-point group | the entry point names |
|---|---|---|---|
| separator | :mod:`hearnav.separation.registry` | ``hearnav.separators`` | ``fn(mixture, ctx) -> estimate`` |
| sound category | :mod:`hearnav.sounds.registry` | ``hearnav.sounds`` | ``generator(voice, pool, take, duration_s, fs)`` (its ``n_voices`` attribute, a dict per pool, is read if present) |
| policy | :mod:`hearnav.bench.registry` | ``hearnav.policies`` | a policy class, factory or instance |

Entry points are loaded the first time a registry is asked for a name it does not hold, or for its names.
"""

from __future__ import annotations

import re
from collections.abc import Callable
from importlib.metadata import entry_points
from typing import Generic, TypeVar

from hearnav.errors import HearnavError, unknown_name

T = TypeVar("T")
#: Plug-in names: a lower-case letter, then lower-case letters, digits, ``_`` or ``-`` (command-line friendly).
NAME = re.compile(r"^[a-z][a-z0-9_\-]*$")


def identity(obj: object) -> str:
    """What identifies a plug-in's code in digests: its ``identity`` attribute if it has one (a plug-in whose
    output depends on data, such as a folder of sounds, sets it to a digest of that data), else its module and
    qualified name."""
    given = getattr(obj, "identity", None)
    if isinstance(given, str) and given:
        return given
    return f"{getattr(obj, '__module__', '?')}:{getattr(obj, '__qualname__', type(obj).__qualname__)}"


class Registry(Generic[T]):
    """Named plug-ins of one kind, in registration order."""

    def __init__(self, kind: str, group: str, error: type[HearnavError],
                 adopt: Callable[[str, object], T] | None = None):
        self.kind, self.group, self.error = kind, group, error
        self._adopt = adopt  # turns what an entry point names into a registered item
        self._items: dict[str, T] = {}
        self._entry_points_loaded = False

    def check_name(self, name: object) -> str:
        """``name`` if it is a valid plug-in name, else the kind's error."""
        if not isinstance(name, str) or not NAME.match(name):
            raise self.error(f"{self.kind} name must be a lower-case letter, then lower-case letters, digits, '_' "
                             f"or '-' (got {name!r}); choose another name")
        return name

    def add(self, name: str, item: T) -> T:
        """Register ``item`` as ``name``; registering the same object again is a no-op."""
        self.check_name(name)
        if name in self._items and self._items[name] is not item:
            raise self.error(f"{self.kind} {name!r} is already registered (expected a new name); choose another "
                             f"name or unregister the old one first")
        self._items[name] = item
        return item

    def remove(self, name: str) -> None:
        """Unregister ``name`` (unknown names raise the kind's error)."""
        self.get(name)
        del self._items[name]

    def get(self, name: str) -> T:
        """The item registered as ``name``; unknown names raise the kind's error listing close matches."""
        if isinstance(name, str) and name not in self._items:
            self.load_entry_points()
        if not isinstance(name, str) or name not in self._items:
            raise self.error(unknown_name(self.kind, str(name), self._items))
        return self._items[name]

    def __contains__(self, name: object) -> bool:
        """Whether ``name`` is registered so far (entry points are not loaded for this)."""
        return name in self._items

    def names(self) -> tuple[str, ...]:
        """Registered names, in registration order (entry points included)."""
        self.load_entry_points()
        return tuple(self._items)

    def load_entry_points(self) -> None:
        """Register every installed entry point of the group whose name is not taken (once per process)."""
        if self._entry_points_loaded:
            return
        self._entry_points_loaded = True
        for ep in entry_points(group=self.group):
            if ep.name in self._items:
                continue
            try:
                obj = ep.load()
            except Exception as exc:  # an installed package's fault: one line naming it
                raise self.error(f"entry point {ep.name!r} of group {self.group!r} ({ep.value}) failed to load "
                                 f"({type(exc).__name__}: {exc}); fix or uninstall that package") from None
            self.add(ep.name, self._adopt(ep.name, obj) if self._adopt else obj)
