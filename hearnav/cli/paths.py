"""Checks of command-line output paths, shared by every subcommand that writes: one line per problem."""

from __future__ import annotations

import os
import tempfile
from collections.abc import Callable
from pathlib import Path

from hearnav.errors import ConfigError, shown_path


def _existing_ancestor(path: Path) -> Path:
    """The nearest of ``path`` and its parents that exists (the current folder for a relative path)."""
    for candidate in (path, *path.parents):
        if os.path.lexists(candidate):
            return candidate
    return Path(".")


def _refuser(option: str, path: Path, expected: str) -> Callable[[str], ConfigError]:
    def refuse(found: str) -> ConfigError:
        return ConfigError(f"{option} {shown_path(path)}: expected {expected}, found {found}; give a new or existing "
                           f"folder you can write to")

    return refuse


def _probe(folder: Path, refuse: Callable[[str], ConfigError]) -> None:
    """Create the missing folders of ``folder`` and a file in it, then remove what was made: the OS has the last
    word on whether the folder can be written (permission bits say nothing for root, or on /proc)."""
    made: list[Path] = []
    failed = folder
    try:
        for parent in reversed([folder, *folder.parents]):
            if not os.path.lexists(parent):
                failed = parent
                os.mkdir(parent)
                made.append(parent)
        failed = folder
        fd, probe = tempfile.mkstemp(prefix=".hearnav-probe-", dir=folder)
        os.close(fd)
        os.unlink(probe)
    except OSError as exc:
        raise refuse(f"that {shown_path(failed)} cannot be written ({exc.strerror or type(exc).__name__})") from None
    finally:
        for parent in reversed(made):
            try:
                os.rmdir(parent)
            except OSError:  # common practice: a probe's clean-up never fails the command
                pass


def _check(path: Path, folder: Path, refuse: Callable[[str], ConfigError]) -> None:
    anchor = _existing_ancestor(folder)
    if not anchor.is_dir():
        kind = "broken symbolic link" if anchor.is_symlink() and not anchor.exists() else "file"
        raise refuse(f"an existing {kind}" if anchor == path else f"a {kind} on its way, {shown_path(anchor)}")
    _probe(folder, refuse)


def output_folder(path: str | os.PathLike, option: str = "--out") -> Path:
    """``path`` if it is an existing writable folder or one that can be created; raises ConfigError saying what
    is in the way (a file, a file among its parents, no permission, a read-only or virtual file system).

    Nothing is left behind: folders made to check are removed again; the caller makes the folder when it
    writes.
    """
    path = Path(path)
    _check(path, path, _refuser(option, path, "a folder path that can be created"))
    return path


def output_file(path: str | os.PathLike, option: str = "--out") -> Path:
    """``path`` if it is not a folder and its folder exists or can be created; raises ConfigError."""
    path = Path(path)
    refuse = _refuser(option, path, "a file path whose folder can be created")
    if path.is_dir():
        raise refuse("a folder")
    _check(path, path.parent, refuse)
    return path
