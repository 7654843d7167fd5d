"""hearnav: binaural listening worlds from 2-D floorplans, for agents that move to help a separator."""

import gymnasium as _gym

from hearnav.errors import ConfigError, HearnavError, PolicyError, SceneError, SeparatorError, SoundError
from hearnav.separation.metrics import si_sdr

__version__ = "0.1.0"

ENV_ID = "hearnav/HearNav-v0"
# gymnasium 1.x no longer loads plug-in entry points, so the environment registers itself on import.
if ENV_ID not in _gym.registry:
    _gym.register(id=ENV_ID, entry_point="hearnav.env.core:HearNavEnv", max_episode_steps=None)


def __getattr__(name: str):
    if name == "HearNavEnv":  # imported lazily: the environment pulls in the acoustics stack
        from hearnav.env.core import HearNavEnv

        return HearNavEnv
    if name == "register_policy":
        from hearnav.bench.registry import register_policy

        return register_policy
    raise AttributeError(f"module 'hearnav' has no attribute {name!r}")


__all__ = ["ENV_ID", "ConfigError", "HearNavEnv", "register_policy", "HearnavError", "PolicyError", "SceneError", "SeparatorError",
           "SoundError", "__version__", "si_sdr"]
