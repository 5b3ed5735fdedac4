"""Read a calendar file into a :class:`~evcal.calendar.Calendar`, or list every problem.

Checking happens in three passes, each collecting problems instead of
stopping at the first:

1. YAML (syntax, tags, duplicate keys) in :mod:`evcal.calendar.yamlread`;
2. keys and value types, section by section and event by event, with the
   pydantic models of :mod:`evcal.calendar.schema` (values parsed in
   :mod:`evcal.calendar.value_parsers`), read into specs by
   :mod:`evcal.calendar.spec_reader` and :mod:`evcal.calendar.event_builder`;
3. what only the whole file can tell: duplicate names and ``like:`` targets
   (:mod:`evcal.calendar.cross_checks`), ``moved`` years (checked as each
   event is built), public-holiday countries and names.

Every problem becomes one line ``<file>:<line>: <key path>: <what is wrong>;
<what would be right>`` in a :class:`~evcal.errors.CalendarError`.
"""

from __future__ import annotations

from pathlib import Path

from evcal.calendar.core import Calendar
from evcal.calendar.problem_log import ProblemLog
from evcal.calendar.spec_reader import read_calendar_spec
from evcal.calendar.yamlread import Problem, read_yaml
from evcal.errors import CalendarError


def load_calendar(path_or_text: str | Path) -> Calendar:
    """Read and validate a calendar file (or YAML text).

    Parameters
    ----------
    path_or_text
        A path (a :class:`~pathlib.Path`, or a string naming an existing file or
        ending in ``.yaml``/``.yml``), or the YAML text itself.

    Returns
    -------
    Calendar

    Raises
    ------
    evcal.errors.CalendarError
        Listing every problem, one line each.

    Examples
    --------
    >>> cal = load_calendar('''
    ... name: Demo
    ... events:
    ...   - {name: spring-weekend, when: {easter: -2}, length: 4}
    ... ''')
    >>> cal.occurrences(2024, 2024)[["event", "start", "end"]].to_string(index=False)
    '         event      start        end\\nspring-weekend 2024-03-29 2024-04-01'
    """
    text, source = _read_source(path_or_text)
    data, lines, problems = read_yaml(text)
    if problems:
        raise CalendarError([p.format(source) for p in sorted(problems, key=_order)])
    log = ProblemLog(lines)
    cal = read_calendar_spec(data, source, log)
    if log.problems:
        raise CalendarError([p.format(source) for p in sorted(log.problems, key=_order)])
    assert cal is not None
    cal.text = text
    return cal


def _order(p: Problem) -> tuple[int, str]:
    return (p.line or 0, p.path)


def _read_source(path_or_text: str | Path) -> tuple[str, str]:
    if isinstance(path_or_text, Path):
        path: Path | None = path_or_text
    else:
        text = str(path_or_text)
        path = None
        if "\n" not in text and text.strip():
            looks_like_file = text.lower().endswith((".yaml", ".yml"))
            try:
                is_file = Path(text).is_file()
            except OSError:
                is_file = False
            if looks_like_file or is_file:
                path = Path(text)
        if path is None:
            return text, "<text>"
    source = str(path)
    if not path.exists():
        raise CalendarError(f"{source}: no such file; check the path")
    if path.is_dir():
        raise CalendarError(f"{source}: is a folder, not a calendar file; name the .yaml file")
    try:
        return path.read_bytes().decode("utf-8-sig"), source
    except UnicodeDecodeError as err:
        raise CalendarError(
            f"{source}: not UTF-8 text (byte {err.start}); save the file as UTF-8"
        ) from None
    except OSError as err:
        raise CalendarError(f"{source}: cannot be read ({err.strerror}); check permissions") from None


__all__ = ["load_calendar"]
