"""A pydantic validation error as one message: what is wrong; what would be right.

The loader (:mod:`evcal.calendar.problem_log`) puts the file, line and key path
in front; this module turns pydantic's error record (its ``type``, ``input``
and ``ctx``) into the words a person who wrote the calendar file can act on,
with a "did you mean" for a mistyped key or choice.
"""

from __future__ import annotations

import re
import typing
from typing import Any

from pydantic import BaseModel

from evcal.calendar.holidays_source import suggest
from evcal.calendar.value_parsers import show
from evcal.errors import clip

__all__ = ["describe_validation_error"]


def _valid_keys(model: type[BaseModel]) -> list[str]:
    return list(model.model_fields)


def _model_at(root: type[BaseModel], loc: tuple[Any, ...]) -> type[BaseModel] | None:
    """The pydantic model that owns the key at ``loc`` (for "did you mean")."""
    model = root
    for part in loc[:-1]:
        if isinstance(part, int):  # a list index or a year key: same model inside
            continue
        field = model.model_fields.get(str(part))
        inner = _inner_model(field.annotation) if field is not None else None
        if inner is None:
            return None
        model = inner
    return model


def _inner_model(annotation: Any) -> type[BaseModel] | None:
    """The first BaseModel found inside Optional / list / dict / Annotated."""
    if isinstance(annotation, type) and issubclass(annotation, BaseModel):
        return annotation
    for arg in typing.get_args(annotation):
        found = _inner_model(arg)
        if found is not None:
            return found
    return None


def _expected_choices(ctx: dict[str, Any]) -> list[str]:
    return re.findall(r"'([^']*)'", str(ctx.get("expected", "")))


def describe_validation_error(err: dict[str, Any], model: type[BaseModel], loc: tuple[Any, ...]) -> str:
    """The message for one pydantic error ``err`` of ``model`` at key path ``loc``.

    Examples
    --------
    >>> from evcal.calendar.schema import ExclusionModel
    >>> describe_validation_error({"type": "missing", "msg": "", "input": {}}, ExclusionModel,
    ...                           ("reason",))
    '`reason` is missing; add `reason: ...`'
    """
    kind = err["type"]
    value = err.get("input")
    key = clip(str(loc[-1]), 60) if loc else ""
    ctx = err.get("ctx") or {}
    shown = show(value)  # the user's value, at most ~200 characters
    if kind == "extra_forbidden":
        owner = _model_at(model, loc)
        keys = _valid_keys(owner) if owner else []
        near = suggest(key, keys, n=1)
        if near:
            return f"unknown key `{key}`; did you mean `{near[0]}`?"
        return f"unknown key `{key}`; valid keys here: {', '.join(keys)}" if keys else (
            f"unknown key `{key}`; remove it"
        )
    if kind == "missing":
        return f"`{key}` is missing; add `{key}: ...`"
    if kind in ("value_error", "assertion_error"):
        return str(ctx.get("error", err["msg"])).removeprefix("Value error, ")
    if kind == "finite_number":
        return f"{shown} is not a finite number; write a plain number such as 3 or 1.5"
    if kind == "literal_error":
        choices = _expected_choices(ctx)
        near = suggest(str(value), choices, n=1) if isinstance(value, str) else []
        hint = f"did you mean '{near[0]}'? " if near else ""
        return f"{shown} is not allowed for `{key}`; {hint}use one of {', '.join(choices)}"
    if kind in ("int_type", "int_parsing", "int_from_float"):
        return f"{shown} is not a whole number; write a whole number such as 3"
    if kind in ("float_type", "float_parsing"):
        return f"{shown} is not a number; write a number such as 1.5"
    if kind in ("string_type",):
        return f"{shown} is not text; write text (put it in quotes if it looks like a number)"
    if kind in ("model_type", "dict_type", "model_attributes_type"):
        return f"expected a block of `key: value` lines here, got {shown}; write the keys " \
            "one per line under it (or {key: value, ...})"
    if kind in ("list_type", "tuple_type"):
        return f"expected a list, got {shown}; write one item per line starting with '- '" \
            ", or [a, b]"
    if kind in ("greater_than_equal", "greater_than", "less_than_equal", "less_than"):
        bound = {
            "greater_than_equal": f"at least {ctx.get('ge')}",
            "greater_than": f"more than {ctx.get('gt')}",
            "less_than_equal": f"at most {ctx.get('le')}",
            "less_than": f"less than {ctx.get('lt')}",
        }[kind]
        return f"{shown} is out of range; `{key}` must be {bound}"
    return f"{err['msg']}; check the value"
