"""The listening environment: episodes, observations, reward, privileged access, frames for env.render()."""

from hearnav.env.actions import ACTION_NAMES, Action, next_pose
from hearnav.env.config import EnvConfig, make_config
from hearnav.env.core import HearNavEnv, InvalidActionError
from hearnav.env.embodiment import Embodiment
from hearnav.env.privileged import PrivilegedView
from hearnav.env.wrappers import FlatObservation

ENV_ID = "hearnav/HearNav-v0"

__all__ = ["ACTION_NAMES", "ENV_ID", "Action", "Embodiment", "EnvConfig", "FlatObservation", "HearNavEnv",
           "InvalidActionError", "PrivilegedView", "make_config", "next_pose"]
