"""Benchmark suites: fixed episodes, each drawn by the environment from a seed derived with SeedSequence.

Every policy faces the same episodes (a paired design). Episode k of a suite uses the k-th child of
``SeedSequence(suite.seed)``; the policy's own randomness uses a child of that episode's seed. Nothing depends
on the worker count or the order in which episodes run.
"""

from __future__ import annotations

import hashlib
import json
from pathlib import Path

import numpy as np
import yaml
from pydantic import BaseModel, ConfigDict, Field, StrictInt, StrictStr, ValidationError

from hearnav import bundled
from hearnav.env.config import EnvConfig, make_config
from hearnav.errors import ConfigError, did_you_mean, short_repr
from hearnav.plugins import identity
from hearnav.yamlfile import YamlRefused, load_yaml_text

SUITE_DIR = bundled.folder("configs") / "suites"


class Suite(BaseModel):
    """A named, seeded set of episodes and the environment options they use."""

    model_config = ConfigDict(extra="forbid", frozen=True)

    # strict scalars: episodes: "5" or true is refused, and a !!binary name is not text
    name: StrictStr = Field(min_length=1)
    description: StrictStr = ""
    episodes: StrictInt = Field(ge=1, le=100000)
    seed: StrictInt = Field(ge=0)
    env: dict = Field(default_factory=dict)

    def env_config(self) -> EnvConfig:
        """The environment options of the suite, validated."""
        return make_config(self.env)

    def episode_seeds(self) -> list[int]:
        """One seed per episode, from SeedSequence(seed).spawn(episodes)."""
        return [int(child.generate_state(1, np.uint64)[0] % (2**63)) for child in
                np.random.SeedSequence(self.seed).spawn(self.episodes)]

    def plugin_objects(self) -> dict[str, object]:
        """Every registered plug-in the suite's episodes and scores depend on, as code: the generators of its
        sound categories and its separator's function."""
        from hearnav.separation import get_separator
        from hearnav.sounds.registry import get_category

        cfg = self.env_config()
        found: dict[str, object] = {f"sound:{name}": get_category(name).generator for name in cfg.sound_categories}
        found[f"separator:{cfg.separator}"] = get_separator(cfg.separator).fn
        return found

    def plugins(self) -> dict[str, str]:
        """Identity of every plug-in of :meth:`plugin_objects` (:func:`hearnav.plugins.identity`; a sound
        category's also names its voice counts)."""
        from hearnav.sounds.registry import category_identity

        return {name: category_identity(name.partition(":")[2]) if name.startswith("sound:") else identity(obj)
                for name, obj in self.plugin_objects().items()}

    def digest(self) -> str:
        """Hash of everything that defines the episodes: the suite, its environment options and its plug-ins."""
        payload = json.dumps({"suite": self.model_dump(), "env": self.env_config().model_dump(mode="json"),
                              "plugins": self.plugins()}, sort_keys=True)
        return hashlib.sha256(payload.encode()).hexdigest()[:16]

    def key_parts(self) -> dict:
        """Everything the suite's results depend on, beyond :meth:`digest`: scene contents, acoustic settings,
        code and plug-in code (:func:`hearnav.bench.keys.key_parts`); loads the scenes."""
        from hearnav.bench.keys import key_parts

        return key_parts(self)

    def result_key(self) -> str:
        """The digest of :meth:`key_parts`: run folders, rows and oracle bounds are keyed by it."""
        from hearnav.bench.keys import result_key

        return result_key(self.key_parts())


def policy_seed(episode_seed: int) -> int:
    """The seed a policy gets for its own randomness in an episode."""
    return int(np.random.SeedSequence([episode_seed, 1]).generate_state(1)[0])


def suite_names() -> list[str]:
    """Bundled suites (configs/suites/*.yaml)."""
    return sorted(p.stem for p in SUITE_DIR.glob("*.yaml"))


def load_suite(name_or_path: str) -> Suite:
    """A suite by bundled name or YAML path."""
    path = Path(name_or_path)
    if not path.suffix:
        path = SUITE_DIR / f"{name_or_path}.yaml"
    if not path.is_file():
        raise ConfigError(f"suite {name_or_path!r} not found (expected a YAML file or one of "
                          f"{', '.join(suite_names())}); {did_you_mean(str(name_or_path), suite_names())}")
    try:
        data = load_yaml_text(path.read_text(encoding="utf-8"))
        suite = Suite.model_validate(data)
    except YamlRefused as exc:
        raise ConfigError(f"{path}: refused: {exc}") from None
    except yaml.YAMLError as exc:
        raise ConfigError(f"{path}: not valid YAML ({str(exc).splitlines()[0]})") from None
    except ValidationError as exc:
        first = exc.errors(include_url=False)[0]
        raise ConfigError(f"{path}: {'.'.join(map(str, first['loc']))}: {first['msg']} "
                          f"(got {short_repr(first.get('input'))})") from None
    suite.env_config()  # validate the options now
    return suite
