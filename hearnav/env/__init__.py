"""The listening environment: episodes, observations, reward, privileged access, rendering."""

from hearnav.env.config import EnvConfig, make_config
from hearnav.env.core import ACTION_NAMES, HearNavEnv, InvalidActionError
from hearnav.env.privileged import PrivilegedView
from hearnav.env.wrappers import FlatObservation

ENV_ID = "hearnav/HearNav-v0"

__all__ = ["ACTION_NAMES", "ENV_ID", "EnvConfig", "FlatObservation", "HearNavEnv", "InvalidActionError",
           "PrivilegedView", "make_config"]
