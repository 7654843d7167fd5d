"""The oracle bound: the best separator score any policy could reach at the end of an episode.

Windows are scored after their cross-fade, so a pose's score at a given time does not depend on the path to
it. The bound is the best score of the final window over every (cell, heading) reachable from the start
within the budget (breadth-first over the grid with the environment's four actions). A policy's final
SI-SDR is the score of its final pose in that window, so it never exceeds the bound when the target sounds
in the final window (suites choose targets that sound continuously).
"""

from __future__ import annotations

import json
from collections import deque
from collections.abc import Callable
from pathlib import Path

from hearnav import files
from hearnav.env import Action, HearNavEnv
from hearnav.errors import exception_line, short_repr

PLACE = files.cache_place("the oracle bounds")
# Most bytes of an oracle file (about 30 per episode: far more than any suite's episodes).
_MAX_BYTES = 1 << 24


def reachable(view, start: tuple[int, int], steps: int) -> list[tuple[int, int]]:
    """Poses reachable from ``start`` in at most ``steps`` actions."""
    seen = {start: 0}
    queue = deque([start])
    while queue:
        pose = queue.popleft()
        if seen[pose] == steps:
            continue
        for action in Action:
            nxt = view.next_pose(*pose, action)
            if nxt not in seen:
                seen[nxt] = seen[pose] + 1
                queue.append(nxt)
    return list(seen)


def oracle_bound(env: HearNavEnv, episode_seed: int) -> float:
    """Best final-window SI-SDR (dB) over every pose reachable within the budget."""
    env.reset(seed=episode_seed)
    start = (env.cell, env.heading)
    for _ in range(env.config.budget - 1):  # advance time to the final window without moving
        env.step(Action.STAY)
    view = env.privileged
    best = -float("inf")
    for pose in reachable(view, start, env.config.budget):
        score = view.score_or_none(*pose)
        if score is not None and score > best:
            best = score
    return best


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
