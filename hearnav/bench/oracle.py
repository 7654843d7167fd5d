"""The oracle bound: the best gain any policy could make by where it ends an episode.

The benchmark scores an episode's end pose and its start pose on the same ``eval_windows`` windows that follow
the episode (:meth:`hearnav.env.HearNavEnv.scores_ahead`); the gain is the mean paired difference over those of
them that are scored. The bound is the best such gain over every (cell, heading) reachable from the start within
the budget (breadth-first over the grid with the environment's four actions). Because each pose is judged by its
mean over several windows, the bound carries no inflation from picking the luckiest single window, and a
policy's gain never exceeds it. Windows are scored after their cross-fade, so a pose's score at a given time does
not depend on the path to it.
"""

from __future__ import annotations

import json
from collections import deque
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from hearnav import files
from hearnav.env import Action, HearNavEnv
from hearnav.errors import exception_line, short_repr

PLACE = files.cache_place("the oracle bounds")
# Most bytes of an oracle file (about 30 per episode: far more than any suite's episodes).
_MAX_BYTES = 1 << 24


def pose_steps(view, start: tuple[int, int], steps: int | None) -> dict[tuple[int, int], int]:
    """Fewest actions from ``start`` to each pose reachable in at most ``steps`` actions (None: any number)."""
    seen = {start: 0}
    queue = deque([start])
    while queue:
        pose = queue.popleft()
        if steps is not None and seen[pose] == steps:
            continue
        for action in Action:
            nxt = view.next_pose(*pose, action)
            if nxt not in seen:
                seen[nxt] = seen[pose] + 1
                queue.append(nxt)
    return seen


def reachable(view, start: tuple[int, int], steps: int) -> list[tuple[int, int]]:
    """Poses reachable from ``start`` in at most ``steps`` actions."""
    return list(pose_steps(view, start, steps))


def paired_gains(scores: np.ndarray, reference: int) -> tuple[np.ndarray, int]:
    """Mean paired gain of each pose over the scored windows.

    Parameters
    ----------
    scores : (K, P) scores in dB of P poses on K windows, NaN in a window that is not scored.
    reference : index of the start pose among the P.

    Returns
    -------
    (P,) mean over the scored windows of score - the start pose's score (zeros when no window is scored), and
    the number of scored windows.
    """
    scored = ~np.isnan(scores[:, reference])
    if not scored.any():
        return np.zeros(scores.shape[1]), 0
    return np.mean(scores[scored] - scores[scored, reference:reference + 1], axis=0), int(scored.sum())


@dataclass(frozen=True)
class Bound:
    """An episode's bound: the best gain within the budget, its pose, and the best pose with no step limit."""

    gain_db: float
    pose: tuple[int, int]
    steps: int
    best_pose: tuple[int, int]
    best_steps: int
    best_gain_db: float
    scored_windows: int


def episode_bound(env: HearNavEnv, episode_seed: int, any_steps: bool = False) -> Bound:
    """The bound of one episode (:data:`Bound`); ``any_steps`` also searches poses beyond the budget (the
    validity report asks whether the best pose lies within the budget)."""
    env.reset(seed=episode_seed)
    cfg = env.config
    start = (env.cell, env.heading)
    steps = pose_steps(env.privileged, start, None if any_steps else cfg.budget)
    poses = list(steps)
    gains, scored = paired_gains(env.scores_ahead(poses, cfg.eval_windows, offset=cfg.budget), poses.index(start))
    within = np.array([steps[p] <= cfg.budget for p in poses])
    best_within = int(np.argmax(np.where(within, gains, -np.inf)))
    best_any = int(np.argmax(gains))
    return Bound(float(gains[best_within]), poses[best_within], steps[poses[best_within]], poses[best_any],
                 steps[poses[best_any]], float(gains[best_any]), scored)


def oracle_bound(env: HearNavEnv, episode_seed: int) -> float:
    """Best gain (dB) over every pose reachable within the budget (:func:`episode_bound`)."""
    return episode_bound(env, episode_seed).gain_db


class OracleCache:
    """Oracle bounds of a suite's episodes, kept in one JSON file named by the suite's result key
    (:meth:`Suite.result_key`), so that a changed scene, setting, code or plug-in never reuses a bound.

    An unreadable or inconsistent file is reported in one line and its bounds are computed again.
    """

    def __init__(self, folder: Path, key: str, report: Callable[[str], None] = files.note):
        self.path = Path(folder) / f"oracle-{key}.json"
        self.values: dict[str, float] = _read_values(self.path, report)

    def get(self, episode_seed: int) -> float | None:
        return self.values.get(str(episode_seed))

    def put(self, episode_seed: int, value: float) -> None:
        """Record a bound and rewrite the file atomically."""
        self.values[str(episode_seed)] = value
        text = json.dumps(self.values, sort_keys=True).encode()
        files.atomic_write(self.path, lambda f: f.write(text), PLACE)


def _read_values(path: Path, report: Callable[[str], None]) -> dict[str, float]:
    """The bounds in an oracle file, or none (reported) when it is missing, unreadable or not bounds."""
    try:
        with open(path, "rb") as f:
            data = f.read(_MAX_BYTES + 1)
        if len(data) > _MAX_BYTES:
            raise ValueError(f"over {_MAX_BYTES} bytes")
        values = json.loads(data)
        if not isinstance(values, dict):
            raise ValueError(f"a JSON {type(values).__name__}, not an object")
        for seed, value in values.items():
            if not seed.isdigit() or isinstance(value, bool) or not isinstance(value, (int, float)):
                raise ValueError(f"entry {short_repr(seed, 30)}: {short_repr(value, 30)} is not seed: bound")
    except FileNotFoundError:
        return {}
    except Exception as exc:  # a truncated or damaged file: any failure to parse it
        report(f"{path}: unreadable oracle file (expected a JSON object of episode seed: bound, got "
               f"{exception_line(exc, 100)}); recomputing")
        return {}
    return {seed: float(value) for seed, value in values.items()}
