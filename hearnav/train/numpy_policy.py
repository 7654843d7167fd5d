"""A trained policy network run in numpy, from a plain ``.npz`` of its weights (no pickle, no torch).

The file (written by :func:`hearnav.train.export.export_npz`) holds numpy arrays only, read with
``np.load(allow_pickle=False)``:

- ``format``: the format version (:data:`FORMAT`), ``keys``: the observation keys in the order they are
  concatenated, ``shape/<key>``: each key's shape, ``activation``: "tanh" or "relu";
- ``hidden/<k>/weight`` (out x in) and ``hidden/<k>/bias`` for each hidden layer k = 0, 1, ...;
- ``action/weight`` and ``action/bias``: the layer that gives one logit per action.

The forward pass is stable-baselines3's MultiInputPolicy with flattening feature extractors: each key flattened
(C order) and concatenated in ``keys`` order, the hidden layers each followed by the activation, then the action
layer; the deterministic action is the argmax of the logits (the mode of the categorical distribution).
"""

from __future__ import annotations

import functools
import os
import zipfile
from pathlib import Path

import numpy as np

from hearnav.errors import PolicyError, shown_path, short_repr

#: Version of the .npz layout above.
FORMAT = 1
_ACTIVATIONS = {"tanh": np.tanh, "relu": lambda x: np.maximum(x, np.float32(0.0))}


class NumpyNetwork:
    """The weights of one exported policy network and its forward pass."""

    def __init__(self, keys: list[str], shapes: dict[str, tuple[int, ...]], activation: str,
                 hidden: list[tuple[np.ndarray, np.ndarray]], action: tuple[np.ndarray, np.ndarray]):
        if activation not in _ACTIVATIONS:
            raise PolicyError(f"activation {activation!r} is not supported (expected one of "
                              f"{', '.join(_ACTIVATIONS)}); export the network again")
        self.keys, self.shapes, self.activation = keys, shapes, activation
        self.hidden, self.action = hidden, action
        width = sum(int(np.prod(shapes[k])) for k in keys)
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
            if int(arrays["format"]) != FORMAT:
                raise PolicyError(f"policy weights {shown_path(path)} have format {int(arrays['format'])} "
                                  f"(expected {FORMAT}); export the network again with this hearnav")
            keys = [str(k) for k in arrays["keys"]]
            shapes = {k: tuple(int(n) for n in arrays[f"shape/{k}"]) for k in keys}
            count = sum(1 for name in arrays if name.startswith("hidden/") and name.endswith("/weight"))
            hidden = [(arrays[f"hidden/{k}/weight"].astype(np.float32), arrays[f"hidden/{k}/bias"].astype(np.float32))
                      for k in range(count)]
            action = (arrays["action/weight"].astype(np.float32), arrays["action/bias"].astype(np.float32))
            activation = str(arrays["activation"])
        except KeyError as exc:
            raise PolicyError(f"policy weights {shown_path(path)} lack the array {exc.args[0]!r} (expected the "
                              f"layout of hearnav.train.numpy_policy, format {FORMAT}); export the network again") from None
        return cls(keys, shapes, activation, hidden, action)

    def check(self, observation: dict) -> None:
        """PolicyError unless ``observation`` has the keys and shapes the network was trained on."""
        found = {k: tuple(np.shape(v)) for k, v in observation.items()}
        if set(found) != set(self.keys) or any(found[k] != self.shapes[k] for k in self.keys):
            raise PolicyError(f"the observation has keys and shapes {short_repr(found, 160)}, but the network was "
                              f"trained on {short_repr(self.shapes, 160)}; train and export it on this environment")

    def logits(self, observation: dict) -> np.ndarray:
        """The action logits for one observation (float32)."""
        x = np.concatenate([np.asarray(observation[k], np.float32).reshape(-1) for k in self.keys])
        act = _ACTIVATIONS[self.activation]
        for w, b in self.hidden:
            x = act(w @ x + b)
        w, b = self.action
        return w @ x + b

    def act(self, observation: dict) -> int:
        """The deterministic action: the argmax of the logits."""
        return int(np.argmax(self.logits(observation)))


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
