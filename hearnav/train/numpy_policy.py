"""A trained policy network run in numpy, from a plain ``.npz`` of its weights (no pickle, no torch).

The file (written by :func:`hearnav.train.export.export_npz`) holds numpy arrays only, read with
``np.load(allow_pickle=False)``:

- ``format``: the format version (:data:`FORMAT`), ``keys``: the observation keys in the order they are
  concatenated, ``shape/<key>``: each key's shape, ``activation``: "tanh" or "relu";
- ``gain/<key>`` and ``offset/<key>`` (each of the key's shape; format 2): the key's input scaling,
  ``x * gain + offset`` (:func:`hearnav.train.extractor.box_scale`); a format 1 file has none (unscaled);
- ``conv/<key>/<j>/weight`` (out x in x 3 x 3) and ``conv/<key>/<j>/bias`` for the convolutions j = 0, 1, ...
  of a (C, H, W) key run through the cnn extractor (:mod:`hearnav.train.extractor`; none for a flattened key);
- ``hidden/<k>/weight`` (out x in) and ``hidden/<k>/bias`` for each hidden layer k = 0, 1, ...;
- ``action/weight`` and ``action/bias``: the layer that gives one logit per action.

The forward pass is stable-baselines3's MultiInputPolicy: each key scaled, then through its convolutions (3 x 3
cross-correlation, stride 1, zero padding 1, each followed by ReLU, as ``torch.nn.Conv2d``), flattened (C order)
and concatenated in ``keys`` order, the hidden layers each followed by the activation, then the action
layer; the deterministic action is the argmax of the logits (the mode of the categorical distribution).
"""

from __future__ import annotations

import functools
import os
import zipfile
from pathlib import Path

import numpy as np

from hearnav.errors import PolicyError, shown_path, short_repr

#: Version of the .npz layout above (2 added the input scaling); :data:`READABLE` lists the versions read.
FORMAT = 2
READABLE = (1, 2)
_ACTIVATIONS = {"tanh": np.tanh, "relu": lambda x: np.maximum(x, np.float32(0.0))}
Layer = tuple[np.ndarray, np.ndarray]


def conv3x3(x: np.ndarray, weight: np.ndarray, bias: np.ndarray) -> np.ndarray:
    """ReLU of a 3 x 3 cross-correlation with stride 1 and zero padding 1 (``torch.nn.Conv2d`` semantics).

    Parameters
    ----------
    x : ndarray, (C, H, W)
    weight : ndarray, (O, C, 3, 3)
    bias : ndarray, (O,)

    Returns
    -------
    ndarray, (O, H, W)
    """
    c, h, w = x.shape
    padded = np.pad(x, ((0, 0), (1, 1), (1, 1)))
    patches = np.stack([padded[:, i:i + h, j:j + w] for i in range(3) for j in range(3)], axis=1)  # (C, 9, H, W)
    out = weight.reshape(weight.shape[0], c * 9) @ patches.reshape(c * 9, h * w) + bias[:, None]
    return np.maximum(out, np.float32(0.0)).reshape(-1, h, w)


class NumpyNetwork:
    """The weights of one exported policy network and its forward pass."""

    def __init__(self, keys: list[str], shapes: dict[str, tuple[int, ...]], activation: str,
                 hidden: list[Layer], action: Layer, convs: dict[str, list[Layer]] | None = None,
                 scales: dict[str, Layer] | None = None):
        if activation not in _ACTIVATIONS:
            raise PolicyError(f"activation {activation!r} is not supported (expected one of "
                              f"{', '.join(_ACTIVATIONS)}); export the network again")
        self.keys, self.shapes, self.activation = keys, shapes, activation
        self.hidden, self.action, self.convs = hidden, action, {k: v for k, v in (convs or {}).items() if v}
        self.scales = dict(scales or {})
        for k, (gain, offset) in self.scales.items():
            if k not in shapes or gain.shape != shapes[k] or offset.shape != shapes[k]:
                raise PolicyError(f"input scaling of shapes {gain.shape} and {offset.shape} for key {k!r} (expected "
                                  f"the key's shape {shapes.get(k)}); export the network again")
        width = 0
        for k in keys:
            channels = shapes[k][0] if k in self.convs and len(shapes[k]) == 3 else None
            for w, b in self.convs.get(k, []):
                if channels is None or w.shape[1:] != (channels, 3, 3) or b.shape != (w.shape[0],):
                    raise PolicyError(f"convolution of shape {w.shape} on key {k!r} of shape {shapes[k]} (expected "
                                      f"out x {channels} x 3 x 3 on a (C, H, W) key); export the network again")
                channels = w.shape[0]
            width += int(np.prod(shapes[k])) if k not in self.convs else channels * shapes[k][1] * shapes[k][2]
        for w, b in [*hidden, action]:
            if w.ndim != 2 or b.shape != (w.shape[0],) or w.shape[1] != width:
                raise PolicyError(f"layer of shape {w.shape} with bias {b.shape} does not follow an input of "
                                  f"width {width} (expected a chain of out x in weights); export the network again")
            width = w.shape[0]

    @classmethod
    def load(cls, path: str | os.PathLike) -> NumpyNetwork:
        """Read a network from an .npz file (never unpickles anything); PolicyError on a file that is not one."""
        try:
            with np.load(path, allow_pickle=False) as data:
                arrays = {name: data[name] for name in data.files}
        except FileNotFoundError:
            raise PolicyError(f"policy weights {shown_path(path)} not found (expected an .npz written by "
                              f"hearnav's export)") from None
        except (ValueError, OSError, zipfile.BadZipFile, EOFError) as exc:
            raise PolicyError(f"policy weights {shown_path(path)} cannot be read as plain numpy arrays "
                              f"({type(exc).__name__}: {short_repr(str(exc))}); export the network again") from None
        try:
            if int(arrays["format"]) not in READABLE:
                raise PolicyError(f"policy weights {shown_path(path)} have format {int(arrays['format'])} "
                                  f"(expected one of {', '.join(map(str, READABLE))}); export the network again "
                                  f"with this hearnav")
            keys = [str(k) for k in arrays["keys"]]
            shapes = {k: tuple(int(n) for n in arrays[f"shape/{k}"]) for k in keys}
            count = sum(1 for name in arrays if name.startswith("hidden/") and name.endswith("/weight"))
            hidden = [_layer(arrays, f"hidden/{k}") for k in range(count)]
            convs = {key: [_layer(arrays, f"conv/{key}/{j}") for j in range(
                sum(1 for n in arrays if n.startswith(f"conv/{key}/") and n.endswith("/weight")))] for key in keys}
            action = _layer(arrays, "action")
            activation = str(arrays["activation"])
            scales = {k: (arrays[f"gain/{k}"].astype(np.float32), arrays[f"offset/{k}"].astype(np.float32))
                      for k in keys if int(arrays["format"]) >= 2}
        except KeyError as exc:
            raise PolicyError(f"policy weights {shown_path(path)} lack the array {exc.args[0]!r} (expected the "
                              f"layout of hearnav.train.numpy_policy, format {FORMAT}); export the network again") from None
        return cls(keys, shapes, activation, hidden, action, convs, scales)

    def check(self, observation: dict) -> None:
        """PolicyError unless ``observation`` has every key the network was trained on, with its shape (keys the
        network does not read are ignored: a key added to the environment leaves older networks working)."""
        found = {k: tuple(np.shape(v)) for k, v in observation.items()}
        if any(found.get(k) != self.shapes[k] for k in self.keys):
            raise PolicyError(f"the observation has keys and shapes {short_repr(found, 160)}, but the network was "
                              f"trained on {short_repr(self.shapes, 160)}; train and export it on this environment")

    def logits(self, observation: dict) -> np.ndarray:
        """The action logits for one observation (float32)."""
        parts = []
        for k in self.keys:
            x = np.asarray(observation[k], np.float32)
            if k in self.scales:
                x = x * self.scales[k][0] + self.scales[k][1]
            for w, b in self.convs.get(k, []):
                x = conv3x3(x, w, b)
            parts.append(x.reshape(-1))
        x = np.concatenate(parts)
        act = _ACTIVATIONS[self.activation]
        for w, b in self.hidden:
            x = act(w @ x + b)
        w, b = self.action
        return w @ x + b

    def act(self, observation: dict) -> int:
        """The deterministic action: the argmax of the logits."""
        return int(np.argmax(self.logits(observation)))


def _layer(arrays: dict[str, np.ndarray], name: str) -> Layer:
    return arrays[f"{name}/weight"].astype(np.float32), arrays[f"{name}/bias"].astype(np.float32)


@functools.lru_cache(maxsize=8)
def _cached(path: str, stamp: tuple[int, int]) -> NumpyNetwork:
    return NumpyNetwork.load(path)


def load_network(path: str | os.PathLike) -> NumpyNetwork:
    """The network in ``path``, read once per process while the file is unchanged."""
    try:
        st = os.stat(path)
    except FileNotFoundError:
        raise PolicyError(f"policy weights {shown_path(path)} not found (expected an .npz written by hearnav's "
                          f"export)") from None
    return _cached(str(Path(path).resolve()), (st.st_mtime_ns, st.st_size))


class NumpyPolicy:
    """A benchmark policy (reset/act) that runs an exported network deterministically; not privileged."""

    privileged = False

    def __init__(self, path: str | os.PathLike):
        self.path = Path(path)
        self.network = load_network(path)

    def reset(self, observation: dict, info: dict) -> None:
        self.network.check(observation)

    def act(self, observation: dict, info: dict) -> int:
        return self.network.act(observation)
