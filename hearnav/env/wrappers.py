"""Wrappers for policies that want one observation vector."""

from __future__ import annotations

from gymnasium.wrappers import FlattenObservation


class FlatObservation(FlattenObservation):
    """The environment's Dict observation flattened into one float32 vector (keys in sorted order)."""
