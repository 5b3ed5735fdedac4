"""Safe YAML reading that keeps the line of every key.

The calendar file is read with a subclass of PyYAML's ``SafeLoader`` that

* never builds Python objects: any tag other than the plain YAML types
  (``!!python/object``, ``!custom``) is reported, and nothing is constructed;
* leaves dates as text, so that an impossible date (``2023-02-30``) becomes a
  clear message from the validator instead of a crash inside the parser;
* reads only ``true``/``false`` as booleans (YAML 1.2), so the country code
  ``NO`` (Norway) or a weekday written ``on`` stays text.

:func:`read_yaml` returns the data and a map from key path (a tuple of
strings) to the 1-based line where that key or list item starts.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from typing import Any

import yaml

_PLAIN_TAGS = {
    "tag:yaml.org,2002:" + t for t in ("str", "int", "float", "bool", "null", "map", "seq", "merge")
}


class _CalendarLoader(yaml.SafeLoader):
    """SafeLoader without timestamps and with YAML 1.2 booleans."""


# libyaml's parser (when PyYAML was built with it) composes the node tree about
# 10x faster. Its error messages are terser, so a file that fails to parse is
# parsed again with the pure-Python loader for the message.
_FastBase: type = getattr(yaml, "CSafeLoader", yaml.SafeLoader)


class _FastCalendarLoader(_FastBase):  # type: ignore[misc, valid-type]
    """The same loader on libyaml's parser."""


_CalendarLoader.yaml_implicit_resolvers = {
    first: [
        (tag, rx)
        for tag, rx in resolvers
        if tag not in ("tag:yaml.org,2002:timestamp", "tag:yaml.org,2002:bool")
    ]
    for first, resolvers in yaml.SafeLoader.yaml_implicit_resolvers.items()
}
_CalendarLoader.add_implicit_resolver(
    "tag:yaml.org,2002:bool", re.compile(r"^(?:true|True|TRUE|false|False|FALSE)$"), list("tTfF")
)
_FastCalendarLoader.yaml_implicit_resolvers = _CalendarLoader.yaml_implicit_resolvers


@dataclass(frozen=True)
class Problem:
    """One problem found in the file: line (1-based, or None), key path, message."""

    line: int | None
    path: str
    message: str

    def format(self, source: str) -> str:
        where = f"{source}:{self.line}" if self.line is not None else source
        return f"{where}: {self.path}: {self.message}" if self.path else f"{where}: {self.message}"


Lines = dict[tuple[str, ...], int]


def _short_tag(tag: str) -> str:
    return "!!" + tag.removeprefix("tag:yaml.org,2002:") if tag.startswith("tag:yaml.org") else tag


def _walk(node: yaml.Node, path: tuple[str, ...], lines: Lines, problems: list[Problem],
          seen: set[int]) -> None:
    if id(node) in seen:  # an alias used again: already walked
        return
    seen.add(id(node))
    if node.tag not in _PLAIN_TAGS:
        problems.append(
            Problem(
                node.start_mark.line + 1,
                ".".join(path) or "(top level)",
                f"YAML tag '{_short_tag(node.tag)}' is not allowed (the calendar is read as plain data, "
                "never as code); write a plain value",
            )
        )
        return
    if isinstance(node, yaml.MappingNode):
        first_line: dict[str, int] = {}
        for key_node, value_node in node.value:
            key = str(key_node.value) if isinstance(key_node, yaml.ScalarNode) else "?"
            line = key_node.start_mark.line + 1
            if key in first_line and key != "<<":
                problems.append(
                    Problem(
                        line,
                        ".".join((*path, key)),
                        f"key `{key}` appears twice in this block (first at line "
                        f"{first_line[key]}); keep one",
                    )
                )
            first_line.setdefault(key, line)
            lines.setdefault((*path, key), line)
            _walk(key_node, (*path, key), {}, problems, seen)
            _walk(value_node, (*path, key), lines, problems, seen)
    elif isinstance(node, yaml.SequenceNode):
        for i, item in enumerate(node.value):
            lines.setdefault((*path, str(i)), item.start_mark.line + 1)
            _walk(item, (*path, str(i)), lines, problems, seen)


def read_yaml(text: str) -> tuple[Any, Lines, list[Problem]]:
    """Parse ``text``; return (data, lines, problems).

    When ``problems`` is not empty, ``data`` is ``None`` and nothing was
    constructed. An empty document gives ``data=None`` and no problems.

    Examples
    --------
    >>> data, lines, problems = read_yaml("name: x\\nevents:\\n  - name: a\\n")
    >>> lines[("events", "0", "name")], problems
    (3, [])
    """
    loader = _FastCalendarLoader(text)
    try:
        try:
            try:
                node = loader.get_single_node()
            except yaml.YAMLError:
                loader.dispose()
                loader = _CalendarLoader(text)
                node = loader.get_single_node()
        except yaml.MarkedYAMLError as err:
            mark = err.problem_mark or err.context_mark
            line = mark.line + 1 if mark is not None else None
            what = (err.problem or err.context or "not valid YAML").strip()
            ctx = err.context_mark
            if err.problem and err.context and ctx is not None and mark is not None and (
                ctx.line != mark.line
            ):
                # e.g. an unclosed '{': say where it was opened, not only where it was noticed
                what += f" ({err.context.strip()} started at line {ctx.line + 1})"
            return None, {}, [Problem(line, "YAML syntax", f"{what}; {_syntax_hint(what)}")]
        except yaml.YAMLError as err:
            return None, {}, [Problem(None, "YAML syntax", f"{err}; check the file is YAML")]
        if node is None:
            return None, {}, []
        lines: Lines = {(): node.start_mark.line + 1}
        problems: list[Problem] = []
        _walk(node, (), lines, problems, set())
        if problems:
            return None, lines, problems
        try:
            data = loader.construct_document(node)
        except yaml.MarkedYAMLError as err:
            mark = err.problem_mark
            line = mark.line + 1 if mark is not None else None
            return None, lines, [Problem(line, "YAML", f"{err.problem}; write plain values")]
        return data, lines, []
    finally:
        loader.dispose()


def _syntax_hint(what: str) -> str:
    if "mapping values are not allowed" in what:
        return "check the indentation, and put quotes around text that contains ': '"
    if "found character '\\t'" in what or "tab" in what:
        return "indent with spaces, not tabs"
    if "expected <block end>" in what or "indentation" in what:
        return "check that keys of one block start in the same column"
    if "found undefined alias" in what:
        return "define the anchor (&name) before using it (*name)"
    if "expected a single document" in what:
        return "keep one calendar per file (remove the extra '---')"
    if "could not find expected ':'" in what:
        return "write each key as `key: value`"
    return "fix the YAML syntax at this line"
