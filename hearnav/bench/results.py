"""The per-episode result file and the run manifest, written so that a crash never corrupts them.

A run folder ``DIR`` holds

- ``DIR/episodes.jsonl``: one JSON object per line, one line per finished episode. Every row is written
  with a single ``write`` followed by ``flush`` and ``os.fsync``, so a killed process (even ``SIGKILL``)
  leaves at most one torn line, and only at the very end. :func:`read_rows` ignores such a line and
  :func:`repair` cuts it off so that later appends start on a fresh line.
- ``DIR/run.json``: the run manifest (suite, result key and its parts, ...), replaced atomically
  (temporary file, ``fsync``, ``os.replace``) by :func:`write_manifest`. :func:`check_manifest` refuses to
  add results to a folder whose manifest, or any of whose rows, carries another result key
  (:mod:`hearnav.bench.keys`): another suite, scene version, acoustic setting, code version or plug-in.
- ``DIR/.lock``: locked (``flock``) by :func:`lock_folder` for the whole of a run, so that a second run
  on the same folder fails at once instead of writing rows twice.

A row is an :class:`EpisodeResult`, written as a plain dict (:meth:`EpisodeResult.to_dict`). Floats that JSON cannot hold (NaN, +-inf) are stored as ``null``; NumPy scalars and
arrays are stored as Python numbers and lists. Keys containing ``"time"`` are wall-clock measurements by
convention and :func:`comparable` drops them before rows are compared.
"""

from __future__ import annotations

import contextlib
import fcntl
import json
import math
import os
import re
from collections.abc import Iterable, Iterator, Mapping
from dataclasses import dataclass, field, fields
from pathlib import Path
from types import TracebackType
from typing import Any

import numpy as np

from hearnav import files
from hearnav.bench.keys import changed_parts
from hearnav.errors import HearnavError, short_repr


EPISODES_FILE = "episodes.jsonl"
SUMMARY_FILE = "summary.json"
MANIFEST_FILE = "run.json"
DONE_STATUSES = ("ok", "failed")
MANIFEST_KEYS = ("run_key",)
LOCK_FILE = ".lock"
KEY_FIELD = "run_key"
_KEY_TEXT = re.compile(r"[0-9a-f]{1,64}")  # a key as written; anything else is shown through short_repr


class ResultsError(HearnavError):
    """A result file or run folder is corrupt, or does not match the run being started."""


#: The run folder's write errors: one line naming the folder and what to do.
OUTPUT = files.Place("results", "choose a writable --out folder",
                     "free some space there, or choose an --out folder on a disk with room", ResultsError)


@dataclass
class EpisodeResult:
    """One policy on one episode: a row of ``DIR/episodes.jsonl`` (``status`` "ok" or "failed").

    A failed row's ``error`` says why in one line: what the policy raised (``ValueError: ...``, ``policy
    exited (SystemExit 3)``), ``timed out after 600 s`` or ``worker died (exit code 7)``; rows of the last
    two hold no scores, since the episode never returned.

    Scores are in dB: the mean over the two ears of the SI-SDR against the target's early image at that ear;
    ``*_full_*`` against its full reverberant image (separation only); ``*_input_*`` of the unprocessed
    mixture. ``gain_db`` is the mean paired gain of the end pose over the start pose on the
    ``eval_windows_scored`` scored windows that follow the episode; ``mean_gain_db`` the mean over the episode's
    scored steps of S(pose_t, w_t) - S(pose_0, w_t) (how soon the gain came), ``step_gains_db`` that difference at
    each step (None where the window was not scored); ``oracle_gain_db`` the oracle
    bound's gain (:mod:`hearnav.bench.oracle`); ``normalised_gain`` is gain_db / oracle_gain_db, ``None`` when the
    bound is unknown or not above 0. ``start_*`` and ``final_*`` scores are those of the first and last windows
    heard; ``quiet_windows`` counts the episode's windows that were not scored (:mod:`hearnav.env.gating`).
    ``poses`` lists the [cell, heading] of the start and of every step, ``collided_steps`` the steps (1-based) whose
    move was blocked; ``target_category`` and ``distractor_categories`` name the episode's sounds. ``extra`` keeps fields this version does not know (rows written
    by other versions), so they survive a round trip. ``run_key`` is the result key of the run that wrote
    the row (:mod:`hearnav.bench.keys`).
    """

    policy: str
    episode_seed: int
    status: str = "ok"
    error: str | None = None
    privileged: bool = False
    episode_index: int | None = None
    scene: str | None = None
    target_cue: str | None = None  # the environment's target_cue
    oracle_gain_db: float | None = None
    start_si_sdr_db: float | None = None
    start_input_si_sdr_db: float | None = None
    start_full_si_sdr_db: float | None = None
    start_input_full_si_sdr_db: float | None = None
    final_si_sdr_db: float | None = None
    final_full_si_sdr_db: float | None = None
    best_si_sdr_db: float | None = None
    gain_db: float | None = None
    mean_gain_db: float | None = None
    step_gains_db: list | None = None
    eval_windows_scored: int | None = None
    quiet_windows: int | None = None
    episode_return: float | None = None
    normalised_gain: float | None = None
    path_length_m: float | None = None
    steps: int | None = None
    collisions: int | None = None
    final_pose: dict | None = None
    poses: list | None = None
    collided_steps: list | None = None
    target_category: str | None = None
    distractor_categories: list | None = None
    start_xy: list | None = None
    wall_time_s: float | None = None
    run_key: str | None = None
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
    with files.writing(path.parent, OUTPUT), open(path, "ab") as fh:
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
        files.make_folder(self.path.parent, OUTPUT)
        _check_tail(self.path)
        with files.writing(self.path.parent, OUTPUT):
            self._fh = open(self.path, "ab")  # unbuffered-enough: one write per row, flushed at once

    def append(self, row: Mapping[str, Any] | EpisodeResult) -> None:
        """Write one row as one line, flush and ``fsync``."""
        if self._fh is None:
            raise ResultsError(f"{self.path}: expected an open writer, got a closed one: create a new ResultWriter")
        data = encode_row(row)
        with files.writing(self.path.parent, OUTPUT):
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
        with files.writing(path.parent, OUTPUT), open(path, "ab") as fh:
            fh.write(b"\n")
            fh.flush()
            os.fsync(fh.fileno())
        return 0
    keep = len(data) - len(last) - (1 if data.endswith(b"\n") else 0)  # where the torn line starts
    with files.writing(path.parent, OUTPUT), open(path, "r+b") as fh:
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

    Raises
    ------
    ResultsError
        In one line naming the folder, when it is read-only, full or otherwise cannot be written.
    """
    text = json.dumps(_plain(dict(data)), sort_keys=True, indent=2, allow_nan=False) + "\n"
    return files.atomic_write(path, lambda fh: fh.write(text.encode("utf-8")), OUTPUT)


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


def _shown_key(found: object) -> str:
    """A result key read from a file, as shown in a message (bounded when it is not a key)."""
    return found if isinstance(found, str) and _KEY_TEXT.fullmatch(found) else short_repr(found)


def _refusal(where: str, found: object, expected: str, detail: str = "") -> ResultsError:
    """The one-line refusal to add results to a folder that holds results under another key."""
    return ResultsError(f"{where} holds results of another suite or scene version (key {_shown_key(found)}, "
                        f"expected {expected}{detail}): use a new --out folder")


def check_rows(path: str | os.PathLike, rows: Iterable[Mapping[str, Any]], key: str) -> None:
    """Make sure every row carries the result key ``key`` (rows of older versions carry none).

    Parameters
    ----------
    path : str or PathLike
        The ``episodes.jsonl`` file the rows come from, for the message.
    rows : Iterable[Mapping[str, Any]]
        Rows as read by :func:`read_rows` (row k is line k + 1).
    key : str
        This run's result key.

    Raises
    ------
    ResultsError
        Naming the first row whose ``run_key`` differs, and its key.
    """
    for number, row in enumerate(rows, start=1):
        if row.get(KEY_FIELD) != key:
            raise _refusal(f"{path} line {number}", row.get(KEY_FIELD), key)


def check_manifest(directory: str | os.PathLike, manifest: Mapping[str, Any]) -> dict:
    """Make sure ``DIR`` holds (or will hold) results under this run's result key only.

    The stored ``DIR/run.json``, if any, must record the same ``run_key``, and so must every row of
    ``DIR/episodes.jsonl`` (a deleted manifest does not let another run's rows in). Only then is a missing
    manifest written; the stored one is kept otherwise. Nothing in ``DIR`` changes when the run is refused.

    Parameters
    ----------
    directory : str or PathLike
        The run folder (the ``--out`` of the command line).
    manifest : Mapping[str, Any]
        This run's manifest; needs ``"run_key"``, and should hold its ``"key_parts"`` (the message then names
        the parts that changed) and name the ``"suite"``.

    Returns
    -------
    dict
        The manifest in force (the stored one if present).

    Raises
    ------
    ResultsError
        If the stored manifest or a row records another key, or ``manifest`` lacks a key.
    """
    missing = [key for key in MANIFEST_KEYS if key not in manifest]
    if missing:
        raise ResultsError(f"expected a run manifest with keys {list(MANIFEST_KEYS)}, got one without {missing}: "
                           f"build it with the suite's result key (Suite.result_key())")
    key = manifest["run_key"]
    stored = read_manifest(directory)
    if stored is not None and stored.get("run_key") != key:
        changed = changed_parts(stored.get("key_parts"), manifest.get("key_parts", {}))
        listed = ", ".join(changed)  # names from a stored file: bounded like short_repr
        detail = f"; changed: {listed if len(listed) <= 120 else listed[:117] + '...'}" if changed else ""
        old_code, new_code = stored.get("code_version"), manifest.get("code_version")
        if new_code is not None and old_code != new_code:
            raise ResultsError(f"{directory} holds results of another hearnav version, scored differently "
                               f"(code {short_repr(old_code, 40)}, expected {new_code}; key "
                               f"{_shown_key(stored.get('run_key'))}, expected {key}): scores of different "
                               f"versions cannot be compared; use a new --out folder")
        raise _refusal(str(directory), stored.get("run_key"), key, detail)
    rows_path = Path(directory) / EPISODES_FILE
    check_rows(rows_path, read_rows(rows_path), key)
    if stored is None:
        write_manifest(directory, manifest)
        return dict(manifest)
    return stored


@contextlib.contextmanager
def lock_folder(directory: str | os.PathLike) -> Iterator[Path]:
    """Hold an exclusive lock on a run folder (``flock`` of ``DIR/.lock``) until the block ends.

    The lock is taken without waiting: if another process holds it, :class:`ResultsError` is raised at once.
    It is released when the block ends or the process dies.

    Parameters
    ----------
    directory : str or PathLike
        The run folder; it must exist.

    Yields
    ------
    Path
        The lock file.
    """
    path = Path(directory) / LOCK_FILE
    with files.writing(directory, OUTPUT):  # an unwritable folder is one line naming it
        fd = os.open(path, os.O_RDWR | os.O_CREAT | os.O_CLOEXEC, 0o666)  # the umask decides
    try:
        try:
            fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
        except BlockingIOError:
            raise ResultsError(f"{directory} is in use by another run (expected a results folder no other run "
                               f"writes to, found {LOCK_FILE} locked): wait for that run to end or use a new "
                               f"--out folder") from None
        yield path
    finally:
        os.close(fd)  # closing the last descriptor of the open file releases the lock
