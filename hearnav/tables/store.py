"""Parts of the store: folders of read-only .npy arrays, built once and shared by every process through memory maps.

A part is a folder in :func:`tables_dir` holding one uncompressed ``.npy`` file per array and ``manifest.json``
(the part's key, a few scalars, and each array's dtype, shape and CRC-32). It is written into a temporary folder
beside its place and renamed into it, so a reader never sees half a part; builders of the same part take a lock
(:func:`hearnav.files.build_lock`) so that one builds while the others wait, and a reader takes none, so a valid
store in a read-only folder opens. Opening checks that the manifest names the expected key and arrays, that
every file's .npy header declares the manifest's dtype and shape (before anything is mapped) and the CRC-32 of
every array's bytes; a part that fails in any way is reported in one line and rebuilt. Arrays open as read-only
memory maps: every process maps the same pages of the page cache, and no process writes to them.
"""

from __future__ import annotations

import errno
import functools
import hashlib
import inspect
import json
import os
import shutil
import zlib
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from hearnav import files, npyfile
from hearnav.errors import exception_line
from hearnav.acoustics.cache import cache_dir

#: Layout version of a part folder (bumped when the layout or the manifest changes).
STORE_FORMAT = 1
#: Parts a process keeps open at once (each a few memory maps); the oldest opened is dropped beyond it.
MAX_OPEN = 64
_MANIFEST = "manifest.json"
PLACE = files.cache_place("the tables store")
# Most bytes of a manifest (a few scalars and one line per array: a few kilobytes at most).
_MANIFEST_BYTES = 1 << 20
# errno values of a file system that cannot reserve space ahead (posix_fallocate is then skipped)
_NO_FALLOCATE = (errno.EOPNOTSUPP, errno.EINVAL, errno.ENOSYS)
# The one piece of module state: the parts this process has opened and checked, by folder.
_open: dict[Path, Part] = {}


def tables_dir() -> Path:
    """The store's folder, beside the response cache: :func:`hearnav.acoustics.cache.cache_dir` / "tables"."""
    return cache_dir() / "tables"


def report_line(message: str) -> None:
    """The default report: one ``hearnav: note:`` line on standard error."""
    files.note(message)


def digest(*parts: object) -> str:
    """A 20-hex-digit SHA-256 of the parts' text."""
    return hashlib.sha256("\x1f".join(map(str, parts)).encode()).hexdigest()[:20]


def source_digest(*sources: object) -> str:
    """SHA-256 of source code (modules, functions or file paths), so a part built by other code is never reused.

    Read once per process (a key is computed at every reset): the code a process runs does not change.
    """
    return _source_digest(sources)


@functools.lru_cache(maxsize=256)
def _source_digest(sources: tuple) -> str:
    h = hashlib.sha256()
    for source in sources:
        if callable(source):
            h.update(inspect.getsource(source).encode())
        else:
            h.update(Path(getattr(source, "__file__", source)).read_bytes())
    return h.hexdigest()[:20]


@dataclass(frozen=True)
class Part:
    """An opened part: its read-only arrays (memory maps, as plain ndarray views) and its scalars."""

    arrays: dict[str, np.ndarray]
    scalars: dict = field(default_factory=dict)

    def __getitem__(self, name: str) -> np.ndarray:
        return self.arrays[name]


class PartWriter:
    """What a builder fills: arrays (written straight to their files) and JSON scalars."""

    def __init__(self, folder: Path):
        self.folder = folder
        self.scalars: dict = {}
        self._arrays: dict[str, np.ndarray] = {}

    def empty(self, name: str, shape: tuple[int, ...], dtype: np.dtype | type) -> np.ndarray:
        """A writable array of its part, backed by its file (so a large one never sits in private memory).

        The file's blocks are reserved before the map is returned, so a full disk is an error here rather than
        a SIGBUS when the map is written.
        """
        if 0 in shape:
            a = np.zeros(shape, dtype)
        else:
            path = self.folder / f"{name}.npy"
            with files.writing(self.folder.parent, PLACE):
                a = np.lib.format.open_memmap(path, mode="w+", dtype=dtype, shape=shape)
                _reserve(path)
        self._arrays[name] = a
        return a

    def put(self, name: str, array: np.ndarray) -> None:
        """Store a finished array."""
        a = np.asarray(array)
        self.empty(name, a.shape, a.dtype)[...] = a

    def finish(self, key: str) -> None:
        """Flush every array to disk and write the manifest last."""
        with files.writing(self.folder.parent, PLACE):
            self._finish(key)

    def _finish(self, key: str) -> None:
        entries = {}
        for name, a in self._arrays.items():
            path = self.folder / f"{name}.npy"
            if isinstance(a, np.memmap):
                a.flush()
            else:
                np.save(path, a)
            entries[name] = {"dtype": a.dtype.str, "shape": list(a.shape), "crc32": _crc(a)}
            _fsync(path)
        self._arrays.clear()
        manifest = {"format": STORE_FORMAT, "key": key, "scalars": self.scalars, "arrays": entries}
        (self.folder / _MANIFEST).write_text(json.dumps(manifest, indent=1, sort_keys=True))
        _fsync(self.folder / _MANIFEST)


class DamagedPart(Exception):
    """A part folder that is incomplete, damaged or for another key (internal: it is rebuilt)."""


def _crc(a: np.ndarray) -> int:
    return zlib.crc32(np.ascontiguousarray(a).reshape(-1).view(np.uint8))


def _reserve(path: Path) -> None:
    """Allocate a file's blocks (posix_fallocate) where the file system can."""
    fd = os.open(path, os.O_RDWR)
    try:
        os.posix_fallocate(fd, 0, os.fstat(fd).st_size)
    except OSError as exc:
        if exc.errno not in _NO_FALLOCATE:
            raise
    finally:
        os.close(fd)


def _fsync(path: Path) -> None:
    fd = os.open(path, os.O_RDONLY)
    try:
        os.fsync(fd)
    finally:
        os.close(fd)


def _manifest(folder: Path) -> dict:
    path = folder / _MANIFEST
    try:
        with open(path, "rb") as f:
            text = f.read(_MANIFEST_BYTES + 1)
    except FileNotFoundError:
        raise DamagedPart(f"{folder}: no {_MANIFEST} (expected a complete part)") from None
    except OSError as exc:
        raise DamagedPart(f"{folder}: unreadable {_MANIFEST} ({exception_line(exc, 100)})") from None
    if len(text) > _MANIFEST_BYTES:
        raise DamagedPart(f"{folder}: {_MANIFEST} over {_MANIFEST_BYTES} bytes (expected a small JSON object)")
    try:
        manifest = json.loads(text)
    except Exception as exc:  # ValueError, UnicodeDecodeError, RecursionError on deep nesting, ...
        raise DamagedPart(f"{folder}: unreadable {_MANIFEST} ({exception_line(exc, 100)})") from None
    if not isinstance(manifest, dict) or not isinstance(manifest.get("arrays", {}), dict) \
            or not isinstance(manifest.get("scalars", {}), dict):
        raise DamagedPart(f"{folder}: {_MANIFEST} is not a part's manifest (expected an object with arrays and "
                          f"scalars)")
    return manifest


def read_part(folder: Path, key: str, names: tuple[str, ...]) -> Part:
    """Open and check a part; raises :class:`DamagedPart` with a one-line reason."""
    manifest = _manifest(folder)
    if manifest.get("format") != STORE_FORMAT or manifest.get("key") != key:
        raise DamagedPart(f"{folder}: manifest key {str(manifest.get('key'))[:40]!r} "
                          f"(format {str(manifest.get('format'))[:8]}), expected {key!r} (format {STORE_FORMAT})")
    entries = manifest.get("arrays", {})
    missing = sorted(set(names) - set(entries))
    if missing:
        raise DamagedPart(f"{folder}: manifest lacks arrays {missing}")
    arrays = {}
    for name, entry in entries.items():
        arrays[name] = _read_array(folder / f"{name}.npy", _entry(folder, name, entry))
    return Part(arrays, manifest.get("scalars", {}))


def _entry(folder: Path, name: str, entry: object) -> tuple[str, tuple[int, ...], int]:
    """(dtype str, shape, CRC-32) of a manifest's array entry."""
    try:
        dtype, shape, crc = entry["dtype"], tuple(entry["shape"]), entry["crc32"]
        if not (isinstance(dtype, str) and isinstance(crc, int) and all(isinstance(n, int) and n >= 0 for n in shape)):
            raise TypeError("wrong types")
    except Exception as exc:
        raise DamagedPart(f"{folder}: manifest entry of {name[:40]!r} is not a dtype, shape and CRC-32 "
                          f"({exception_line(exc, 60)})") from None
    return dtype, shape, crc


def _read_array(path: Path, entry: tuple[str, tuple[int, ...], int]) -> np.ndarray:
    """The array of a part's file, mapped read-only, after its header is checked against the manifest's entry."""
    dtype_str, shape, crc = entry
    try:
        with open(path, "rb") as f:
            size = os.fstat(f.fileno()).st_size
            dtype, declared, fortran = npyfile.read_header(f)
            nbytes = npyfile.check_header(dtype, declared, (dtype_str, shape), size)
            offset = f.tell()
        if offset + nbytes != size:
            raise npyfile.BadArray(f"expected a file of {offset + nbytes} bytes (header and data), got {size}")
        order = "F" if fortran else "C"
        a = np.memmap(path, dtype, "r", offset, shape, order) if nbytes else np.zeros(shape, dtype, order=order)
    except FileNotFoundError:
        raise
    except npyfile.BadArray as exc:
        raise DamagedPart(f"{path}: {exc}") from None
    except Exception as exc:  # a read error, a failed map, ...
        raise DamagedPart(f"{path}: unreadable array ({exception_line(exc, 100)})") from None
    if _crc(a) != crc:
        raise DamagedPart(f"{path}: CRC-32 mismatch (the bytes differ from those written)")
    a = a.view(np.ndarray)  # a plain view of the map: no np.memmap overhead on every operation
    a.flags.writeable = False
    return a


def open_part(folder: Path, key: str, names: tuple[str, ...], build: Callable[[PartWriter], None],
              keep: bool = True, report: Callable[[str], None] = report_line) -> Part:
    """A part's arrays from the store, building it first when it is absent or damaged.

    Parameters
    ----------
    folder : the part's folder; key : everything the part depends on (checked against its manifest).
    names : arrays the part must hold. build : fills a :class:`PartWriter` with the part.
    keep : remember the opened part for this process (tables); clips keep their own memo
        (:mod:`hearnav.tables.sounds`), so they do not push tables out of it.
    report : called with a one-line message when a damaged part is rebuilt.
    """
    if keep and folder in _open:
        return _open[folder]
    part = _try_read(folder, key, names, report)
    if part is None:
        with files.build_lock(folder, PLACE):
            part = _try_read(folder, key, names, None)  # another process may have built it meanwhile
            if part is None:
                remove_leftovers(folder)
                part = _build(folder, key, names, build)
    if keep:
        while len(_open) >= MAX_OPEN:
            del _open[next(iter(_open))]
        _open[folder] = part
    return part


def _try_read(folder: Path, key: str, names: tuple[str, ...], report: Callable[[str], None] | None) -> Part | None:
    if not folder.exists():
        return None
    try:
        return read_part(folder, key, names)
    except DamagedPart as exc:
        if report:
            report(f"{exc}; rebuilding")
        return None
    except FileNotFoundError:  # removed while being read (a clip evicted by another process)
        return None


def _build(folder: Path, key: str, names: tuple[str, ...], build: Callable[[PartWriter], None]) -> Part:
    files.make_folder(folder.parent, PLACE)
    files.remove_stale_tmp(folder.parent)
    tmp = files.temp_name(folder)
    with files.writing(folder.parent, PLACE):
        os.mkdir(tmp, 0o777)  # the umask decides (mkdtemp would make 0o700, unreadable to a shared cache's group)
    try:
        writer = PartWriter(tmp)
        build(writer)
        writer.finish(key)
        with files.writing(folder.parent, PLACE):
            _place(tmp, folder, key, names)
    except BaseException:
        remove(tmp)
        raise
    files.fsync_folder(folder.parent)
    return read_part(folder, key, names)


def _place(tmp: Path, folder: Path, key: str, names: tuple[str, ...]) -> None:
    """Rename a built part into place, unless another builder's valid part is already there."""
    try:
        os.rename(tmp, folder)  # fails while a (damaged, or another builder's) part is in place
    except OSError as exc:
        if exc.errno not in (errno.EEXIST, errno.ENOTEMPTY):
            raise
        if _try_read(folder, key, names, None) is None:
            remove(folder)
            os.rename(tmp, folder)
        else:  # another builder of a clip came first
            remove(tmp)


def remove_leftovers(folder: Path) -> None:
    """Remove the temporary folders a crashed build of this part left (call with the part's lock held)."""
    for tmp in folder.parent.glob(f".{folder.name}.*.tmp"):
        shutil.rmtree(tmp, ignore_errors=True)


def remove(folder: Path) -> None:
    """Remove a part folder: renamed away first, so no reader sees it half deleted."""
    trash = files.temp_name(folder, ".trash")
    try:
        os.rename(folder, trash)
    except FileNotFoundError:
        return
    shutil.rmtree(trash, ignore_errors=True)


def forget_open() -> None:
    """Close this process's open parts (tests; a process never needs it)."""
    _open.clear()
