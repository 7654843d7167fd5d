"""Agents shipped with hearnav: trained networks exported to plain .npz files, run in numpy (no torch).

Each ``NAME.npz`` here has a ``NAME.json`` beside it recording how it was made (command, seed, steps, config).
"""

from __future__ import annotations

from pathlib import Path

from hearnav.bench.registry import register_policy
from hearnav.train.numpy_policy import NumpyPolicy

FOLDER = Path(__file__).resolve().parent


def shipped(name: str) -> type:
    """A policy class that runs the shipped network ``NAME.npz`` (made with no arguments, as the registry does)."""

    class Shipped(NumpyPolicy):
        __doc__ = f"The shipped agent {name!r} ({name}.npz in hearnav/train/agents), run in numpy; not privileged."

        def __init__(self):
            super().__init__(FOLDER / f"{name}.npz")

    Shipped.__name__ = Shipped.__qualname__ = f"Shipped_{name.replace('-', '_')}"
    return Shipped


PPO_TINY = register_policy("ppo-tiny", shipped("ppo-tiny"))
