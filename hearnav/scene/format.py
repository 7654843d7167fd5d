"""The scene file format: pydantic models that define and validate a scene's structure.

One YAML file describes one scene. See ``scenes/FORMAT.md`` for the format in prose and
``scenes/scene.schema.json`` (generated from these models) for editor validation. Geometric checks that
need more than one field at a time live in :mod:`hearnav.scene.checks`.
"""

from __future__ import annotations

from typing import Annotated, Any, Literal, Union, get_args

from pydantic import BaseModel, ConfigDict, Discriminator, Field, Tag, field_validator, model_validator

from hearnav.scene.materials import N_BANDS

Point = Annotated[list[float], Field(min_length=2, max_length=2, description="[x, y] in metres")]
Split = Literal["train", "val", "test"]
#: The scene splits, in order: the one definition every other module uses.
SPLITS: tuple[str, ...] = get_args(Split)
#: Prefix of the names of generated scenes (``gen-<seed>``); no scene file may take it.
RESERVED_PREFIX = "gen-"


class _Strict(BaseModel):
    # strict: numbers must be YAML numbers (not "2.6", not true) and text must be text (not !!binary bytes);
    # ints still pass where floats are expected. Every number must be finite (no .nan, .inf, 1e400).
    model_config = ConfigDict(extra="forbid", frozen=True, strict=True, allow_inf_nan=False)


class CustomMaterial(_Strict):
    """Explicit octave-band coefficients (125 Hz to 8 kHz, seven bands)."""

    absorption: list[Annotated[float, Field(ge=0.0, le=1.0)]] = Field(
        description=f"energy absorption per octave band, {N_BANDS} values in [0, 1]"
    )
    scattering: float | list[Annotated[float, Field(ge=0.0, le=1.0)]] = Field(
        default=0.1, description=f"scattering, one value or {N_BANDS} values in [0, 1]"
    )

    @model_validator(mode="after")
    def _band_counts(self) -> CustomMaterial:
        if len(self.absorption) != N_BANDS:
            raise ValueError(
                f"absorption needs one value per octave band 125 Hz - 8 kHz "
                f"(expected {N_BANDS} values, got {len(self.absorption)})"
            )
        if isinstance(self.scattering, list) and len(self.scattering) != N_BANDS:
            raise ValueError(f"scattering needs 1 or {N_BANDS} values (got {len(self.scattering)})")
        if isinstance(self.scattering, float) and not 0.0 <= self.scattering <= 1.0:
            raise ValueError(f"scattering must lie in [0, 1] (got {self.scattering})")
        return self


class NamedMaterial(_Strict):
    """A material from the table, with its own scattering coefficient."""

    name: str
    scattering: float = Field(default=0.1, ge=0.0, le=1.0)


def _material_kind(value: Any) -> str:
    if isinstance(value, dict) and ("absorption" in value or "name" not in value):
        return "custom"
    return "named" if isinstance(value, (dict, NamedMaterial)) else (
        "custom" if isinstance(value, CustomMaterial) else "table")


#: A material: a table name, a table name with scattering, or explicit coefficients.
MaterialSpec = Annotated[
    Union[
        Annotated[str, Tag("table")],
        Annotated[NamedMaterial, Tag("named")],
        Annotated[CustomMaterial, Tag("custom")],
    ],
    Discriminator(_material_kind),
]
#: Tags that pydantic puts in error locations of the unions above; error reports drop them.
UNION_TAGS = ("table", "named", "custom")


class Materials(_Strict):
    """Materials of the room's boundary surfaces."""

    walls: MaterialSpec
    floor: MaterialSpec
    ceiling: MaterialSpec


class Partition(_Strict):
    """A free-standing straight wall from ``start`` to ``end`` with a thickness."""

    start: Point
    end: Point
    thickness: float = Field(default=0.1, gt=0.0, le=1.0, description="metres")


class Obstacle(_Strict):
    """Furniture, a counter or a partition: a 2-D shape extruded from the floor to a height.

    Give exactly one of ``polygon`` (closed: the last corner repeats the first), ``box``
    ([xmin, ymin, xmax, ymax]) or ``partition``.
    """

    name: str = Field(min_length=1)
    polygon: list[Point] | None = None
    box: Annotated[list[float], Field(min_length=4, max_length=4)] | None = None
    partition: Partition | None = None
    height: float | Literal["ceiling"] = Field(description="metres above the floor, or 'ceiling'")
    material: MaterialSpec

    @field_validator("height", mode="before")
    @classmethod
    def _height_kind(cls, value: Any) -> Any:
        if isinstance(value, bool) or not (isinstance(value, (int, float)) or value == "ceiling"):
            raise ValueError(f"expected a height in metres or 'ceiling', got {value!r}")
        return value

    @model_validator(mode="after")
    def _one_shape(self) -> Obstacle:
        given = [k for k in ("polygon", "box", "partition") if getattr(self, k) is not None]
        if len(given) != 1:
            raise ValueError(
                f"an obstacle needs exactly one shape (expected one of polygon, box, partition; "
                f"got {', '.join(given) if given else 'none'})"
            )
        return self


class StartRegion(_Strict):
    """An axis-aligned rectangle [xmin, ymin, xmax, ymax] in which episodes may start."""

    box: Annotated[list[float], Field(min_length=4, max_length=4)]


class GridSpec(_Strict):
    """The navigable grid laid over the floor."""

    spacing: float = Field(default=0.5, description="cell size in metres, 0.1 to 2")
    ear_height: float = Field(default=1.5, description="listener ear height in metres")
    start_region: StartRegion


class Spot(_Strict):
    """A named place where a sound source can stand."""

    name: str = Field(min_length=1)
    position: Point
    height: float = Field(description="metres above the floor")
    categories: list[str] | None = Field(
        default=None, description="allowed sound categories, registered names (default: all)"
    )


class SceneSpec(_Strict):
    """One scene: a 2-D floorplan extruded to a room, with obstacles, a grid and source spots."""

    name: str = Field(min_length=1, pattern=r"^[a-z0-9][a-z0-9-]*$")
    description: str
    split: Split
    ceiling_height: float = Field(description="metres")
    outline: list[Point] = Field(description="closed polygon: the last corner repeats the first")
    materials: Materials
    obstacles: list[Obstacle] = Field(default_factory=list)
    grid: GridSpec
    spots: list[Spot] = Field(min_length=1)
