"""hearnav: binaural listening worlds from 2-D floorplans, for agents that move to help a separator."""

from hearnav.errors import ConfigError, HearnavError, PolicyError, SceneError, SeparatorError, SoundError

__version__ = "0.1.0"

__all__ = ["ConfigError", "HearnavError", "PolicyError", "SceneError", "SeparatorError", "SoundError", "__version__"]
