"""Export a stable-baselines3 policy network to the plain .npz of :mod:`hearnav.train.numpy_policy`."""

from __future__ import annotations

import os
from typing import Any

import numpy as np

from hearnav.errors import PolicyError
from hearnav.train.numpy_policy import FORMAT


def _linear_chain(module: Any) -> tuple[list[Any], str | None]:
    """The Linear layers of a Sequential of Linear/activation pairs, and the activation's name."""
    from torch import nn

    names = {nn.Tanh: "tanh", nn.ReLU: "relu"}
    layers, activation = [], None
    for part in module:
        if isinstance(part, nn.Linear):
            layers.append(part)
        elif type(part) in names and activation in (None, names[type(part)]):
            activation = names[type(part)]
        else:
            raise PolicyError(f"the policy network has a {type(part).__name__} layer (expected Linear layers with "
                              f"one activation, {', '.join(names.values())}); train with the MLP of hearnav's config")
    return layers, activation


def _conv_arrays(key: str, module: Any) -> dict[str, np.ndarray]:
    """The arrays of one key's :func:`hearnav.train.extractor.conv_stack` (3 x 3, stride 1, padding 1, ReLU)."""
    from torch import nn

    out, convs = {}, [m for m in module if isinstance(m, nn.Conv2d)]
    for j, conv in enumerate(convs):
        if conv.kernel_size != (3, 3) or conv.stride != (1, 1) or conv.padding != (1, 1):
            raise PolicyError(f"convolution {j} of key {key!r} is {conv} (expected 3 x 3, stride 1, padding 1 as "
                              f"hearnav's cnn extractor makes); only such networks export")
        out[f"conv/{key}/{j}/weight"] = conv.weight.detach().cpu().numpy().astype(np.float32)
        out[f"conv/{key}/{j}/bias"] = conv.bias.detach().cpu().numpy().astype(np.float32)
    return out


def network_arrays(model: Any) -> dict[str, np.ndarray]:
    """The arrays of the .npz for an SB3 model with a MultiInputPolicy whose extractor flattens each key or runs
    hearnav's cnn extractor on it (with hearnav's extractor, each key's input scaling too)."""
    from torch import nn

    policy = model.policy
    extractor = policy.pi_features_extractor
    keys = list(getattr(extractor, "extractors", {}).keys())
    if not keys or any(not isinstance(extractor.extractors[k], (nn.Flatten, nn.Sequential)) for k in keys):
        raise PolicyError(f"the policy's feature extractor is {type(extractor).__name__} (expected "
                          f"MultiInputPolicy's CombinedExtractor or hearnav's ScaledExtractor); only such networks "
                          f"export")
    hidden, activation = _linear_chain(policy.mlp_extractor.policy_net)
    out: dict[str, np.ndarray] = {"format": np.array(FORMAT), "keys": np.array(keys),
                                  "activation": np.array(activation or "relu")}
    for k in keys:
        out[f"shape/{k}"] = np.array(policy.observation_space[k].shape, dtype=np.int64)
        if hasattr(extractor, "scale_of"):
            out[f"gain/{k}"], out[f"offset/{k}"] = extractor.scale_of(k)
        if isinstance(extractor.extractors[k], nn.Sequential):
            out.update(_conv_arrays(k, extractor.extractors[k]))
    for k, layer in enumerate(hidden):
        out[f"hidden/{k}/weight"] = layer.weight.detach().cpu().numpy().astype(np.float32)
        out[f"hidden/{k}/bias"] = layer.bias.detach().cpu().numpy().astype(np.float32)
    out["action/weight"] = policy.action_net.weight.detach().cpu().numpy().astype(np.float32)
    out["action/bias"] = policy.action_net.bias.detach().cpu().numpy().astype(np.float32)
    return out


def export_npz(model: Any, path: str | os.PathLike) -> None:
    """Write the policy network of an SB3 model (or a path to its .zip) to ``path`` as a plain .npz."""
    if isinstance(model, (str, os.PathLike)):
        from hearnav.train.sb3 import load_model

        model = load_model(model)
    arrays = network_arrays(model)
    path = os.fspath(path)
    tmp = f"{path}.tmp"
    with open(tmp, "wb") as fh:
        np.savez(fh, **arrays)
    os.replace(tmp, path)
