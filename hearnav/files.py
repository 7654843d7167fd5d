"""Files the caches and the results write: atomic replacement, stale temporaries, build locks, one-line OS errors.

- :func:`atomic_write` writes a temporary file beside its target (named ``.<name>.<host>.<pid>.<token>.tmp``,
  so a stale one is recognisable), ``fsync``s it and renames it into place. Files are created with mode
  ``0o666`` and folders with ``0o777``, both less the user's umask, as ``open`` and ``mkdir`` do, so a cache
  shared through a group-writable folder works.
- :func:`remove_stale_tmp` removes the temporaries (and ``.trash`` folders) that a killed writer left: those of
  a process of this host that no longer runs, and any older than :data:`STALE_AGE_S`.
- :func:`build_lock` is an exclusive ``flock`` in one ``.locks`` folder per cache folder; the lock file is
  removed when the lock is released, so no empty ``.lock`` file stays behind. Readers take no lock, so a valid
  cache in a read-only folder loads.
- :class:`Place` turns an ``OSError`` (read-only, no permission, no space, ...) into one line that names the
  folder and what to do (``HEARNAV_CACHE``, ``--out``).
"""

from __future__ import annotations

import contextlib
import errno
import fcntl
import os
import re
import secrets
import shutil
import socket
import sys
import time
from collections.abc import Callable, Iterator
from dataclasses import dataclass
from pathlib import Path
from typing import BinaryIO

from hearnav.errors import CacheError, HearnavError, exception_line

#: A temporary older than this is stale whoever made it (a day: no write of hearnav takes that long).
STALE_AGE_S = 24 * 3600
LOCKS = ".locks"
_HOST = re.sub(r"[^A-Za-z0-9-]", "-", socket.gethostname())[:24] or "host"
_TEMP = re.compile(r"^\.(?P<name>.+)\.(?P<host>[A-Za-z0-9-]+)\.(?P<pid>\d{1,10})\.[0-9a-f]{8}\.(?:tmp|trash)$")
_REASONS = {errno.EACCES: "permission denied", errno.EPERM: "operation not permitted",
            errno.EROFS: "read-only file system", errno.ENOSPC: "no space left on device",
            errno.EDQUOT: "disk quota exceeded"}
_FULL = (errno.ENOSPC, errno.EDQUOT)


def note(message: str) -> None:
    """Print one ``hearnav: note:`` line on standard error (a damaged cache file being rebuilt, ...)."""
    print(f"hearnav: note: {message}", file=sys.stderr)


@dataclass(frozen=True)
class Place:
    """A kind of folder hearnav writes, and how the user chooses another: the words of its write errors."""

    what: str
    fix_access: str
    fix_space: str
    error: type[HearnavError] = CacheError

    def error_for(self, exc: OSError, folder: str | os.PathLike) -> HearnavError:
        """One-line error for a failed write in ``folder`` (paths are bounded by PATH_MAX, so shown whole)."""
        why = _REASONS.get(exc.errno) or (os.strerror(exc.errno).lower() if exc.errno else exception_line(exc, 100))
        fix = self.fix_space if exc.errno in _FULL else self.fix_access
        return self.error(f"cannot write {self.what} in {folder} ({why}): {fix}")


def cache_place(what: str) -> Place:
    """A folder under ``HEARNAV_CACHE``."""
    return Place(what, "set HEARNAV_CACHE to a writable folder",
                 "free some space there, or set HEARNAV_CACHE to a folder on a disk with room")


@contextlib.contextmanager
def writing(folder: str | os.PathLike, place: Place) -> Iterator[None]:
    """Turn an ``OSError`` with an errno raised inside into ``place``'s one-line error naming ``folder``."""
    try:
        yield
    except OSError as exc:
        if exc.errno is None:
            raise
        raise place.error_for(exc, folder) from None


def make_folder(folder: str | os.PathLike, place: Place) -> Path:
    """Create ``folder`` and its parents (mode 0o777 less the umask) if missing; one-line error if it cannot."""
    folder = Path(folder)
    with writing(folder, place):
        folder.mkdir(parents=True, exist_ok=True)
    return folder


def temp_name(path: Path, suffix: str = ".tmp") -> Path:
    """A fresh temporary name beside ``path`` that :func:`remove_stale_tmp` recognises."""
    return path.with_name(f".{path.name}.{_HOST}.{os.getpid()}.{secrets.token_hex(4)}{suffix}")


def _pid_alive(pid: int) -> bool:
    if pid == os.getpid():
        return True
    try:
        os.kill(pid, 0)  # POSIX kill(2) with signal 0: only checks that the process exists
    except ProcessLookupError:
        return False
    except (PermissionError, OverflowError):
        return pid < 1 << 22  # another user's process; an impossible pid (Linux pid_max is at most 2**22) is gone
    return True


def is_stale(path: Path, now: float | None = None) -> bool:
    """Whether ``path`` is a temporary of :func:`temp_name` left by a dead process, or older than STALE_AGE_S."""
    match = _TEMP.match(path.name)
    if match is None:
        return False
    try:
        age = (time.time() if now is None else now) - path.lstat().st_mtime
    except FileNotFoundError:
        return False
    if age > STALE_AGE_S:
        return True
    return match["host"] == _HOST and not _pid_alive(int(match["pid"]))


def remove_stale_tmp(folder: Path) -> list[Path]:
    """Remove the stale temporaries (files or folders) in ``folder``; returns what was removed."""
    removed = []
    try:
        entries = [Path(e.path) for e in os.scandir(folder) if e.name.startswith(".")]
    except OSError:
        return removed
    for path in entries:
        if is_stale(path):
            if path.is_dir() and not path.is_symlink():
                shutil.rmtree(path, ignore_errors=True)
            else:
                with contextlib.suppress(OSError):
                    path.unlink()
            removed.append(path)
    return removed


def fsync_folder(folder: Path) -> None:
    """Make a rename in ``folder`` durable (POSIX; a no-op where folders cannot be opened or synced)."""
    try:
        fd = os.open(folder, os.O_RDONLY)
    except OSError:
        return
    try:
        os.fsync(fd)
    except OSError:
        pass
    finally:
        os.close(fd)


def atomic_write(path: str | os.PathLike, write: Callable[[BinaryIO], None], place: Place) -> Path:
    """Write ``path`` through ``write(file)``: temporary file, fsync, rename, fsync of the folder.

    A reader sees the old file or the new one, never a part. Stale temporaries in the folder are removed first.
    An ``OSError`` with an errno (read-only folder, no space, ...) becomes ``place``'s one-line error; the
    temporary file is removed whatever fails.
    """
    path = Path(path)
    folder = make_folder(path.parent, place)
    remove_stale_tmp(folder)
    tmp = temp_name(path)
    try:
        with writing(folder, place):
            # O_EXCL on a fresh name; mode 0o666 so that the umask alone decides (mkstemp would make 0o600)
            fd = os.open(tmp, os.O_WRONLY | os.O_CREAT | os.O_EXCL | os.O_CLOEXEC, 0o666)
            with os.fdopen(fd, "wb") as f:
                write(f)
                f.flush()
                os.fsync(f.fileno())
            os.replace(tmp, path)
    except BaseException:
        with contextlib.suppress(OSError):
            os.unlink(tmp)
        raise
    fsync_folder(folder)
    return path


def _same_file(fd: int, path: Path) -> bool:
    try:
        on_disk = os.stat(path)
    except FileNotFoundError:
        return False
    held = os.fstat(fd)
    return (held.st_dev, held.st_ino) == (on_disk.st_dev, on_disk.st_ino)


@contextlib.contextmanager
def build_lock(path: Path, place: Place) -> Iterator[None]:
    """Hold an exclusive lock for building ``path``: ``<folder>/.locks/<name>.lock``, removed on release.

    The lock file is unlinked while held; a process that was waiting on the removed file sees that the name
    now points elsewhere (or nowhere) and locks afresh, so two builders never hold the lock at once.
    """
    locks = path.parent / LOCKS
    lock_path = locks / f"{path.name}.lock"
    while True:
        with writing(path.parent, place):  # the error names the cache folder, not its .locks
            locks.mkdir(parents=True, exist_ok=True)
        try:
            fd = os.open(lock_path, os.O_RDWR | os.O_CREAT | os.O_CLOEXEC, 0o666)
        except FileNotFoundError:  # the lock folder was removed by a releasing holder meanwhile
            continue
        except OSError as exc:
            raise place.error_for(exc, path.parent) from None
        try:
            fcntl.flock(fd, fcntl.LOCK_EX)
        except BaseException:
            os.close(fd)
            raise
        if _same_file(fd, lock_path):
            break
        os.close(fd)
    try:
        yield
    finally:
        with contextlib.suppress(OSError):
            os.unlink(lock_path)
        with contextlib.suppress(OSError):
            os.rmdir(locks)  # only when no other lock is in it
        os.close(fd)
