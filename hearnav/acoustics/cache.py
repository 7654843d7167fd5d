"""On-disk cache of a scene's responses.

A file is keyed by a hash of the scene file's content, the acoustic settings and the model version. Writes
go to a temporary file in the same folder, are fsynced and then renamed (:func:`hearnav.files.atomic_write`), so
a reader never sees a partial file and two builders of the same scene leave one valid file; builders take the
folder's build lock, readers none, so a valid cache in a read-only folder loads. Loading never unpickles, and
checks every array's .npy header against the dtype and shape the metadata record before allocating it. A
checksum over every array detects truncated or corrupt files; any unreadable or inconsistent file is reported
in one line and rebuilt.
"""

from __future__ import annotations

import hashlib
import json
import os
import zipfile
from collections.abc import Callable
from pathlib import Path

import numpy as np

from hearnav import files, npyfile
from hearnav.acoustics.responses import Responses, build_responses
from hearnav.acoustics.settings import MODEL_VERSION, AcousticSettings
from hearnav.errors import CacheError, exception_line
from hearnav.scene.grid import Grid, build_grid
from hearnav.scene.model import Scene

_FIELDS = tuple(Responses.__dataclass_fields__)
PLACE = files.cache_place("the response cache")
# Most bytes of the metadata string (key, checksum, a dtype and shape per array: well under a kilobyte).
_META_BYTES = 1 << 16


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
    shapes = {name: [a.dtype.str, list(a.shape)] for name, a in arrays.items()}
    meta = {"key": key, "model": MODEL_VERSION, "checksum": _checksum(arrays), "arrays": shapes,
            "rt60_t30": [round(float(v), 4) if np.isfinite(v) and v > 0 else None for v in responses.rt60]}
    arrays["meta"] = np.asarray(json.dumps(meta))
    return arrays


def save(responses: Responses, path: Path, key: str) -> None:
    """Write atomically (temporary file, fsync, rename); a failed write is one line naming the folder."""
    arrays = _encode(responses, key)
    files.atomic_write(path, lambda f: np.savez(f, **arrays), PLACE)


def _member_limits(z: zipfile.ZipFile, size: int) -> dict[str, int]:
    """Each array's name and the most bytes it may hold; refuses what np.savez does not write."""
    limits = {}
    for info in z.infolist():
        if not info.filename.endswith(".npy") or info.compress_type != zipfile.ZIP_STORED:
            raise npyfile.BadArray(f"member {info.filename[:40]!r} (expected stored .npy arrays only)")
        limits[info.filename[:-4]] = min(info.file_size, size)
    return limits


def _meta_of(z: zipfile.ZipFile, limits: dict[str, int]) -> dict:
    """The metadata of an open cache file, checked to be a JSON object of bounded size."""
    if "meta" not in limits:
        raise npyfile.BadArray("no meta array (expected the cache's metadata)")
    with z.open("meta.npy") as m:
        meta_array = npyfile.read_array(m, None, min(limits["meta"], _META_BYTES))
    if meta_array.dtype.kind != "U" or meta_array.shape != ():
        raise npyfile.BadArray(f"meta is {meta_array.dtype.str} of shape {meta_array.shape}, expected a string")
    meta = json.loads(str(meta_array))
    if not isinstance(meta, dict):
        raise npyfile.BadArray(f"meta is {type(meta).__name__}, expected a JSON object")
    return meta


def read_meta(path: Path) -> dict:
    """The metadata of a cache file (key, model, checksum, shapes, measured T30); its arrays are not read."""
    with open(path, "rb") as f, zipfile.ZipFile(f) as z:
        return _meta_of(z, _member_limits(z, os.fstat(f.fileno()).st_size))


def _read_arrays(path: Path) -> tuple[dict, dict[str, np.ndarray]]:
    """(meta, arrays) of a cache file; every shape is checked against the metadata before it is allocated."""
    with open(path, "rb") as f, zipfile.ZipFile(f) as z:
        limits = _member_limits(z, os.fstat(f.fileno()).st_size)
        meta = _meta_of(z, limits)
        declared = meta.get("arrays")  # absent from files of earlier versions: the size bound and checksum apply
        if declared is not None and set(declared) != set(limits) - {"meta"}:
            raise npyfile.BadArray("the arrays differ from those the metadata list")
        arrays = {}
        for name in sorted(set(limits) - {"meta"}):
            with z.open(f"{name}.npy") as m:
                arrays[name] = npyfile.read_array(m, declared[name] if declared else None, limits[name])
    return meta, arrays


def load(path: Path, key: str | None = None) -> Responses:
    """Read and verify a cache file; raises CacheError when it is truncated, corrupt or for another key."""
    try:
        meta, arrays = _read_arrays(path)
    except Exception as exc:  # untrusted bytes: any failure to parse them means a damaged file
        raise CacheError(f"{path}: unreadable cache file (expected a complete .npz, got {exception_line(exc, 100)})") from None
    if meta.get("checksum") != _checksum(arrays):
        raise CacheError(f"{path}: cache checksum mismatch (expected {str(meta.get('checksum'))[:12]}..., the data differ)")
    if key is not None and meta.get("key") != key:
        raise CacheError(f"{path}: cache key mismatch (expected {key}, got {str(meta.get('key'))[:40]})")
    missing = set(_FIELDS) - set(arrays)
    if missing:
        raise CacheError(f"{path}: cache file lacks {sorted(missing)} (expected every response field)")
    try:
        spot_names = json.loads(str(arrays["spot_names"]))
        if not (isinstance(spot_names, list) and all(isinstance(n, str) for n in spot_names)):
            raise ValueError("spot_names is not a list of names")
        fields = {k: arrays[k] for k in _FIELDS}
        fields["spot_names"] = tuple(spot_names)
        fields["fs"], fields["lead"] = int(fields["fs"]), int(fields["lead"])
    except Exception as exc:
        raise CacheError(f"{path}: inconsistent cache file (expected every response field, got {exception_line(exc, 100)})") from None
    return Responses(**fields)


def load_or_build(scene: Scene, settings: AcousticSettings, grid: Grid | None = None,
                  progress: Callable[[int], None] | None = None,
                  report: Callable[[str], None] | None = files.note) -> Responses:
    """The scene's responses from the cache, building (and storing) them when absent or damaged.

    Loading takes no lock, so a valid cache in a read-only folder loads; building takes the folder's build lock.
    """
    grid = grid or build_grid(scene, settings.n_headings)
    path, key = cache_path(scene, settings), cache_key(scene, settings)
    first_use = not path.exists()  # a damaged file is reported as such below, not as a first use
    if path.exists():
        try:
            return load(path, key)
        except CacheError as exc:
            if report:
                report(f"{exc}; rebuilding")
    with files.build_lock(path, PLACE):
        if path.exists():  # another process may have built it while we waited
            try:
                return load(path, key)
            except CacheError:
                pass
        if progress is None and report is not None and first_use:
            responses = _build_with_feedback(scene, grid, settings, report)
        else:
            responses = build_responses(scene, grid, settings, progress)
        save(responses, path, key)
    return responses


#: Seconds per (cell, heading, spot) of a build on one core: maple-flat's 4040 in 16.4 s (README, Performance).
BUILD_S_PER_POSE_SPOT = 16.4 / 4040


def _build_with_feedback(scene: Scene, grid: Grid, settings: AcousticSettings,
                         report: Callable[[str], None]) -> Responses:
    """:func:`build_responses`, saying what is built and how long it should take, with a bar on a terminal and a
    line every few seconds elsewhere (:class:`hearnav.progress.Feedback`)."""
    from hearnav.progress import Feedback

    estimate = BUILD_S_PER_POSE_SPOT * grid.n_cells * settings.n_headings * len(scene.spots)
    report(f"building responses for {scene.name} (first use, about {max(estimate, 1):.0f} s; cached for later runs)")
    stage, done = f"responses for {scene.name} (cells)", [0]
    with Feedback() as feedback:
        feedback(stage, 0, grid.n_cells)

        def progress(n: int) -> None:
            done[0] += n
            feedback(stage, done[0], grid.n_cells)

        return build_responses(scene, grid, settings, progress)
