"""Parts of the store: folders of read-only .npy arrays, built once and shared by every process through memory maps.

A part is a folder in :func:`tables_dir` holding one uncompressed ``.npy`` file per array and ``manifest.json``
(the part's key, a few scalars, and each array's dtype, shape and CRC-32). It is written into a temporary folder
beside its place and renamed into it, so a reader never sees half a part; builders of the same part take a lock
so that one builds while the others wait. Opening checks that the manifest names the expected key and arrays,
that every file holds an array of the manifest's dtype and shape, and the CRC-32 of every array's bytes; a part
that fails is reported in one line and rebuilt. Arrays open with ``np.load(mmap_mode="r")``: every process maps
the same pages of the page cache, and no process writes to them.
"""

from __future__ import annotations

import contextlib
import fcntl
import hashlib
import inspect
import json
import os
import shutil
import sys
import tempfile
import zlib
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from hearnav.acoustics.cache import cache_dir

#: Layout version of a part folder (bumped when the layout or the manifest changes).
STORE_FORMAT = 1
#: Parts a process keeps open at once (each a few memory maps); the oldest opened is dropped beyond it.
MAX_OPEN = 64
_MANIFEST = "manifest.json"
# The one piece of module state: the parts this process has opened and checked, by folder.
_open: dict[Path, Part] = {}


def tables_dir() -> Path:
    """The store's folder, beside the response cache: :func:`hearnav.acoustics.cache.cache_dir` / "tables"."""
    return cache_dir() / "tables"


def report_line(message: str) -> None:
    """The default report: one line on standard error."""
    print(f"hearnav: {message}", file=sys.stderr)


def digest(*parts: object) -> str:
    """A 20-hex-digit SHA-256 of the parts' text."""
    return hashlib.sha256("\x1f".join(map(str, parts)).encode()).hexdigest()[:20]


def source_digest(*sources: object) -> str:
    """SHA-256 of source code (modules, functions or file paths), so a part built by other code is never reused."""
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
        """A writable array of its part, backed by its file (so a large one never sits in private memory)."""
        if 0 in shape:
            a = np.zeros(shape, dtype)
        else:
            a = np.lib.format.open_memmap(self.folder / f"{name}.npy", mode="w+", dtype=dtype, shape=shape)
        self._arrays[name] = a
        return a

    def put(self, name: str, array: np.ndarray) -> None:
        """Store a finished array."""
        a = np.asarray(array)
        self.empty(name, a.shape, a.dtype)[...] = a

    def finish(self, key: str) -> None:
        """Flush every array to disk and write the manifest last."""
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


def _fsync(path: Path) -> None:
    fd = os.open(path, os.O_RDONLY)
    try:
        os.fsync(fd)
    finally:
        os.close(fd)


def read_part(folder: Path, key: str, names: tuple[str, ...]) -> Part:
    """Open and check a part; raises :class:`DamagedPart` with a one-line reason."""
    try:
        manifest = json.loads((folder / _MANIFEST).read_text())
    except FileNotFoundError:
        raise DamagedPart(f"{folder}: no {_MANIFEST} (expected a complete part)") from None
    except (OSError, ValueError) as exc:
        raise DamagedPart(f"{folder}: unreadable {_MANIFEST} ({type(exc).__name__}: {exc})") from None
    if manifest.get("format") != STORE_FORMAT or manifest.get("key") != key:
        raise DamagedPart(f"{folder}: manifest key {manifest.get('key')!r} (format {manifest.get('format')}), "
                          f"expected {key!r} (format {STORE_FORMAT})")
    entries = manifest.get("arrays", {})
    missing = sorted(set(names) - set(entries))
    if missing:
        raise DamagedPart(f"{folder}: manifest lacks arrays {missing}")
    arrays = {}
    for name, entry in entries.items():
        arrays[name] = _read_array(folder / f"{name}.npy", entry)
    return Part(arrays, manifest.get("scalars", {}))


def _read_array(path: Path, entry: dict) -> np.ndarray:
    shape = tuple(entry["shape"])
    try:
        a = np.load(path, mmap_mode="r" if 0 not in shape else None, allow_pickle=False)
    except (OSError, ValueError, EOFError) as exc:
        raise DamagedPart(f"{path}: unreadable array ({type(exc).__name__}: {exc})") from None
    if a.dtype.str != entry["dtype"] or a.shape != shape:
        raise DamagedPart(f"{path}: {a.dtype.str} array of shape {a.shape}, expected {entry['dtype']} of shape {shape}")
    if _crc(a) != entry["crc32"]:
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
    keep : remember the opened part for this process (tables); clips are opened afresh each time.
    report : called with a one-line message when a damaged part is rebuilt.
    """
    if keep and folder in _open:
        return _open[folder]
    part = _try_read(folder, key, names, report)
    if part is None:
        if keep:
            with _lock(folder):
                part = _try_read(folder, key, names, None)  # another process may have built it meanwhile
                if part is None:
                    remove_leftovers(folder)
                    part = _build(folder, key, names, build)
        else:
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
    folder.parent.mkdir(parents=True, exist_ok=True)
    tmp = Path(tempfile.mkdtemp(prefix=f".{folder.name}.", suffix=".tmp", dir=folder.parent))
    try:
        writer = PartWriter(tmp)
        build(writer)
        writer.finish(key)
        try:
            os.rename(tmp, folder)  # fails while a (damaged, or another builder's) part is in place
        except OSError:
            if _try_read(folder, key, names, None) is None:
                remove(folder)
                os.rename(tmp, folder)
            else:  # another builder of a clip came first
                remove(tmp)
        _fsync(folder.parent)
    except BaseException:
        remove(tmp)
        raise
    return read_part(folder, key, names)


def remove_leftovers(folder: Path) -> None:
    """Remove the temporary folders a crashed build of this part left (call with the part's lock held)."""
    for tmp in folder.parent.glob(f".{folder.name}.*.tmp"):
        shutil.rmtree(tmp, ignore_errors=True)


def remove(folder: Path) -> None:
    """Remove a part folder: renamed away first, so no reader sees it half deleted."""
    trash = folder.with_name(f".{folder.name}.{os.getpid()}.trash")
    try:
        os.rename(folder, trash)
    except FileNotFoundError:
        return
    shutil.rmtree(trash, ignore_errors=True)


@contextlib.contextmanager
def _lock(folder: Path):
    folder.parent.mkdir(parents=True, exist_ok=True)
    with open(folder.with_name(folder.name + ".lock"), "a+") as lock:
        fcntl.flock(lock, fcntl.LOCK_EX)
        try:
            yield
        finally:
            fcntl.flock(lock, fcntl.LOCK_UN)


def forget_open() -> None:
    """Close this process's open parts (tests; a process never needs it)."""
    _open.clear()
