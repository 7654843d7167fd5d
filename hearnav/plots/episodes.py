"""Episodes of a run rebuilt from its suite and seed: where the sources stood, the scene and its grid."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from hearnav.errors import ConfigError, shown_path
from hearnav.plots.rundata import Run

#: The stand-off ring radius (m) when the environment's options do not name one.
DEFAULT_STANDOFF_M = 1.0


@dataclass(frozen=True)
class SourceMark:
    """One source of an episode as drawn: its role, spot name, category and (2,) position in metres."""

    role: str
    spot: str
    category: str
    xy: np.ndarray


def run_suite(run: Run, suite_arg: str | None = None):
    """The suite a run was made with: ``--suite`` if given, else the manifest's suite name; it must match the
    manifest's digest, so that rebuilt episodes are the run's episodes."""
    from hearnav.bench.suites import load_suite

    name = suite_arg or run.manifest.get("suite")
    if not name:
        raise ConfigError(f"RUN_DIR {shown_path(str(run.folder))}: expected run.json naming the run's suite, found "
                          f"none; give the suite with --suite NAME_OR_YAML")
    suite = load_suite(str(name))
    stored = run.manifest.get("suite_hash")
    if stored is not None and stored != suite.digest():
        raise ConfigError(f"suite {str(name)[:80]!r}: expected the suite this run used (digest {str(stored)[:16]}), "
                          f"found digest {suite.digest()} (the suite or its options changed); give the run's suite "
                          f"file with --suite")
    return suite


def make_env(suite):
    """An environment with the suite's options (no rendering)."""
    from hearnav.env import HearNavEnv

    return HearNavEnv(suite.env_config())


def standoff_m(env) -> float:
    """The stand-off ring radius of the environment's options."""
    return float(getattr(env.config, "standoff_m", DEFAULT_STANDOFF_M))


def sources_of(env) -> list[SourceMark]:
    """The current episode's sources, the target first."""
    scene = env.world.scene
    return [SourceMark(s.role, scene.spots[s.spot].name, s.category, scene.spots[s.spot].position[:2].copy())
            for s in env.plan.sources]


def reset_episode(env, seed: int, scene: str | None = None) -> None:
    """Reset ``env`` to an episode seed; raises if the rebuilt episode is not in the row's scene."""
    env.reset(seed=int(seed))
    if scene is not None and env.plan.scene != scene:
        raise ConfigError(f"episode seed {seed}: expected scene {scene!r} as the row says, found {env.plan.scene!r} "
                          f"when rebuilt (the suite's scenes changed); give the run's suite file with --suite")
