"""The oracle bound: the best separator score any policy could reach at the end of an episode.

Windows are scored after their cross-fade, so a pose's score at a given time does not depend on the path to
it. The bound is the best score of the final window over every (cell, heading) reachable from the start
within the budget (breadth-first over the grid with the environment's four actions). A policy's final
SI-SDR is the score of its final pose in that window, so it never exceeds the bound when the target sounds
in the final window (suites choose targets that sound continuously).
"""

from __future__ import annotations

import json
import os
import tempfile
from collections import deque
from pathlib import Path

from hearnav.env import Action, HearNavEnv


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
    (:meth:`Suite.result_key`), so that a changed scene, setting, code or plug-in never reuses a bound."""

    def __init__(self, folder: Path, key: str):
        self.path = Path(folder) / f"oracle-{key}.json"
        self.values: dict[str, float] = json.loads(self.path.read_text()) if self.path.exists() else {}

    def get(self, episode_seed: int) -> float | None:
        return self.values.get(str(episode_seed))

    def put(self, episode_seed: int, value: float) -> None:
        """Record a bound and rewrite the file atomically."""
        self.values[str(episode_seed)] = value
        self.path.parent.mkdir(parents=True, exist_ok=True)
        fd, tmp = tempfile.mkstemp(dir=self.path.parent, suffix=".tmp")
        with os.fdopen(fd, "w") as f:
            json.dump(self.values, f, sort_keys=True)
            f.flush()
            os.fsync(f.fileno())
        os.replace(tmp, self.path)
