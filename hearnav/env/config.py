"""The environment's arguments: a validated schema, from keyword arguments or a YAML file in configs/env/."""

from __future__ import annotations

from pathlib import Path
from typing import Literal

import yaml
from pydantic import (BaseModel, ConfigDict, Field, StrictFloat, StrictInt, StrictStr, ValidationError,
                      field_validator, model_validator)

from hearnav import bundled
from hearnav.acoustics.settings import AcousticSettings
from hearnav.errors import ConfigError, did_you_mean, short_repr
from hearnav.sounds.builtin import BUILTIN_NAMES
from hearnav.yamlfile import YamlRefused, load_yaml_text

#: Folder of the bundled environment configurations.
CONFIG_DIR = bundled.folder("configs") / "env"


class EnvConfig(BaseModel):
    """Every argument of :class:`hearnav.env.HearNavEnv` (see its docstring for the meaning of each)."""

    # Scalars are strict (a number is a YAML number, not "2.6" or true; text is not !!binary bytes) and finite;
    # lists and tuples stay lax so that a YAML list fills a tuple field.
    model_config = ConfigDict(extra="forbid", frozen=True, allow_inf_nan=False)

    scenes: StrictStr | list[StrictStr] = Field(default="train", description="a split, 'procedural', or scene names")
    procedural_pool: StrictInt = Field(default=16, ge=1, le=100000, description="generated scenes gen-0..gen-(N-1)")
    sound_categories: list[StrictStr] = Field(
        default_factory=lambda: list(BUILTIN_NAMES), min_length=1,
        description="registered categories episodes draw sounds from (default: the five built-ins)")
    target_category: StrictStr | list[StrictStr] | None = Field(
        default=None, description="category (or list of categories) of the target sound; None: any")
    distractors: tuple[StrictInt, StrictInt] = Field(default=(1, 3), description="min and max number of distractors")
    sound_pool: Literal["seen", "unseen"] = "seen"
    distractor_level_db: tuple[StrictFloat, StrictFloat] = Field(default=(-6.0, 6.0),
                                                     description="distractor level relative to the target, dB")
    target_cue: Literal["bearing", "none", "position"] = Field(
        default="bearing", description="what obs['target'] gives: the earliest arrival's bearing, nothing, or the "
                                       "spot's distance and bearing")
    standoff_m: StrictFloat = Field(default=1.0, ge=0.0, le=5.0,
                                    description="metres around each source's spot the listener may not enter")
    min_start_distance: StrictFloat = Field(default=2.0, ge=0.0, le=50.0, description="metres from the target spot")
    step_s: StrictFloat = Field(default=0.5, ge=0.05, le=4.0, description="seconds of sound per step")
    budget: StrictInt = Field(default=32, ge=1, le=1000, description="steps before truncation")
    eval_windows: StrictInt = Field(default=8, ge=1, le=64,
                                    description="windows after the episode on which its end and start poses are scored")
    separator: StrictStr = Field(default="identity", description="registered separator name")
    reward_clip: StrictFloat | None = Field(default=None, gt=0.0, description="clip the reward to +/- this many dB")
    n_bands: StrictInt = Field(default=16, ge=4, le=64, description="frequency bands of the audio features")
    n_segments: StrictInt = Field(default=4, ge=1, le=32, description="time segments of the audio features")
    patch_size: StrictInt = Field(default=9, ge=3, le=41, description="cells per side of the egocentric map (odd)")
    fov_deg: StrictFloat = Field(default=120.0, gt=0.0, le=360.0, description="field of view for visible sources")
    acoustics: AcousticSettings = Field(default_factory=AcousticSettings)

    @field_validator("patch_size")
    @classmethod
    def _odd(cls, value: int) -> int:
        if value % 2 == 0:
            raise ValueError(f"patch_size must be odd so the listener sits in the centre (got {value})")
        return value

    @property
    def target_categories(self) -> tuple[str, ...] | None:
        """The allowed target categories, or None for any."""
        if self.target_category is None:
            return None
        return (self.target_category,) if isinstance(self.target_category, str) else tuple(self.target_category)

    @model_validator(mode="after")
    def _ranges(self) -> EnvConfig:
        lo, hi = self.distractors
        if not 1 <= lo <= hi <= 8:
            raise ValueError(f"distractors must be [min, max] with 1 <= min <= max <= 8 (got [{lo}, {hi}])")
        a, b = self.distractor_level_db
        if not -40.0 <= a <= b <= 40.0:
            raise ValueError(f"distractor_level_db must be [low, high] within [-40, 40] dB (got [{a}, {b}])")
        return self


def _problem(err: dict) -> str:
    loc = ".".join(str(x) for x in err["loc"])
    if err["type"] == "extra_forbidden":
        owner = AcousticSettings if err["loc"][0] == "acoustics" and len(err["loc"]) > 1 else EnvConfig
        name = str(err["loc"][-1])
        return f"unknown option {loc!r} (expected one of {', '.join(owner.model_fields)}); " \
               f"{did_you_mean(name, owner.model_fields)}"
    got = short_repr(err.get("input"))
    msg = err["msg"].replace("Value error, ", "").replace("Input should be ", "expected ")
    return f"option {loc!r}: {msg} (got {got})"


def make_config(config: str | Path | EnvConfig | dict | None = None, **overrides) -> EnvConfig:
    """An EnvConfig from a YAML path or bundled name (configs/env/NAME.yaml), a dict, or keywords on top."""
    if isinstance(config, EnvConfig):
        base = config.model_dump()
    elif config is None:
        base = {}
    elif isinstance(config, dict):
        base = dict(config)
    else:
        base = load_yaml(config)
    base.update(overrides)
    try:
        return EnvConfig.model_validate(base)
    except ValidationError as exc:
        raise ConfigError("; ".join(_problem(e) for e in exc.errors(include_url=False))) from None


def load_yaml(config: str | Path) -> dict:
    """The mapping in an environment YAML file, found by path or by bundled name."""
    return read_mapping(config, CONFIG_DIR, "environment config")[1] or {}


def read_mapping(config: str | Path, folder: Path, what: str) -> tuple[Path, dict | None]:
    """The path and the mapping (None for an empty file) of a YAML config given by path or by a bundled name in
    ``folder``; anything else is a one-line ConfigError naming ``what`` and the file."""
    path = Path(config)
    if not path.suffix and not path.exists():
        path = folder / f"{config}.yaml"
    if not path.is_file():
        names = sorted(p.stem for p in folder.glob("*.yaml"))
        raise ConfigError(f"{what} {str(config)!r} not found (expected a YAML file or one of "
                          f"{', '.join(names)}); {did_you_mean(str(config), names)}")
    try:
        data = load_yaml_text(path.read_text(encoding="utf-8"))
    except YamlRefused as exc:
        raise ConfigError(f"{path}: refused: {exc}") from None
    except yaml.YAMLError as exc:
        raise ConfigError(f"{path}: not valid YAML (expected a mapping of options, got {str(exc).splitlines()[0]})") from None
    if data is not None and not isinstance(data, dict):
        raise ConfigError(f"{path}: expected a mapping of options, got {type(data).__name__}")
    return path, data
