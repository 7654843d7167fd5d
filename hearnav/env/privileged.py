"""Privileged answers about an episode, for reference policies and the oracle bound; never observed by agents."""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from hearnav.env.actions import next_pose

if TYPE_CHECKING:
    from hearnav.env.core import HearNavEnv


class PrivilegedView:
    """What the environment knows and the agent does not.

    Every answer is marked privileged: a policy that uses it is a reference, not an agent. The view reads the
    environment only through its public methods.
    """

    privileged = True

    def __init__(self, env: HearNavEnv):
        self._env = env

    @property
    def grid(self):
        """The scene's navigable grid."""
        return self._env.world.grid

    @property
    def pose(self) -> tuple[int, int]:
        """The listener's (cell, heading)."""
        return self._env.cell, self._env.heading

    @property
    def target_xy(self) -> np.ndarray:
        """(2,) position of the target spot in metres."""
        env = self._env
        return env.world.scene.spots[env.plan.sources[0].spot].position[:2].copy()

    @property
    def steps_left(self) -> int:
        """Steps left in the budget."""
        return self._env.config.budget - self._env.steps

    def next_pose(self, cell: int, heading: int, action: int) -> tuple[int, int]:
        """The pose an action leads to (a forward move blocked by a wall or the stand-off ring keeps the pose):
        :func:`hearnav.env.actions.next_pose`."""
        return next_pose(self._env.moves, cell, heading, action)[:2]

    def score(self, cell: int, heading: int) -> float:
        """The separator's score (dB) at a pose for the window the next step will hear, without moving.

        Where the target is silent in that window there is no SI-SDR; the current score is returned, as the
        environment would keep it.
        """
        score = self.score_or_none(cell, heading)
        return self._env.si_sdr_db if score is None else score

    def score_or_none(self, cell: int, heading: int) -> float | None:
        """:meth:`score`, or None where the target is silent in that window."""
        env = self._env
        return env.score_window(env.peek(cell, heading), cell, heading)[1]

    def scores(self, poses: list[tuple[int, int]]) -> np.ndarray:
        """:meth:`score` of several poses, (len(poses),)."""
        return np.array([self.score(c, h) for c, h in poses])

    def scores_ahead(self, poses: list[tuple[int, int]], n_windows: int | None = None) -> np.ndarray:
        """(n_windows, len(poses)) scores (dB) of poses on the next ``n_windows`` windows (default the
        environment's ``eval_windows``), starting with the one the next step will hear; NaN where a window is
        not scored (:meth:`hearnav.env.HearNavEnv.scores_ahead`)."""
        env = self._env
        return env.scores_ahead(poses, env.config.eval_windows if n_windows is None else n_windows)

    def last_audio(self) -> dict[str, np.ndarray]:
        """The last window in full, its cross-fade included, for listening: the binaural mixture, the separator's
        estimate over the whole window and the target's early image, each (2, window_len) and sample-aligned."""
        env = self._env
        window = env.heard.window
        ctx = env.context(env.cell, env.heading, window)
        return {"mixture": window.mixture.copy(), "reference": window.early.copy(),
                "estimate": np.asarray(env.separator(window.mixture, ctx, trusted=True), np.float32).copy()}

    def last_window(self) -> dict[str, np.ndarray]:
        """What was heard in the last window: the binaural mixture (2, n), and over its scored part the
        separator's estimate (2, m), the target's early image (2, m, the reference) and its full image (2, m)."""
        heard = self._env.heard
        return {"mixture": heard.window.mixture.copy(), "estimate": np.asarray(heard.estimate).copy(),
                "reference": heard.scored.early.copy(), "full_image": heard.scored.target_image.copy()}
