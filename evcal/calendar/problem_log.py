"""Where a calendar problem is and what it says: every check reports into one :class:`ProblemLog`.

The checks (the pydantic pass, the rules, the whole-file cross checks) do not stop at the
first problem; the loader sorts the lines and raises them together. A pydantic error record
(its ``type``, ``input`` and ``ctx``) becomes words a person who wrote the file can act on,
with a "did you mean" for a mistyped key or choice.
"""

from __future__ import annotations

import re
import typing
from typing import Any

from pydantic import BaseModel, ValidationError

from evcal.calendar.holidays_source import suggest
from evcal.calendar.value_parsers import show
from evcal.calendar.yamlread import Lines, Problem
from evcal.errors import clip

__all__ = ["ProblemLog"]


class ProblemLog:
    """The problems found in one calendar file, and how to say where each one is.

    Parameters
    ----------
    lines
        Key path -> 1-based line, from :func:`evcal.calendar.yamlread.read_yaml`.
    raw
        The file's top-level block (to name list items by their ``name``).

    Examples
    --------
    >>> log = ProblemLog({("events", "0"): 3}, {"events": [{"name": "sale"}]})
    >>> log.add(("events", 0, "length"), "too long")
    >>> log.problems[0].format("cal.yaml")
    'cal.yaml:3: events[sale].length: too long'
    """

    def __init__(self, lines: Lines, raw: Any = None) -> None:
        self.lines = lines
        self.raw: dict[str, Any] = raw if isinstance(raw, dict) else {}
        self.problems: list[Problem] = []

    def line(self, loc: tuple[Any, ...]) -> int | None:
        """The line of the key at ``loc``, or of its nearest parent that has one."""
        parts = tuple(str(p) for p in loc)
        while parts:
            if parts in self.lines:
                return self.lines[parts]
            parts = parts[:-1]
        return self.lines.get(())

    def path(self, loc: tuple[Any, ...]) -> str:
        """``loc`` as the user reads it: ``events[spring-weekend].when.easter``."""
        out = ""
        for i, part in enumerate(loc):
            if isinstance(part, int) and i > 0 and loc[i - 1] in ("events", "interventions"):
                name = self._item_name(str(loc[i - 1]), part)
                out += f"[{name}]" if name else f"[#{part + 1}]"
            elif isinstance(part, int) and (i == 0 or loc[i - 1] != "moved"):
                out += f"[#{part + 1}]"
            else:
                out += ("." if out else "") + str(part)
        return out or "(top level)"

    def _item_name(self, section: str, index: int) -> str | None:
        items = self.raw.get(section)
        if isinstance(items, list) and index < len(items) and isinstance(items[index], dict):
            name = items[index].get("name")
            if isinstance(name, str) and name.strip():
                return clip(name.strip(), 60)
        return None

    def add(self, loc: tuple[Any, ...], message: str) -> None:
        """Record one problem at key path ``loc``."""
        self.problems.append(Problem(self.line(loc), self.path(loc), message))

    def validate(
        self, model: type[BaseModel], raw: Any, prefix: tuple[Any, ...], partial: bool = False
    ) -> Any:
        """``model`` validated from ``raw``, or None with every error recorded under ``prefix``.

        With ``partial``, an item that fails is validated again without its failing keys (unless
        ``name`` or ``when`` failed), so the checks that need the whole item still run.
        """
        try:
            return model.model_validate(raw)
        except ValidationError as exc:
            errors = exc.errors(include_url=False)
        for err in errors:
            # pydantic names dict-key branches; keep the file's own keys.
            loc = tuple(p for p in err["loc"] if p != "[key]")
            self.add(prefix + loc, _describe(err, model, loc))
        bad = {str(e["loc"][0]) for e in errors if e["loc"]}
        if not partial or not isinstance(raw, dict) or bad & {"name", "when"}:
            return None
        try:
            return model.model_validate({k: v for k, v in raw.items() if str(k) not in bad})
        except ValidationError:
            return None


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
    return next(filter(None, map(_inner_model, typing.get_args(annotation))), None)


def _describe(err: dict[str, Any], model: type[BaseModel], loc: tuple[Any, ...]) -> str:
    """The message for one pydantic error ``err`` of ``model`` at key path ``loc``."""
    kind = err["type"]
    value = err.get("input")
    key = clip(str(loc[-1]), 60) if loc else ""
    ctx = err.get("ctx") or {}
    shown = show(value)  # the user's value, at most ~200 characters
    if kind == "extra_forbidden":
        owner = _model_at(model, loc)
        keys = list(owner.model_fields) if owner else []
        near = suggest(key, keys, n=1)
        if near:
            return f"unknown key `{key}`; did you mean `{near[0]}`?"
        return (
            f"unknown key `{key}`; valid keys here: {', '.join(keys)}"
            if keys
            else (f"unknown key `{key}`; remove it")
        )
    if kind == "missing":
        return f"`{key}` is missing; add `{key}: ...`"
    if kind == "value_error":
        return str(ctx.get("error", err["msg"])).removeprefix("Value error, ")
    if kind == "finite_number":
        return f"{shown} is not a finite number; write a plain number such as 3 or 1.5"
    if kind == "literal_error":
        choices = re.findall(r"'([^']*)'", str(ctx.get("expected", "")))
        near = suggest(str(value), choices, n=1) if isinstance(value, str) else []
        hint = f"did you mean '{near[0]}'? " if near else ""
        return f"{shown} is not allowed for `{key}`; {hint}use one of {', '.join(choices)}"
    if kind in ("int_type", "int_parsing", "int_from_float"):
        return f"{shown} is not a whole number; write a whole number such as 3"
    if kind in ("float_type", "float_parsing"):
        return f"{shown} is not a number; write a number such as 1.5"
    if kind == "string_type":
        return f"{shown} is not text; write text (put it in quotes if it looks like a number)"
    if kind in ("model_type", "dict_type"):
        return (
            f"expected a block of `key: value` lines here, got {shown}; write the keys "
            "one per line under it (or {key: value, ...})"
        )
    if kind in ("list_type", "tuple_type"):
        return f"expected a list, got {shown}; write one item per line starting with '- ', or [a, b]"
    return f"{err['msg']}; check the value"
