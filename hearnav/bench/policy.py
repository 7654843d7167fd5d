"""The policy protocol, and an adapter for stable-baselines3 models.

A policy is any object with

- ``reset(observation, info) -> None``, called at the start of every episode;
- ``act(observation, info) -> int``, called on every step, returning an action of the environment.

``info`` is the environment's info dict plus two keys the benchmark adds: ``"seed"``, an integer for the
policy's own randomness in this episode (derived from the episode seed, so reruns repeat), and, only for a
policy whose ``privileged`` attribute is true, ``"privileged"``: the environment's
:class:`~hearnav.env.privileged.PrivilegedView`. A policy that uses it is a reference, not an agent, and is
marked privileged in every result.
"""

from __future__ import annotations

import inspect
from collections.abc import Callable
from typing import Any, Protocol, runtime_checkable

import numpy as np

from hearnav.errors import PolicyError, exception_line, short_repr, shown_path


@runtime_checkable
class Policy(Protocol):
    """What the benchmark drives."""

    def reset(self, observation: dict, info: dict) -> None: ...

    def act(self, observation: dict, info: dict) -> int: ...


def is_privileged(policy: Any) -> bool:
    """Whether a policy asks for privileged access."""
    return bool(getattr(policy, "privileged", False))


class SB3Policy:
    """Drive any object with stable-baselines3's ``predict(observation, state, episode_start, deterministic)``.

    ``flatten`` turns the Dict observation into one vector first (for models trained on
    :class:`hearnav.env.FlatObservation`); by default it follows the model's observation space.
    """

    privileged = False

    def __init__(self, model: Any, deterministic: bool = True, flatten: bool | None = None):
        if not callable(getattr(model, "predict", None)):
            raise PolicyError(f"an SB3-style policy needs a predict(observation, state, episode_start, "
                              f"deterministic) method (got {type(model).__name__} without one)")
        self.model, self.deterministic = model, deterministic
        space = getattr(model, "observation_space", None)
        self.flatten = flatten if flatten is not None else (space is not None and not hasattr(space, "spaces"))
        self._state, self._start = None, True

    def _prepare(self, observation: dict) -> Any:
        if self.flatten:
            return np.concatenate([np.asarray(observation[k], np.float32).ravel() for k in sorted(observation)])
        keys = getattr(getattr(self.model, "observation_space", None), "spaces", None)
        if keys is None:
            return observation
        missing = [k for k in keys if k not in observation]
        if missing:
            raise PolicyError(f"the model reads the observation keys {', '.join(keys)}, but the observation lacks "
                              f"{', '.join(missing)}; train the model on this environment")
        return {k: observation[k] for k in keys}  # keys the model was not trained on are not passed

    def reset(self, observation: dict, info: dict) -> None:
        self._state, self._start = None, True

    def act(self, observation: dict, info: dict) -> int:
        action, self._state = self.model.predict(self._prepare(observation), state=self._state,
                                                 episode_start=np.array([self._start]),
                                                 deterministic=self.deterministic)
        self._start = False
        return int(np.asarray(action).reshape(-1)[0])


def _make(maker: Callable[[], Any], role: str, reference: str | None) -> Any:
    """``maker()``; a policy's own exception becomes one PolicyError line naming the policy and the exception."""
    try:
        return maker()
    except Exception as exc:  # the policy's code, not hearnav's: report it in one line
        name = shown_path(reference) if reference is not None else short_repr(getattr(maker, "__qualname__", maker))
        raise PolicyError(f"policy {name} could not be made: its {role} raised {exception_line(exc)} "
                          f"(fix the policy)") from None


def _takes_no_arguments(cls: type) -> bool:
    try:
        inspect.signature(cls).bind()
    except TypeError:
        return False
    except ValueError:  # no signature to read (some built-in types): let the call decide
        return True
    return True


def as_policy(obj: Any, reference: str | None = None) -> Any:
    """A policy from a policy, an SB3-style model, a class (instantiated with no arguments) or a factory;
    ``reference`` (how the user named it) is quoted when making it fails."""
    if isinstance(obj, type):
        if not _takes_no_arguments(obj):
            raise PolicyError(f"policy class {obj.__name__} must take no arguments (got the signature "
                              f"{short_repr(str(inspect.signature(obj)), 80)}); give it defaults or use a factory")
        obj = _make(obj, "constructor", reference)
    if callable(getattr(obj, "act", None)) and callable(getattr(obj, "reset", None)):
        return obj
    if callable(getattr(obj, "predict", None)):
        return SB3Policy(obj)
    if callable(obj):
        made = _make(obj, "factory", reference)
        if callable(getattr(made, "act", None)) or callable(getattr(made, "predict", None)):
            return as_policy(made, reference)
        raise PolicyError(f"policy factory {getattr(obj, '__name__', short_repr(obj))!r} returned "
                          f"{type(made).__name__}, expected an object with reset() and act(), or predict()")
    raise PolicyError(f"expected a policy (reset() and act()), an SB3-style model (predict()), a class or a "
                      f"factory; got {type(obj).__name__}")
