"""Exception classes for problems in user input.

Every message states what was expected, what was found, and (where it helps) how to fix it,
so that the command line can print it on one line without a traceback.
"""

from __future__ import annotations

import difflib
import os
import reprlib
from collections.abc import Iterable


class HearnavError(Exception):
    """Base class of every error hearnav raises for bad input or state."""


class SceneError(HearnavError):
    """A scene file or scene description is invalid."""

    def __init__(self, problems: list[str] | str):
        self.problems = [problems] if isinstance(problems, str) else list(problems)
        super().__init__("; ".join(self.problems))


class ConfigError(HearnavError):
    """A configuration value or file is invalid."""


class SoundError(HearnavError):
    """A sound category, pool or audio file is invalid."""


class CacheError(HearnavError):
    """A response cache file is missing, corrupt or does not match its key."""


class PolicyError(HearnavError):
    """A policy cannot be found, loaded or used."""


class SeparatorError(HearnavError):
    """A separator cannot be found or used."""


def did_you_mean(name: str, valid: Iterable[str]) -> str:
    """Suffix for an unknown name: the close matches, else the valid names."""
    valid = sorted(valid)
    close = difflib.get_close_matches(name, valid, n=3, cutoff=0.6)
    if close:
        return f"did you mean {', '.join(repr(c) for c in close)}?"
    return f"valid names: {', '.join(valid)}"


_REPR = reprlib.Repr()
for _name, _value in dict(maxlevel=3, maxtuple=4, maxlist=4, maxarray=4, maxdict=4, maxset=4, maxfrozenset=4,
                          maxdeque=4, maxstring=48, maxlong=40, maxother=48).items():
    setattr(_REPR, _name, _value)


def short_repr(value: object, width: int = 60) -> str:
    """A repr of at most ``width`` characters that never renders more than a few items of any container, so
    a huge or deeply shared value costs no more than a small one."""
    text = _REPR.repr(value)
    return text if len(text) <= width else text[: width - 3] + "..."


#: Paths up to this many characters are shown whole (by shown_path); longer ones through short_repr.
SHOWN_PATH = 160


def shown_path(path: object) -> str:
    """A path (or a reference naming a file) quoted for a message, whole unless it is longer than
    :data:`SHOWN_PATH`; anything else, such as a file descriptor, through :func:`short_repr`."""
    if not isinstance(path, (str, bytes, os.PathLike)):
        return short_repr(path)
    text = os.fsdecode(path)
    return repr(text) if len(text) <= SHOWN_PATH else short_repr(text)


def exception_line(exc: BaseException, width: int = 200) -> str:
    """``Type: first line of the message`` (``Type`` alone when there is none), the message cut to ``width``
    characters: how a foreign exception (a plug-in's, a library's, a damaged file's) is named on hearnav's
    one-line messages. An exception whose ``str()`` itself raises is still named."""
    try:
        text = str(exc)
    except BaseException as inner:  # a plug-in's exception may fail even to become text
        text = f"(its message could not be shown: str() raised {type(inner).__name__})"
    lines = text.strip().splitlines()
    first = " ".join(lines[0].split()) if lines else ""
    if len(first) > width:
        first = first[: width - 3] + "..."
    return f"{type(exc).__name__}: {first}" if first else type(exc).__name__


def unknown_name(kind: str, name: str, valid: Iterable[str]) -> str:
    """Message for an unknown registered name."""
    return f"unknown {kind} {name!r} (expected one of the registered names); {did_you_mean(name, valid)}"
