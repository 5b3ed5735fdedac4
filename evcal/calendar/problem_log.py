"""Where a calendar problem is: the problems found so far, each with its line and key path.

Every check of the file (the pydantic pass, the rules, the whole-file cross
checks) reports into one :class:`ProblemLog` instead of stopping at the first
problem; the loader then sorts the lines and raises them together.
"""

from __future__ import annotations

from typing import Any

from pydantic import BaseModel, ValidationError

from evcal.calendar.validation_messages import describe_validation_error
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

    def validate(self, model: type[BaseModel], raw: Any, prefix: tuple[Any, ...]) -> Any:
        """``model`` validated from ``raw``, or None with every error recorded under ``prefix``."""
        try:
            return model.model_validate(raw)
        except ValidationError as exc:
            for err in exc.errors(include_url=False):
                loc = tuple(err["loc"])
                # pydantic names tagged-union / dict-key branches; keep the file's own keys.
                loc = tuple(p for p in loc if p != "[key]")
                self.add(prefix + loc, describe_validation_error(err, model, loc))
            return None

    @staticmethod
    def without_bad_keys(model: type[BaseModel], raw: Any) -> Any:
        """Validate again without the keys that failed, so later checks still run.

        Used only to find more problems in the same item; it reports nothing itself.
        """
        if not isinstance(raw, dict):
            return None
        try:
            model.model_validate(raw)
        except ValidationError as exc:
            bad = {str(e["loc"][0]) for e in exc.errors() if e["loc"]}
        else:  # pragma: no cover - only called after a failure
            return None
        if bad & {"name", "when"}:
            return None
        try:
            return model.model_validate({k: v for k, v in raw.items() if str(k) not in bad})
        except ValidationError:
            return None
