"""On-disk cache of a scene's responses.

A file is keyed by a hash of the scene file's content, the acoustic settings and the model version. Writes
go to a temporary file in the same folder, are fsynced and then renamed, so a reader never sees a partial
file and two builders of the same scene leave one valid file. Loading never unpickles. A checksum over
every array detects truncated or corrupt files, which are reported in one line and rebuilt.
"""

from __future__ import annotations

import contextlib
import fcntl
import hashlib
import json
import os
import tempfile
import zipfile
from collections.abc import Callable
from pathlib import Path

import numpy as np

from hearnav.acoustics.responses import Responses, build_responses
from hearnav.acoustics.settings import MODEL_VERSION, AcousticSettings
from hearnav.errors import CacheError
from hearnav.scene.grid import Grid, build_grid
from hearnav.scene.model import Scene

_FIELDS = tuple(Responses.__dataclass_fields__)


def cache_dir() -> Path:
    """HEARNAV_CACHE if set, else the user cache folder (XDG_CACHE_HOME or ~/.cache) / hearnav."""
    env = os.environ.get("HEARNAV_CACHE")
    if env:
        return Path(env).expanduser()
    base = os.environ.get("XDG_CACHE_HOME") or Path.home() / ".cache"
    return Path(base) / "hearnav"


def cache_key(scene: Scene, settings: AcousticSettings) -> str:
    """Hash of everything that changes a scene's responses."""
    h = hashlib.sha256()
    h.update(scene.digest.encode())
    h.update(settings.key().encode())
    h.update(str(MODEL_VERSION).encode())
    return h.hexdigest()[:20]


def cache_path(scene: Scene, settings: AcousticSettings) -> Path:
    """Where the responses of ``scene`` under ``settings`` are kept."""
    return cache_dir() / f"{scene.name}-{cache_key(scene, settings)}.npz"


def _checksum(arrays: dict[str, np.ndarray]) -> str:
    h = hashlib.sha256()
    for name in sorted(arrays):
        a = np.ascontiguousarray(arrays[name])
        h.update(f"{name}:{a.dtype.str}:{a.shape}".encode())
        h.update(a.tobytes())
    return h.hexdigest()


def _encode(responses: Responses, key: str) -> dict[str, np.ndarray]:
    arrays = responses.arrays()
    arrays["spot_names"] = np.asarray(json.dumps(list(responses.spot_names)))
    meta = {"key": key, "model": MODEL_VERSION, "checksum": _checksum(arrays)}
    arrays["meta"] = np.asarray(json.dumps(meta))
    return arrays


def save(responses: Responses, path: Path, key: str) -> None:
    """Write atomically: temporary file, fsync, rename."""
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=path.name + ".", suffix=".tmp", dir=path.parent)
    try:
        with os.fdopen(fd, "wb") as f:
            np.savez(f, **_encode(responses, key))
            f.flush()
            os.fsync(f.fileno())
        os.replace(tmp, path)
    except BaseException:
        with contextlib.suppress(FileNotFoundError):
            os.unlink(tmp)
        raise


def load(path: Path, key: str | None = None) -> Responses:
    """Read and verify a cache file; raises CacheError when it is truncated, corrupt or for another key."""
    try:
        with np.load(path, allow_pickle=False) as data:
            arrays = {name: data[name] for name in data.files}
        meta = json.loads(str(arrays.pop("meta")))
    except (OSError, ValueError, KeyError, EOFError, zipfile.BadZipFile) as exc:
        raise CacheError(f"{path}: unreadable cache file (expected a complete .npz, got {type(exc).__name__}: {exc})") from None
    if meta.get("checksum") != _checksum(arrays):
        raise CacheError(f"{path}: cache checksum mismatch (expected {str(meta.get('checksum'))[:12]}..., the data differ)")
    if key is not None and meta.get("key") != key:
        raise CacheError(f"{path}: cache key mismatch (expected {key}, got {meta.get('key')})")
    missing = set(_FIELDS) - set(arrays)
    if missing:
        raise CacheError(f"{path}: cache file lacks {sorted(missing)} (expected every response field)")
    arrays["spot_names"] = tuple(json.loads(str(arrays["spot_names"])))
    fields = {k: arrays[k] for k in _FIELDS}
    fields["fs"], fields["lead"] = int(fields["fs"]), int(fields["lead"])
    return Responses(**fields)


@contextlib.contextmanager
def _build_lock(path: Path):
    path.parent.mkdir(parents=True, exist_ok=True)
    with open(path.with_suffix(".lock"), "a+") as lock:
        fcntl.flock(lock, fcntl.LOCK_EX)
        try:
            yield
        finally:
            fcntl.flock(lock, fcntl.LOCK_UN)


def load_or_build(scene: Scene, settings: AcousticSettings, grid: Grid | None = None,
                  progress: Callable[[int], None] | None = None,
                  report: Callable[[str], None] | None = None) -> Responses:
    """The scene's responses from the cache, building (and storing) them when absent or damaged."""
    grid = grid or build_grid(scene, settings.n_headings)
    path, key = cache_path(scene, settings), cache_key(scene, settings)
    if path.exists():
        try:
            return load(path, key)
        except CacheError as exc:
            if report:
                report(f"{exc}; rebuilding")
    with _build_lock(path):
        if path.exists():  # another process may have built it while we waited
            try:
                return load(path, key)
            except CacheError:
                pass
        responses = build_responses(scene, grid, settings, progress)
        save(responses, path, key)
    return responses
