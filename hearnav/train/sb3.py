"""Load stable-baselines3 models as benchmark policies (``hearnav bench --policy ppo:DIR/best.zip``).

An SB3 .zip keeps its network weights as tensors, read with ``torch.load(weights_only=True)``, but some of its
settings (the spaces, the policy's class and keyword arguments) are cloudpickled: loading one runs code stored
in the file, so load only files you trust. The learning-rate and clip-range schedules are replaced on loading
(SB3's ``custom_objects``), so those are never unpickled.
"""

from __future__ import annotations

import functools
import os
from pathlib import Path
from typing import Any

from hearnav.errors import PolicyError, exception_line, shown_path

#: Settings an inference-only model never needs, given instead of unpickled.
_NOT_UNPICKLED = {"learning_rate": 0.0, "lr_schedule": lambda _: 0.0, "clip_range": lambda _: 0.0,
                  "clip_range_vf": None}


def require_train_extra(what: str) -> None:
    """PolicyError unless torch and stable-baselines3 can be imported."""
    try:
        import stable_baselines3  # noqa: F401
        import torch  # noqa: F401
    except ImportError as exc:
        raise PolicyError(f"{what} needs torch and stable-baselines3, which are not installed ({exc}); install "
                          f"the train extra: pip install 'hearnav[train]'") from None


def algorithm(name: str) -> Any:
    """The SB3 algorithm class called ``name`` (PPO, A2C, DQN)."""
    import stable_baselines3

    return getattr(stable_baselines3, name)


@functools.lru_cache(maxsize=4)
def _cached(path: str, stamp: tuple[int, int], algo: str) -> Any:
    import torch

    torch.set_num_threads(1)
    try:
        return algorithm(algo).load(path, device="cpu", custom_objects=_NOT_UNPICKLED)
    except Exception as exc:  # a damaged or foreign file: one line naming it
        raise PolicyError(f"cannot load {shown_path(path)} as an SB3 {algo} model ({exception_line(exc)}); "
                          f"expected a .zip saved by {algo}.save()") from None


def load_model(path: str | os.PathLike, algo: str = "PPO") -> Any:
    """The SB3 model saved at ``path``, read once per process while the file is unchanged (the benchmark's
    workers make the policy once per episode)."""
    require_train_extra(f"loading the SB3 model {shown_path(path)}")
    try:
        st = os.stat(path)
    except FileNotFoundError:
        raise PolicyError(f"SB3 model {shown_path(path)} not found (expected a .zip saved by training, e.g. "
                          f"DIR/best.zip)") from None
    if not Path(path).is_file():
        raise PolicyError(f"SB3 model {shown_path(path)} is not a file (expected a .zip, e.g. DIR/best.zip)")
    return _cached(str(Path(path).resolve()), (st.st_mtime_ns, st.st_size), algo)


#: Reference prefixes of saved SB3 models and their algorithms.
ALGORITHMS = {"ppo": "PPO", "a2c": "A2C", "dqn": "DQN"}
#: Every prefix of a model file reference: SB3 models, and ``npz:`` for an exported network.
PREFIXES = (*ALGORITHMS, "npz")


def model_policy(reference: str) -> Any:
    """The deterministic, non-privileged policy of a reference ``ppo:PATH`` (also ``a2c:``, ``dqn:``), or
    ``npz:PATH`` for a network exported to .npz (run in numpy, no torch)."""
    prefix, _, path = reference.partition(":")
    if not path:
        example = "agent.npz" if prefix == "npz" else "model.zip"
        raise PolicyError(f"policy {reference!r} names no file (expected {prefix}:path/to/{example})")
    if prefix == "npz":
        from hearnav.train.numpy_policy import NumpyPolicy

        return NumpyPolicy(path)
    from hearnav.bench.policy import SB3Policy

    return SB3Policy(load_model(path, ALGORITHMS[prefix]), deterministic=True)
