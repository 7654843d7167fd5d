"""A feature extractor for the environment's Dict observation: each key scaled from its Box bounds to [-1, 1],
then a small CNN on each (C, H, W) key (the map and the band-level tensors) or flattened; generic over the keys
and shapes of the space."""

from __future__ import annotations

from typing import Any

import numpy as np
import torch
from gymnasium import spaces
from stable_baselines3.common.torch_layers import BaseFeaturesExtractor
from torch import nn


def box_scale(space: spaces.Box) -> tuple[np.ndarray, np.ndarray]:
    """The affine map that takes a bounded Box to [-1, 1]: ``x * gain + offset``, elementwise.

    Parameters
    ----------
    space : Box with finite bounds, of shape S

    Returns
    -------
    gain, offset : ndarray, S, float32; 2 / (high - low) and -(high + low) / (high - low), or 1 and 0 where the
        bounds are infinite or equal (such elements are passed on unscaled)
    """
    low, high = np.broadcast_to(space.low, space.shape), np.broadcast_to(space.high, space.shape)
    width = high.astype(np.float64) - low
    ok = np.isfinite(width) & (width > 0)
    gain = np.where(ok, 2.0 / np.where(ok, width, 1.0), 1.0)
    offset = np.where(ok, -(high.astype(np.float64) + low) / np.where(ok, width, 1.0), 0.0)
    return gain.astype(np.float32), offset.astype(np.float32)


def conv_stack(channels: int, filters: list[int]) -> nn.Sequential:
    """3 x 3 convolutions (stride 1, zero padding 1, so each keeps the height and width), each followed by ReLU,
    then a flatten."""
    layers: list[nn.Module] = []
    for out in filters:
        layers += [nn.Conv2d(channels, out, kernel_size=3, padding=1), nn.ReLU()]
        channels = out
    return nn.Sequential(*layers, nn.Flatten())


class ScaledExtractor(BaseFeaturesExtractor):
    """Each key read (``keys``, None: all) scaled to [-1, 1] by its bounds (:func:`box_scale`, when ``scale``), then
    through :func:`conv_stack` if it has a 3-D shape and ``filters`` are given, else flattened; all concatenated in
    the space's key order.

    Raw band levels span -120 to +40 dB; unscaled, they saturate a tanh network's first layer and drown the
    small inputs (the target cue, the map), so scaling is the default.
    """

    def __init__(self, observation_space: spaces.Dict, filters: list[int] | None = None, scale: bool = True,
                 keys: list[str] | None = None):
        filters = list(filters or [])
        extractors: dict[str, nn.Module] = {}
        width = 0
        read = {k: v for k, v in observation_space.spaces.items() if keys is None or k in keys}
        for key, space in read.items():
            shape = space.shape
            if len(shape) == 3 and filters:
                extractors[key] = conv_stack(shape[0], filters)
                width += filters[-1] * shape[1] * shape[2]
            else:
                extractors[key] = nn.Flatten()
                width += int(np.prod(shape))
        super().__init__(observation_space, features_dim=width)
        self.extractors = nn.ModuleDict(extractors)
        for j, space in enumerate(read.values()):  # buffers by index: keys may hold dots
            gain, offset = box_scale(space) if scale else (np.ones(space.shape, np.float32),
                                                           np.zeros(space.shape, np.float32))
            self.register_buffer(f"gain_{j}", torch.as_tensor(gain))
            self.register_buffer(f"offset_{j}", torch.as_tensor(offset))

    def scale_of(self, key: str) -> tuple[np.ndarray, np.ndarray]:
        """The (gain, offset) arrays applied to ``key``."""
        j = list(self.extractors).index(key)
        return getattr(self, f"gain_{j}").cpu().numpy(), getattr(self, f"offset_{j}").cpu().numpy()

    def forward(self, observations: Any) -> torch.Tensor:
        return torch.cat([module(observations[key] * getattr(self, f"gain_{j}") + getattr(self, f"offset_{j}"))
                          for j, (key, module) in enumerate(self.extractors.items())], dim=1)
