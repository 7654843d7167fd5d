"""One arrangement of sources (a target and distractors at named spots), set up in the environment without a run,
for ``hearnav score-map``."""

from __future__ import annotations

import dataclasses
from collections.abc import Sequence

from hearnav.env.episode import SourcePlan, allowed_categories
from hearnav.errors import ConfigError


def _category(scene, spot: int, options: Sequence[str], wanted: str | None, role: str) -> str:
    """The category a spot plays: ``wanted`` if the spot accepts it, else the first the spot accepts."""
    allowed = allowed_categories(scene, spot, list(options))
    name = scene.spots[spot].name
    if not allowed:
        raise ConfigError(f"--{role} {name!r}: expected a spot that accepts one of {', '.join(options)}, found one "
                          f"that accepts none of them; choose another spot")
    if wanted is None:
        return allowed[0]
    if wanted not in allowed:
        raise ConfigError(f"--{role}-category {wanted!r}: expected a category spot {name!r} accepts "
                          f"({', '.join(allowed)}); choose one of those")
    return wanted


def spot_indices(scene, target: str, distractors: Sequence[str]) -> list[int]:
    """The spot indices of the target and the distractors; raises one line for an unknown or repeated name."""
    names = [target, *distractors]
    if len(set(names)) != len(names):
        raise ConfigError(f"--target and --distractor: expected different spots, found {', '.join(names)}; name "
                          f"each spot once")
    return [scene.spots.index(scene.spot(n)) for n in names]  # an unknown name lists the scene's spots


def arrange(env, target: str, distractors: Sequence[str], target_category: str | None = None,
            distractor_category: str | None = None, seed: int = 0) -> None:
    """Start an episode of ``env`` (made on one scene) with the target and distractors at the named spots, at
    0 dB each; the sounds' voices and takes come from the episode drawn with ``seed``."""
    env.reset(seed=seed)  # loads the world and draws voices, takes and a start pose
    scene = env.world.scene
    spots = spot_indices(scene, target, distractors)
    cfg = env.config
    drawn = env.plan.sources
    plans = []
    for k, spot in enumerate(spots):
        role = "target" if k == 0 else "distractor"
        options = (cfg.target_categories or cfg.sound_categories) if k == 0 else cfg.sound_categories
        category = _category(scene, spot, options, target_category if k == 0 else distractor_category, role)
        like = drawn[min(k, len(drawn) - 1)]
        plans.append(SourcePlan(spot, category, cfg.sound_pool, 0, like.take, like.offset, 0.0, role))
    env.start_plan(dataclasses.replace(env.plan, sources=tuple(plans)))
