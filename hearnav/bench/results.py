"""The per-episode result file and the run manifest, written so that a crash never corrupts them.

A run folder ``DIR`` holds

- ``DIR/episodes.jsonl``: one JSON object per line, one line per finished episode. Every row is written
  with a single ``write`` followed by ``flush`` and ``os.fsync``, so a killed process (even ``SIGKILL``)
  leaves at most one torn line, and only at the very end. :func:`read_rows` ignores such a line and
  :func:`repair` cuts it off so that later appends start on a fresh line.
- ``DIR/run.json``: the run manifest (suite, suite hash, code version, ...), replaced atomically
  (temporary file, ``fsync``, ``os.replace``) by :func:`write_manifest`. :func:`check_manifest` refuses to
  add results to a folder that holds results of another suite or code version.

A row is an :class:`EpisodeResult`, written as a plain dict (:meth:`EpisodeResult.to_dict`). Floats that JSON cannot hold (NaN, +-inf) are stored as ``null``; NumPy scalars and
arrays are stored as Python numbers and lists. Keys containing ``"time"`` are wall-clock measurements by
convention and :func:`comparable` drops them before rows are compared.
"""

from __future__ import annotations

import json
import math
import os
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field, fields
from pathlib import Path
from types import TracebackType
from typing import Any

import numpy as np

from hearnav.errors import HearnavError

EPISODES_FILE = "episodes.jsonl"
SUMMARY_FILE = "summary.json"
MANIFEST_FILE = "run.json"
DONE_STATUSES = ("ok", "failed")
MANIFEST_KEYS = ("suite_hash", "code_version")


class ResultsError(HearnavError):
    """A result file or run folder is corrupt, or does not match the run being started."""


@dataclass
class EpisodeResult:
    """One policy on one episode: a row of ``DIR/episodes.jsonl`` (``status`` "ok" or "failed").

    A failed row's ``error`` says why in one line: what the policy raised (``ValueError: ...``, ``policy
    exited (SystemExit 3)``), ``timed out after 600 s`` or ``worker died (exit code 7)``; rows of the last
    two hold no scores, since the episode never returned.

    Scores are SI-SDR in dB. ``normalised_gain`` is gain / (oracle bound - start score), ``None`` when the
    bound is unknown or not above the start. ``extra`` keeps fields this version does not know (rows written
    by other versions), so they survive a round trip.
    """

    policy: str
    episode_seed: int
    status: str = "ok"
    error: str | None = None
    privileged: bool = False
    episode_index: int | None = None
    scene: str | None = None
    oracle_si_sdr_db: float | None = None
    start_si_sdr_db: float | None = None
    start_ear_si_sdr_db: float | None = None
    final_si_sdr_db: float | None = None
    best_si_sdr_db: float | None = None
    gain_db: float | None = None
    episode_return: float | None = None
    normalised_gain: float | None = None
    path_length_m: float | None = None
    steps: int | None = None
    collisions: int | None = None
    final_pose: dict | None = None
    start_xy: list | None = None
    wall_time_s: float | None = None
    extra: dict = field(default_factory=dict)

    def to_dict(self) -> dict:
        """The row as written: one key per field (``extra`` merged in at the top level)."""
        row = {f.name: getattr(self, f.name) for f in fields(self) if f.name != "extra"}
        return {**row, **self.extra}

    @classmethod
    def from_dict(cls, row: Mapping[str, Any]) -> EpisodeResult:
        """A row as read by :func:`read_rows`; fields it lacks are ``None``, unknown ones go to ``extra``."""
        if not isinstance(row, Mapping) or "policy" not in row or "episode_seed" not in row:
            got = sorted(row) if isinstance(row, Mapping) else type(row).__name__
            raise ResultsError(f"expected a row with keys 'policy' and 'episode_seed', got {got}: "
                               f"the row was not written by this benchmark")
        known = {f.name for f in fields(cls)} - {"extra"}
        return cls(**{k: v for k, v in row.items() if k in known},
                   extra={k: v for k, v in row.items() if k not in known})


def _plain(value: Any) -> Any:
    """``value`` with NumPy types made Python types and non-finite floats made ``None`` (recursively)."""
    if isinstance(value, np.ndarray):
        value = value.tolist()
    elif isinstance(value, np.generic):
        value = value.item()
    if isinstance(value, float):
        return value if math.isfinite(value) else None
    if isinstance(value, Mapping):
        return {str(k): _plain(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_plain(v) for v in value]
    return value


def encode_row(row: Mapping[str, Any] | EpisodeResult) -> bytes:
    """One row as one UTF-8 JSON line, newline included.

    Parameters
    ----------
    row : Mapping[str, Any] or EpisodeResult
        The row. NaN and infinite floats become ``null``; NumPy values become Python values.

    Returns
    -------
    bytes
        ``json.dumps(row, sort_keys=True, allow_nan=False)`` plus ``b"\\n"``.
    """
    if isinstance(row, EpisodeResult):
        row = row.to_dict()
    if not isinstance(row, Mapping):
        raise ResultsError(f"expected a row as a dict, got {type(row).__name__}: pass one dict per episode")
    try:
        text = json.dumps(_plain(row), sort_keys=True, allow_nan=False)
    except (TypeError, ValueError) as exc:
        raise ResultsError(f"expected a row of JSON values (numbers, strings, lists, dicts), got {exc}: "
                           f"convert the value before writing the row") from None
    return (text + "\n").encode("utf-8")


def _check_tail(path: Path) -> None:
    """Raise if ``path`` exists and does not end with a newline (a torn last line)."""
    try:
        size = path.stat().st_size
    except FileNotFoundError:
        return
    if size == 0:
        return
    with open(path, "rb") as fh:
        fh.seek(size - 1)
        last = fh.read(1)
    if last != b"\n":
        raise ResultsError(f"{path}: expected the file to end with a complete line, got a partial last line "
                           f"(an interrupted write): call hearnav.bench.results.repair() before appending")


def append_row(path: str | os.PathLike, row: Mapping[str, Any] | EpisodeResult) -> None:
    """Append one row to a JSON-lines file and ``fsync`` it.

    Parameters
    ----------
    path : str or PathLike
        The ``episodes.jsonl`` file; created if missing. It must not end with a torn line (see :func:`repair`).
    row : Mapping[str, Any]
        The row (see :func:`encode_row`).
    """
    path = Path(path)
    data = encode_row(row)
    _check_tail(path)
    with open(path, "ab") as fh:
        fh.write(data)
        fh.flush()
        os.fsync(fh.fileno())


class ResultWriter:
    """Keeps a JSON-lines file open and appends ``fsync``-ed rows; a context manager.

    Parameters
    ----------
    path : str or PathLike
        The ``episodes.jsonl`` file; it and its folder are created if missing. An existing file must not
        end with a torn line (see :func:`repair`).
    """

    def __init__(self, path: str | os.PathLike):
        self.path = Path(path)
        self.path.parent.mkdir(parents=True, exist_ok=True)
        _check_tail(self.path)
        self._fh = open(self.path, "ab")  # unbuffered-enough: one write per row, flushed at once

    def append(self, row: Mapping[str, Any] | EpisodeResult) -> None:
        """Write one row as one line, flush and ``fsync``."""
        if self._fh is None:
            raise ResultsError(f"{self.path}: expected an open writer, got a closed one: create a new ResultWriter")
        data = encode_row(row)
        self._fh.write(data)
        self._fh.flush()
        os.fsync(self._fh.fileno())

    def close(self) -> None:
        """Close the file (idempotent)."""
        if self._fh is not None:
            self._fh.close()
            self._fh = None

    @property
    def closed(self) -> bool:
        """Whether :meth:`close` has been called."""
        return self._fh is None

    def __enter__(self) -> ResultWriter:
        return self

    def __exit__(self, exc_type: type[BaseException] | None, exc: BaseException | None,
                 tb: TracebackType | None) -> None:
        self.close()


def _parse_line(line: bytes) -> dict | None:
    """The dict on one line, or ``None`` if the line is not one complete JSON object."""
    try:
        value = json.loads(line.decode("utf-8"))
    except (UnicodeDecodeError, ValueError):
        return None
    return value if isinstance(value, dict) else None


def _lines(data: bytes) -> list[bytes]:
    """The lines of ``data`` without their newlines; a final newline does not start an empty line."""
    lines = data.split(b"\n")
    if lines[-1] == b"":
        lines.pop()
    return lines


def read_rows(path: str | os.PathLike) -> list[dict]:
    """All complete rows of a JSON-lines file, in file order.

    A torn last line (an interrupted write: not a complete JSON object) is ignored; call :func:`repair`
    before appending again. A last line that lacks only its newline but parses is a complete row and is
    returned. A bad line anywhere else means the file is corrupt.

    Parameters
    ----------
    path : str or PathLike
        The ``episodes.jsonl`` file. A missing file holds no rows.

    Returns
    -------
    list[dict]
        The rows, length ``n_rows``.

    Raises
    ------
    ResultsError
        If a line other than the last is not a JSON object; the message names the line (1-based).
    """
    path = Path(path)
    try:
        data = path.read_bytes()
    except FileNotFoundError:
        return []
    lines = _lines(data)
    rows: list[dict] = []
    for number, line in enumerate(lines, start=1):
        row = _parse_line(line)
        if row is None:
            if number == len(lines):
                break  # a torn last line: an interrupted write
            shown = line[:60].decode("utf-8", errors="replace")
            raise ResultsError(f"{path} line {number}: expected one JSON object per line, got {shown!r}; "
                               f"only the last line can be torn by a crash, so the file is corrupt: "
                               f"fix or delete that line, or choose another --out")
        rows.append(row)
    return rows


def repair(path: str | os.PathLike) -> int:
    """Make a JSON-lines file end with a complete line, so that appends stay valid.

    A torn last line (not a JSON object) is cut off: the file is truncated after the last complete line.
    A last row that only lacks its newline gets one. A missing or clean file is left alone. Lines before
    the last are not checked (:func:`read_rows` does that).

    Parameters
    ----------
    path : str or PathLike
        The ``episodes.jsonl`` file.

    Returns
    -------
    int
        The number of bytes cut off (0 if nothing was cut).
    """
    path = Path(path)
    try:
        data = path.read_bytes()
    except FileNotFoundError:
        return 0
    lines = _lines(data)
    if not lines:
        return 0
    last = lines[-1]
    if _parse_line(last) is not None:
        if data.endswith(b"\n"):
            return 0
        with open(path, "ab") as fh:
            fh.write(b"\n")
            fh.flush()
            os.fsync(fh.fileno())
        return 0
    keep = len(data) - len(last) - (1 if data.endswith(b"\n") else 0)  # where the torn line starts
    with open(path, "r+b") as fh:
        fh.truncate(keep)
        fh.flush()
        os.fsync(fh.fileno())
    return len(data) - keep


def done_keys(rows: Iterable[Mapping[str, Any]]) -> set[tuple[str, int]]:
    """``(policy, episode_seed)`` of the rows that need no rerun on resume (status ``"ok"`` or ``"failed"``).

    Parameters
    ----------
    rows : Iterable[Mapping[str, Any]]
        Rows as read by :func:`read_rows`.

    Returns
    -------
    set[tuple[str, int]]
        The finished episodes.
    """
    keys: set[tuple[str, int]] = set()
    for index, row in enumerate(rows):
        if row.get("status") not in DONE_STATUSES:
            continue
        if "policy" not in row or "episode_seed" not in row:
            raise ResultsError(f"row {index}: expected keys 'policy' and 'episode_seed', got {sorted(row)}: "
                               f"the result file was not written by this benchmark")
        keys.add((str(row["policy"]), int(row["episode_seed"])))
    return keys


def comparable(row: Mapping[str, Any]) -> dict:
    """A row without its wall-clock fields, for comparing runs.

    Every key containing ``"time"`` (any case, at any nesting level) is dropped; values are normalised as
    when written (NaN -> ``None``, NumPy -> Python), so an in-memory row compares equal to its read-back copy.

    Parameters
    ----------
    row : Mapping[str, Any]
        A row.

    Returns
    -------
    dict
        A new dict.
    """
    def strip(value: Any) -> Any:
        if isinstance(value, Mapping):
            return {k: strip(v) for k, v in value.items() if "time" not in str(k).lower()}
        if isinstance(value, list):
            return [strip(v) for v in value]
        return value

    return strip(_plain(row))


def _fsync_dir(directory: Path) -> None:
    """Make a rename in ``directory`` durable (POSIX; a no-op where directories cannot be opened)."""
    try:
        fd = os.open(directory, os.O_RDONLY)
    except OSError:
        return
    try:
        os.fsync(fd)
    except OSError:
        pass
    finally:
        os.close(fd)


def write_json(path: str | os.PathLike, data: Mapping[str, Any]) -> Path:
    """Write a JSON file atomically: a temporary file, ``fsync``, ``os.replace``, then ``fsync`` of the folder.

    Parameters
    ----------
    path : str or PathLike
        The file; its folder is created if missing.
    data : Mapping[str, Any]
        JSON values, written indented with sorted keys; NaN becomes ``null``.

    Returns
    -------
    Path
        ``path``.
    """
    target = Path(path)
    target.parent.mkdir(parents=True, exist_ok=True)
    tmp = target.parent / f".{target.name}.{os.getpid()}.tmp"
    text = json.dumps(_plain(dict(data)), sort_keys=True, indent=2, allow_nan=False) + "\n"
    try:
        with open(tmp, "w", encoding="utf-8") as fh:
            fh.write(text)
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, target)
    finally:
        if tmp.exists():
            tmp.unlink()
    _fsync_dir(target.parent)
    return target


def write_manifest(directory: str | os.PathLike, manifest: Mapping[str, Any]) -> Path:
    """Write ``DIR/run.json`` atomically (see :func:`write_json`); returns its path."""
    return write_json(Path(directory) / MANIFEST_FILE, manifest)


def read_manifest(directory: str | os.PathLike) -> dict | None:
    """``DIR/run.json`` as a dict, or ``None`` if it does not exist."""
    path = Path(directory) / MANIFEST_FILE
    try:
        text = path.read_text(encoding="utf-8")
    except FileNotFoundError:
        return None
    try:
        value = json.loads(text)
    except ValueError:
        value = None
    if not isinstance(value, dict):
        raise ResultsError(f"{path}: expected a JSON object (the run manifest), got unreadable text: "
                           f"choose another --out or remove {directory}")
    return value


def check_manifest(directory: str | os.PathLike, manifest: Mapping[str, Any]) -> dict:
    """Make sure ``DIR`` holds (or will hold) results of this suite and code version only.

    If ``DIR/run.json`` is absent it is written; if it records the same ``suite_hash`` and
    ``code_version`` the run may add to it (the stored manifest is kept); otherwise the run is refused.

    Parameters
    ----------
    directory : str or PathLike
        The run folder (the ``--out`` of the command line).
    manifest : Mapping[str, Any]
        This run's manifest; needs ``"suite_hash"`` and ``"code_version"``, and should name the ``"suite"``.

    Returns
    -------
    dict
        The manifest in force (the stored one if present).

    Raises
    ------
    ResultsError
        If the stored manifest records another suite hash or code version, or ``manifest`` lacks a key.
    """
    missing = [key for key in MANIFEST_KEYS if key not in manifest]
    if missing:
        raise ResultsError(f"expected a run manifest with keys {list(MANIFEST_KEYS)}, got one without {missing}: "
                           f"build it with the suite hash and code version")
    stored = read_manifest(directory)
    if stored is None:
        write_manifest(directory, manifest)
        return dict(manifest)
    if any(stored.get(key) != manifest[key] for key in MANIFEST_KEYS):
        raise ResultsError(
            f"{directory} holds results of suite {stored.get('suite')} (hash {stored.get('suite_hash')}) / "
            f"code version {stored.get('code_version')}; refusing to mix them with suite {manifest.get('suite')} "
            f"(hash {manifest['suite_hash']}) / version {manifest['code_version']}: "
            f"choose another --out or remove {directory}")
    return stored
