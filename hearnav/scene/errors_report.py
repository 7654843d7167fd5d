"""Turn pydantic validation errors into one-line problems: ``field.path: what is wrong (expected ..., got ...)``."""

from __future__ import annotations

from typing import Any

from pydantic import BaseModel, ValidationError

from hearnav.errors import did_you_mean, short_repr
from hearnav.scene import format as fmt
from hearnav.yamlfile import value_kind

# The model that owns the fields found under a parent field of this name (or union tag).
_OWNER: dict[str, type[BaseModel]] = {
    "": fmt.SceneSpec,
    "materials": fmt.Materials,
    "obstacles": fmt.Obstacle,
    "partition": fmt.Partition,
    "grid": fmt.GridSpec,
    "start_region": fmt.StartRegion,
    "spots": fmt.Spot,
    "named": fmt.NamedMaterial,
    "custom": fmt.CustomMaterial,
}


def field_path(loc: tuple[Any, ...]) -> str:
    """``('obstacles', 2, 'polygon')`` -> ``obstacles[2].polygon``, without union tags."""
    out = ""
    for item in loc:
        if isinstance(item, int):
            out += f"[{item}]"
        elif item in fmt.UNION_TAGS or str(item).startswith("function-"):
            continue
        else:
            out += f".{item}" if out else str(item)
    return out or "(top level)"


def _owner(loc: tuple[Any, ...]) -> type[BaseModel] | None:
    names = [i for i in loc if isinstance(i, str) and not i.startswith("function-")]
    return _OWNER.get(names[-1] if names else "")


def _short(value: Any) -> str:
    return short_repr(value)


# What a strict field of each pydantic error type expects, in words.
_EXPECTED_TYPE = {"float_type": "a number", "int_type": "a whole number", "string_type": "text",
                  "bool_type": "true or false", "list_type": "a list", "dict_type": "a mapping",
                  "model_type": "a mapping"}


def _type_problem(path: str, kind: str, value: Any) -> str:
    """``path: wrong type (expected a number, got the text '2.6'); hint``."""
    hint = ""
    if kind in ("float_type", "int_type") and isinstance(value, str):
        hint = "; write the number without quotes"
    elif kind == "string_type" and isinstance(value, (bytes, bytearray)):
        hint = "; write the text without the !!binary tag"
    elif kind == "string_type" and not isinstance(value, (list, dict)):
        hint = "; put the text in quotes"
    return f"{path}: wrong type (expected {_EXPECTED_TYPE[kind]}, got {value_kind(value)}){hint}"


def describe(error: dict[str, Any]) -> str:
    """One line for one pydantic error."""
    loc = tuple(error["loc"])
    kind = error["type"]
    path = field_path(loc)
    if kind == "missing":
        return f"{path}: missing field (expected a value for {loc[-1]!r}; add it)"
    if kind == "extra_forbidden":
        owner = _owner(loc[:-1])
        valid = list(owner.model_fields) if owner else []
        return f"{path}: unknown field (expected one of {', '.join(valid)}); {did_you_mean(str(loc[-1]), valid)}"
    if kind == "value_error":
        return f"{path}: {str(error['ctx']['error'])}"
    if kind in _EXPECTED_TYPE:
        return _type_problem(path, kind, error.get("input"))
    ctx = error.get("ctx") or {}
    got = _short(error.get("input"))
    if kind == "finite_number":
        return f"{path}: not a finite number (expected a finite number, got {got})"
    if kind == "literal_error":
        return f"{path}: not an allowed value (expected one of {ctx.get('expected')}, got {got})"
    if kind in ("greater_than", "greater_than_equal", "less_than", "less_than_equal"):
        bound = next(iter(ctx.values()))
        sign = {"greater_than": ">", "greater_than_equal": ">=", "less_than": "<", "less_than_equal": "<="}[kind]
        return f"{path}: out of range (expected a value {sign} {bound}, got {got})"
    if kind in ("too_short", "too_long"):
        return f"{path}: wrong length (expected {error['msg'].split('should have ')[-1]}, got {got})"
    msg = error["msg"].replace("Input should be ", "expected ")
    return f"{path}: wrong type or value ({msg}, got {got})"


def problems_from(exc: ValidationError) -> list[str]:
    """Every error of a validation failure, one line each."""
    return [describe(e) for e in exc.errors(include_url=False)]
