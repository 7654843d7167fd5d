"""A feature extractor for the environment's Dict observation: a small CNN on each (C, H, W) key (the map and
the band-level tensors), flattening for the rest; generic over the keys and shapes of the space."""

from __future__ import annotations

from typing import Any

import torch
from gymnasium import spaces
from stable_baselines3.common.torch_layers import BaseFeaturesExtractor
from torch import nn


def conv_stack(channels: int, filters: list[int]) -> nn.Sequential:
    """3 x 3 convolutions (stride 1, zero padding 1, so each keeps the height and width), each followed by ReLU,
    then a flatten."""
    layers: list[nn.Module] = []
    for out in filters:
        layers += [nn.Conv2d(channels, out, kernel_size=3, padding=1), nn.ReLU()]
        channels = out
    return nn.Sequential(*layers, nn.Flatten())


class ConvExtractor(BaseFeaturesExtractor):
    """Each key with a 3-D shape through :func:`conv_stack`, every other key flattened; all concatenated in the
    space's key order."""

    def __init__(self, observation_space: spaces.Dict, filters: list[int] | None = None):
        filters = list(filters or [8, 8])
        extractors: dict[str, nn.Module] = {}
        width = 0
        for key, space in observation_space.spaces.items():
            shape = space.shape
            if len(shape) == 3:
                extractors[key] = conv_stack(shape[0], filters)
                width += filters[-1] * shape[1] * shape[2] if filters else int(torch.tensor(shape).prod())
            else:
                extractors[key] = nn.Flatten()
                width += int(torch.tensor(shape).prod())
        super().__init__(observation_space, features_dim=width)
        self.extractors = nn.ModuleDict(extractors)

    def forward(self, observations: Any) -> torch.Tensor:
        return torch.cat([module(observations[key]) for key, module in self.extractors.items()], dim=1)
