"""The trainer's arguments: a validated schema read from a YAML file in configs/train/."""

from __future__ import annotations

from pathlib import Path
from typing import Literal

from pydantic import (BaseModel, ConfigDict, Field, StrictBool, StrictFloat, StrictInt, StrictStr, ValidationError,
                      field_validator, model_validator)

from hearnav import bundled
from hearnav.env.config import EnvConfig, make_config, read_mapping
from hearnav.errors import ConfigError, did_you_mean, short_repr

#: Folder of the bundled training configurations.
CONFIG_DIR = bundled.folder("configs") / "train"

_STRICT = ConfigDict(extra="forbid", frozen=True, allow_inf_nan=False)


class PPOOptions(BaseModel):
    """stable-baselines3 PPO hyper-parameters (same names and meanings as ``PPO(...)``)."""

    model_config = _STRICT

    n_steps: StrictInt = Field(default=256, ge=8, le=1_000_000, description="steps per worker per update")
    batch_size: StrictInt = Field(default=64, ge=2, le=1_000_000, description="minibatch size")
    n_epochs: StrictInt = Field(default=4, ge=1, le=100, description="passes over each rollout")
    learning_rate: StrictFloat = Field(default=3e-4, gt=0.0, le=1.0)
    gamma: StrictFloat = Field(default=0.95, ge=0.0, le=1.0)
    gae_lambda: StrictFloat = Field(default=0.95, ge=0.0, le=1.0)
    clip_range: StrictFloat = Field(default=0.2, gt=0.0, le=10.0)
    ent_coef: StrictFloat = Field(default=0.01, ge=0.0, le=10.0)
    vf_coef: StrictFloat = Field(default=0.5, ge=0.0, le=10.0)
    max_grad_norm: StrictFloat = Field(default=0.5, gt=0.0, le=100.0)


class NetOptions(BaseModel):
    """The policy network: each observation key it reads (``keys``) scaled from its bounds to [-1, 1] (``scale_inputs``), through the
    extractor ("flat": flattened; "cnn": 3 x 3 convolutions with ``filters`` on every (C, H, W) key, flattening the
    rest), concatenated, then an MLP for the policy and one for the value (the extractor is shared)."""

    model_config = _STRICT

    extractor: Literal["flat", "cnn"] = "flat"
    filters: list[StrictInt] = Field(default_factory=lambda: [8, 8], min_length=1, max_length=4,
                                     description="channels of each 3 x 3 convolution of the cnn extractor")

    scale_inputs: StrictBool = Field(default=True, description="map each observation key from its Box bounds to "
                                     "[-1, 1] before the network (band levels span -120 to +40 dB)")
    keys: list[StrictStr] | None = Field(default=None, min_length=1, description="the observation keys the network "
                                         "reads (None: every key); the others are not passed to it")
    hidden: list[StrictInt] = Field(default_factory=lambda: [64, 64], max_length=8,
                                    description="units of each hidden layer (shared sizes, separate networks)")
    activation: Literal["tanh", "relu"] = "tanh"

    @field_validator("hidden", "filters")
    @classmethod
    def _sizes(cls, value: list[int]) -> list[int]:
        if any(not 1 <= n <= 4096 for n in value):
            raise ValueError("layer sizes must be within [1, 4096]")
        return value


class EvalOptions(BaseModel):
    """Periodic evaluation with the benchmark's runner and metric (mean gain_db)."""

    model_config = _STRICT

    suite: StrictStr = Field(default="val", min_length=1, description="a bundled suite name or a suite YAML path")
    episodes: StrictInt | None = Field(default=None, ge=1, le=100000,
                                       description="the suite's first N episodes (None: all)")
    every_steps: StrictInt = Field(default=8192, ge=1, description="environment steps between evaluations")


class WarmStartOptions(BaseModel):
    """Behaviour cloning of a teacher policy before PPO (:mod:`hearnav.train.warmstart`)."""

    model_config = _STRICT

    policy: StrictStr = Field(default="follow-bearing", min_length=1,
                              description="the teacher: a registered policy name or reference")
    episodes: StrictInt = Field(default=300, ge=1, le=100_000, description="teacher episodes on the training scenes")
    epochs: StrictInt = Field(default=10, ge=1, le=1000, description="passes over the teacher's steps")
    dagger_rounds: StrictInt = Field(default=0, ge=0, le=50, description="rounds in which the clone acts for "
                                                                         "'episodes' episodes, labelled by the "
                                                                         "teacher, then is fitted again (DAgger)")
    batch_size: StrictInt = Field(default=256, ge=2, le=1_000_000)
    learning_rate: StrictFloat = Field(default=1e-3, gt=0.0, le=1.0)


class TrainConfig(BaseModel):
    """Everything ``hearnav train`` needs besides the output folder."""

    model_config = _STRICT

    scenes: list[StrictStr] = Field(default_factory=lambda: ["train", "procedural"], min_length=1,
                                    description="splits, 'procedural' or scene names, trained on together")
    env: dict = Field(default_factory=dict, description="environment options (configs/env), without 'scenes'")
    total_steps: StrictInt = Field(default=50_000, ge=1, le=10**10, description="environment steps in all")
    seed: StrictInt = Field(default=0, ge=0, le=2**32 - 1)
    workers: StrictInt = Field(default=1, ge=1, le=256, description="environment processes")
    envs_per_worker: StrictInt = Field(default=1, ge=1, le=64,
                                       description="environments each process steps per message (hearnav.train."
                                                   "vector); PPO runs workers x envs_per_worker environments")
    reward: Literal["paired", "end-score"] = Field(
        default="paired", description="paired: the environment's own reward; end-score: the change of the pose's "
                                      "mean score on the evaluation windows, whose return is the episode's gain_db "
                                      "(hearnav.train.reward)")
    reward_windows: StrictInt | None = Field(default=None, ge=1, le=64,
                                             description="evaluation windows of end-score (None: the environment's "
                                                         "eval_windows, as the benchmark)")
    normalize_reward: StrictBool = Field(default=False, description="scale rewards with VecNormalize (not the "
                                                                    "observations, so the policy needs no stats)")
    checkpoint_every: StrictInt = Field(default=8192, ge=1, description="environment steps between checkpoints")
    ppo: PPOOptions = Field(default_factory=PPOOptions)
    net: NetOptions = Field(default_factory=NetOptions)
    eval: EvalOptions = Field(default_factory=EvalOptions)
    warm_start: WarmStartOptions | None = Field(default=None, description="clone a teacher policy before PPO "
                                                                          "(None: start from a random network)")

    @field_validator("env")
    @classmethod
    def _env(cls, value: dict) -> dict:
        if "scenes" in value:
            raise ValueError("give the scenes as the top-level option 'scenes' (a list of splits, 'procedural' "
                             "or names), not under 'env'")
        make_config(value)  # raises ConfigError, turned into one line by load_train_config
        return value

    @model_validator(mode="after")
    def _batch(self) -> TrainConfig:
        rollout = self.ppo.n_steps * self.n_envs
        if rollout % self.ppo.batch_size:
            raise ValueError(f"ppo.batch_size ({self.ppo.batch_size}) must divide ppo.n_steps x workers x "
                             f"envs_per_worker ({rollout}) so no minibatch is truncated")
        return self

    @property
    def n_envs(self) -> int:
        """Environments PPO steps together: workers x envs_per_worker."""
        return self.workers * self.envs_per_worker

    def env_config(self, scene_names: list[str] | tuple[str, ...]) -> EnvConfig:
        """The environment options with ``scenes`` set to ``scene_names``."""
        return make_config(self.env, scenes=list(scene_names))

    def scene_names(self) -> tuple[str, ...]:
        """Every scene trained on: the splits and 'procedural' of :attr:`scenes` expanded, in order, once each."""
        from hearnav.env.worlds import scene_list

        pool = make_config(self.env).procedural_pool
        names: list[str] = []
        for spec in self.scenes:
            names += [n for n in scene_list(spec, pool) if n not in names]
        return tuple(names)


_MODELS: dict[str, type[BaseModel]] = {"ppo": PPOOptions, "net": NetOptions, "eval": EvalOptions,
                                        "warm_start": WarmStartOptions}


def _problem(err: dict) -> str:
    loc = ".".join(str(x) for x in err["loc"])
    if err["type"] == "extra_forbidden":
        owner = _MODELS.get(str(err["loc"][0]), TrainConfig) if len(err["loc"]) > 1 else TrainConfig
        name = str(err["loc"][-1])
        return f"unknown option {loc!r} (expected one of {', '.join(owner.model_fields)}); " \
               f"{did_you_mean(name, owner.model_fields)}"
    got = short_repr(err.get("input"))
    msg = err["msg"].replace("Value error, ", "").replace("Input should be ", "expected ")
    return f"option {loc!r}: {msg} (got {got})" if loc else f"{msg}"


def make_train_config(data: dict | None = None, **overrides) -> TrainConfig:
    """A TrainConfig from a mapping and keyword overrides; raises ConfigError in one line."""
    base = dict(data or {})
    base.update(overrides)
    try:
        return TrainConfig.model_validate(base)
    except ConfigError as exc:
        raise ConfigError(f"option 'env': {exc}") from None
    except ValidationError as exc:
        raise ConfigError("; ".join(_problem(e) for e in exc.errors(include_url=False))) from None


def load_train_config(config: str | Path, **overrides) -> TrainConfig:
    """A TrainConfig from a YAML path or bundled name (configs/train/NAME.yaml); ConfigError names the file."""
    path, data = read_mapping(config, CONFIG_DIR, "training config")
    try:
        return make_train_config(data, **overrides)
    except ConfigError as exc:
        raise ConfigError(f"{path}: {exc}") from None
