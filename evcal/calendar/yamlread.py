"""Safe YAML reading that keeps the line of every key.

The calendar file is read with PyYAML's ``SafeLoader`` (on libyaml when PyYAML has it), changed to

* build no Python objects: any tag other than the plain YAML types (``!!python/object``,
  ``!custom``) is reported, and nothing is constructed;
* leave dates as text, so an impossible date (``2023-02-30``) gets the validator's clear
  message instead of a crash inside the parser;
* read only ``true``/``false`` as booleans (YAML 1.2), so the country code ``NO`` (Norway) or a
  weekday written ``on`` stays text;
* be bounded: before anything is composed, the parser's events are read once to refuse nesting
  deeper than :data:`MAX_DEPTH` and aliases that would expand to more than
  :data:`MAX_ALIAS_NODES` values (a "billion laughs" file) or into themselves. That pass stops
  at the first breach, so a hostile file costs a few dozen events, whatever its size.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from typing import Any

import yaml

from evcal.errors import clip

#: Deepest nesting of blocks and lists accepted. A real calendar is at most 6 deep (top level >
#: events > an event > when > dates > a date; `moved` is as deep), so 32 leaves room for any
#: hand-written style while staying far below Python's recursion limit (1000), which the
#: pure-Python composer, the key-line walk and the validator each spend a few frames of per level.
MAX_DEPTH = 32
#: Most values that aliases (``*name``, ``<<: *name``) may add to the data. Calendars use an
#: alias to repeat a `when` block or a list of dates for a few events: hundreds of values.
#: 100,000 is far above that and still validates in a fraction of a second; a billion-laughs
#: file (nine aliases of nine aliases ...) passes it within a few dozen events and is refused.
MAX_ALIAS_NODES = 100_000
# A file that libyaml cannot parse is parsed again by the pure-Python parser for its clearer
# message; that parser is ~100x slower, so very large files keep libyaml's message instead.
_FALLBACK_MAX_CHARS = 1_000_000
_TAG = "tag:yaml.org,2002:"
_PLAIN_TAGS = {_TAG + t for t in ("str", "int", "float", "bool", "null", "map", "seq", "merge")}
_MAX_INT_CHARS = 30

# SafeLoader's resolvers without timestamps, and with YAML 1.2 booleans only.
_RESOLVERS = {
    first: [(tag, rx) for tag, rx in resolvers if tag not in (_TAG + "timestamp", _TAG + "bool")]
    for first, resolvers in yaml.SafeLoader.yaml_implicit_resolvers.items()
}
for _first in "tTfF":
    _RESOLVERS[_first].append((_TAG + "bool", re.compile(r"^(?:true|True|TRUE|false|False|FALSE)$")))
_CalendarLoader = type("_CalendarLoader", (yaml.SafeLoader,), {"yaml_implicit_resolvers": _RESOLVERS})
# libyaml's parser composes the node tree about 10x faster; its error messages are terser.
_FastCalendarLoader = type(
    "_FastCalendarLoader",
    (getattr(yaml, "CSafeLoader", yaml.SafeLoader),),
    {"yaml_implicit_resolvers": _RESOLVERS},
)


@dataclass(frozen=True)
class Problem:
    """One problem found in the file: line (1-based, or None), key path, message."""

    line: int | None
    path: str
    message: str

    def format(self, source: str) -> str:
        where = f"{source}:{self.line}" if self.line is not None else source
        path = clip(self.path)  # a key path can hold a user's (long) key or event name
        return f"{where}: {path}: {self.message}" if path else f"{where}: {self.message}"


Lines = dict[tuple[str, ...], int]


def check_bounds(loader: yaml.SafeLoader) -> Problem | None:
    """Read ``loader``'s parser events and return the first breach of the bounds, or None.

    Counts, before any node is composed: the nesting depth (against :data:`MAX_DEPTH`) and the
    number of values the aliases would add when the data is built (against
    :data:`MAX_ALIAS_NODES`), from the size of each anchored block as it closes. An alias used
    inside the block it names would repeat forever and is refused too. Syntax errors are raised
    as PyYAML raises them.

    Examples
    --------
    >>> check_bounds(yaml.SafeLoader("a: &x [1, 2]\\nb: *x\\n")) is None
    True
    >>> check_bounds(yaml.SafeLoader("a: " + "[" * 40 + "]" * 40)).line
    1
    """
    frames: list[list[Any]] = []  # per open block: [anchor, values so far]
    sizes: dict[str, int] = {}  # anchor -> values in its block
    added = 0
    while (event := loader.get_event()) is not None and not isinstance(event, yaml.StreamEndEvent):
        line = event.start_mark.line + 1 if event.start_mark is not None else None
        size = 0
        if isinstance(event, yaml.SequenceStartEvent | yaml.MappingStartEvent):
            frames.append([event.anchor, 1])
            if len(frames) > MAX_DEPTH:
                return Problem(
                    line,
                    "YAML",
                    f"the data is nested more than {MAX_DEPTH} levels deep here; a calendar needs "
                    "at most 6 (top level, events, an event, when, dates, a date): check for "
                    "unclosed brackets",
                )
            continue
        if isinstance(event, yaml.SequenceEndEvent | yaml.MappingEndEvent):
            anchor, size = frames.pop()
        elif isinstance(event, yaml.ScalarEvent):
            anchor, size = event.anchor, 1
        elif isinstance(event, yaml.AliasEvent):
            name, anchor = event.anchor, None
            if any(anchor == name for anchor, _ in frames):
                return Problem(
                    line,
                    "YAML",
                    f"alias *{clip(name, 60)} is used inside the block it names "
                    f"(&{clip(name, 60)}), so it would repeat forever; refer only to a block "
                    "that is complete",
                )
            size = sizes.get(name, 0)  # an undefined alias is reported by the composer
            added += size
            if added > MAX_ALIAS_NODES:
                return Problem(
                    line,
                    "YAML",
                    f"the aliases (*name) up to here would expand to more than "
                    f"{MAX_ALIAS_NODES:,} values; a calendar repeats a block a few times at "
                    "most: write the values out, or use fewer aliases of aliases",
                )
        else:
            anchor = None
        if anchor is not None:
            sizes[anchor] = size
        if frames:
            frames[-1][1] += size
    return None


def _walk(
    node: yaml.Node, path: tuple[str, ...], lines: Lines, problems: list[Problem], seen: set[int]
) -> None:
    """Record the line of every key under ``node``; report tags, huge ints and duplicate keys."""
    if id(node) in seen:  # an alias used again: already walked
        return
    seen.add(id(node))
    where = (node.start_mark.line + 1, ".".join(path) or "(top level)")
    if node.tag not in _PLAIN_TAGS:
        tag = clip("!!" + node.tag.removeprefix(_TAG) if node.tag.startswith(_TAG) else node.tag)
        problems.append(
            Problem(
                *where,
                f"YAML tag '{tag}' is not allowed (the calendar is read as plain data, never as code); "
                "write a plain value",
            )
        )
    elif node.tag == _TAG + "int" and len(str(node.value)) > _MAX_INT_CHARS:
        # Python refuses to turn more than 4300 digits into an int (a ValueError deep in the
        # constructor); no setting of a calendar needs more than a few digits.
        problems.append(
            Problem(
                *where,
                f"a whole number of {len(str(node.value))} characters is far too long for any "
                "setting here; write a number of a few digits",
            )
        )
    elif isinstance(node, yaml.MappingNode):
        first_line: dict[str, int] = {}
        for key_node, value_node in node.value:
            key = str(key_node.value) if isinstance(key_node, yaml.ScalarNode) else "?"
            line = key_node.start_mark.line + 1
            if key in first_line and key != "<<":
                problems.append(
                    Problem(
                        line,
                        ".".join((*path, key)),
                        f"key `{key}` appears twice in this block (first at line {first_line[key]}); "
                        "keep one",
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


def _compose(cls: type, text: str) -> tuple[Any, yaml.Node | None, Problem | None]:
    """(loader, node, None) once the bounds hold, else (None, None, the breach).

    The bounds pass reads the parser's events with its own loader, then a fresh loader composes
    the tree: composing is where depth and aliases would cost recursion and memory (libyaml's
    composer is compiled code and cannot be interrupted part-way).
    """
    scan = cls(text)
    try:
        bound = check_bounds(scan)
    finally:
        scan.dispose()
    if bound is not None:
        return None, None, bound
    loader = cls(text)
    try:
        return loader, loader.get_single_node(), None
    except BaseException:
        loader.dispose()
        raise


def read_yaml(text: str) -> tuple[Any, Lines, list[Problem]]:
    """Parse ``text``; return (data, lines, problems).

    ``lines`` maps each key path (a tuple of strings) to the 1-based line where that key or list
    item starts. When ``problems`` is not empty, ``data`` is ``None`` and nothing was
    constructed. An empty document gives ``data=None`` and no problems.

    Examples
    --------
    >>> data, lines, problems = read_yaml("name: x\\nevents:\\n  - name: a\\n")
    >>> lines[("events", "0", "name")], problems
    (3, [])
    """
    try:
        try:
            loader, node, bound = _compose(_FastCalendarLoader, text)
        except yaml.YAMLError:
            if len(text) > _FALLBACK_MAX_CHARS:
                raise
            loader, node, bound = _compose(_CalendarLoader, text)
    except yaml.MarkedYAMLError as err:
        mark = err.problem_mark or err.context_mark
        what = clip((err.problem or err.context or "not valid YAML").strip())
        ctx = err.context_mark
        if err.problem and err.context and ctx is not None and mark is not None and ctx.line != mark.line:
            # e.g. an unclosed '{': say where it was opened, not only where it was noticed
            what += f" ({clip(err.context.strip())} started at line {ctx.line + 1})"
        line = mark.line + 1 if mark is not None else None
        return None, {}, [Problem(line, "YAML syntax", f"{what}; {_syntax_hint(what)}")]
    except yaml.YAMLError as err:
        return None, {}, [Problem(None, "YAML syntax", f"{clip(str(err))}; check the file is YAML")]
    if bound is not None:
        return None, {}, [bound]
    try:
        if node is None:
            return None, {}, []
        lines: Lines = {(): node.start_mark.line + 1}
        problems: list[Problem] = []
        _walk(node, (), lines, problems, set())
        if problems:
            return None, lines, problems
        try:
            return loader.construct_document(node), lines, []
        except yaml.MarkedYAMLError as err:
            line = err.problem_mark.line + 1 if err.problem_mark is not None else None
            return None, lines, [Problem(line, "YAML", f"{clip(str(err.problem))}; write plain values")]
    finally:
        loader.dispose()


_SYNTAX_HINTS = {
    "mapping values are not allowed": "check the indentation, and put quotes around text that contains ': '",
    "found character '\\t'": "indent with spaces, not tabs",
    "tab": "indent with spaces, not tabs",
    "expected <block end>": "check that keys of one block start in the same column",
    "indentation": "check that keys of one block start in the same column",
    "found undefined alias": "define the anchor (&name) before using it (*name)",
    "expected a single document": "keep one calendar per file (remove the extra '---')",
    "could not find expected ':'": "write each key as `key: value`",
}


def _syntax_hint(what: str) -> str:
    return next(
        (hint for words, hint in _SYNTAX_HINTS.items() if words in what), "fix the YAML syntax at this line"
    )
