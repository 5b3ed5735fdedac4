"""``when: {file: ...}``: an event's dates read from a CSV file the user keeps.

School holidays by region, a retailer's own promotion calendar: dates that follow no rule and
that someone already keeps in a spreadsheet. The file has a header row and one row per
occurrence::

    region,start,end
    north,2024-02-12,2024-02-16
    south,2024-02-19,2024-02-23

* ``start`` (needed): the first day, ``YYYY-MM-DD``;
* ``end`` (optional column, optional cell): the last day, included; without it an occurrence
  lasts the event's ``length`` days;
* ``strength`` (optional): as in ``dates`` (1 = a normal occurrence);
* any other column may filter the rows: ``where: {region: north}`` keeps the rows whose
  ``region`` cell is ``north``.

The path is relative to the calendar file's folder. The file is only read, never written. Its
text is kept with the calendar (:func:`saved_text`, the ``saved_files:`` block evcal appends to
the calendar text a model folder keeps), so a plan from a model folder needs no other file and
plans with the rows as they were when the model was fitted; a plan given a calendar file reads
the file again.

Every problem is one line naming the CSV, its row (the spreadsheet's row number: the header is
row 1) and column, what is wrong and what would be right; the loader puts the calendar file,
line and key in front.

Examples
--------
>>> from evcal.calendar.problem_log import ProblemLog
>>> log = ProblemLog({})
>>> text = "region,start,end\\nnorth,2024-02-12,2024-02-16\\nsouth,2024-02-19,2024-02-23\\n"
>>> rule = rule_from_text(log, text, "school.csv", (("region", "north"),), 1, ())
>>> rule.items, rule.rows, log.problems
((Hit(start=datetime.date(2024, 2, 12), end=datetime.date(2024, 2, 16), strength=1.0),), (2,), [])
"""

from __future__ import annotations

import csv
import datetime as dt
import io
import math
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import yaml

from evcal.calendar import rules as R
from evcal.calendar.holidays_source import suggest
from evcal.calendar.problem_log import ProblemLog
from evcal.calendar.schema import MAX_DAYS, MAX_STRENGTH  # the longest occurrence and strength, as for dates
from evcal.calendar.value_parsers import parse_date, show
from evcal.errors import clip

__all__ = ["SAVED_KEY", "FileReach", "FileRule", "coverage_notes", "entry_name", "file_reaches",
           "history_notes", "read_rule", "rule_from_text", "saved_text"]

#: the columns the file's rows are read from; every other column can filter rows
START, END, STRENGTH = "start", "end", "strength"
#: the top-level key of the calendar text under which the files' text is kept with a model
SAVED_KEY = "saved_files"
#: row problems named one by one before the rest are only counted (a file with a wrong date
#: format would otherwise give one line per row)
SHOWN_ROWS = 5


@dataclass(frozen=True)
class FileRule(R.DatesRule):
    """The rows of a date file as explicit occurrences (a ``dates`` rule that knows where they came from).

    ``rows`` holds the CSV row of each item.
    """

    kind: str = "file"
    path: str = ""
    where: tuple[tuple[str, str], ...] = ()
    rows: tuple[int, ...] = ()

    def filter_text(self) -> str:
        return ", ".join(f"{k} = {v}" for k, v in self.where)

    def describe(self) -> str:
        which = f" where {self.filter_text()}" if self.where else ""
        ys = self.years()
        span = f"{ys[0]}-{ys[-1]}" if ys else "none"
        return f"file {self.path}{which} ({len(self.items)} rows, {span})"


def read_rule(
    log: ProblemLog, loc: tuple[Any, ...], path: str, where: tuple[tuple[str, str], ...], length: int,
    folder: Path | None, saved: dict[str, str], read: dict[str, str],
) -> FileRule | None:
    """The rule of a ``file:`` key at ``loc``, or None with its problems in ``log``.

    ``folder`` is the calendar file's folder (None for calendar text: the file then comes from
    ``saved``, the calendar's ``saved_files:``, or the working folder); each file read from disk
    is added to ``read`` (its text, for :func:`saved_text`).
    """
    text = _file_text(log, loc, path, folder, saved)
    if text is None:
        return None
    if folder is not None or path not in saved:
        read[path] = text
    return rule_from_text(log, text, path, where, length, loc)


def _file_text(log: ProblemLog, loc: tuple[Any, ...], path: str, folder: Path | None,
               saved: dict[str, str]) -> str | None:
    if folder is None and path in saved:
        return saved[path]
    full = (folder or Path.cwd()) / path
    where = f"the calendar file's folder {folder}" if folder is not None else "the working folder"
    if not full.exists():
        log.add(loc, f"{path}: no such file in {where}; write the CSV's path relative to the calendar "
                "file's folder, e.g. file: school-holidays.csv")
        return None
    if full.is_dir():
        log.add(loc, f"{path}: is a folder, not a CSV file; name the .csv file")
        return None
    try:
        return full.read_bytes().decode("utf-8-sig")
    except UnicodeDecodeError as err:
        log.add(loc, f"{path}: not UTF-8 text (byte {err.start}); save the file as CSV UTF-8")
    except OSError as err:
        log.add(loc, f"{path}: cannot be read ({err.strerror}); check its permissions")
    return None


def rule_from_text(log: ProblemLog, text: str, path: str, where: tuple[tuple[str, str], ...], length: int,
                   loc: tuple[Any, ...]) -> FileRule | None:
    """The rule from the CSV ``text`` of ``path``: rows kept by ``where``, checked (problems to ``log``)."""
    table = list(csv.reader(io.StringIO(text)))
    before = len(log.problems)

    def bad(message: str) -> None:
        log.add(loc, f"{path} {message}")

    if not table or not any(cell.strip() for cell in table[0]):
        bad("has no header row; write a first row of column names, e.g. start,end")
        return None
    header = [cell.strip().lower() for cell in table[0]]
    cols = {name: j for j, name in reversed(list(enumerate(header)))}
    doubled = sorted({h for h in header if h and header.count(h) > 1})
    if doubled:
        bad(f"has the column {doubled[0]!r} twice; give each column its own name")
    if START not in cols:
        bad(f"has no column 'start' (its columns: {_names(header)}); name the column of each "
            "occurrence's first day `start`")
    for key, value in where:
        if key not in cols:
            near = suggest(key, [h for h in header if h not in (START, END, STRENGTH)], n=1)
            hint = f"did you mean '{near[0]}'?" if near else f"its columns are {_names(header)}"
            bad(f"has no column {key!r} to keep rows by (where: {{{key}: {value}}}); {hint}")
    if len(log.problems) > before:
        return None

    kept: list[tuple[int, dt.date, dt.date, float]] = []
    problems: list[str] = []
    seen: dict[str, set[str]] = {key: set() for key, _ in where}
    for n, cells in enumerate(table[1:], start=2):  # spreadsheet rows: the header is row 1
        if not any(c.strip() for c in cells):
            continue  # a blank row
        if len(cells) > len(header) and any(c.strip() for c in cells[len(header):]):
            problems.append(f"row {n}: {len(cells)} cells but {len(header)} columns; remove the extra cells "
                            "or add their column names")
            continue

        def cell(name: str, row: list[str] = cells) -> str:
            j = cols.get(name)
            return row[j].strip() if j is not None and j < len(row) else ""

        for key, _ in where:
            seen[key].add(cell(key))
        if any(cell(key) != value for key, value in where):
            continue
        got = _row(n, cell(START), cell(END), cell(STRENGTH), length, problems)
        if got is not None:
            kept.append(got)
    if problems:
        more = f" (and {len(problems) - SHOWN_ROWS} more rows)" if len(problems) > SHOWN_ROWS else ""
        for i, p in enumerate(problems[:SHOWN_ROWS]):
            bad(p + (more if i == SHOWN_ROWS - 1 else ""))
        return None
    if not kept:
        _no_rows(bad, where, seen)
        return None
    kept.sort(key=lambda r: (r[1], r[0]))
    for (n1, s1, e1, _), (n2, s2, e2, _) in zip(kept, kept[1:], strict=False):
        if s2 <= e1:
            bad(f"rows {min(n1, n2)} and {max(n1, n2)} overlap ({s1} to {e1} and {s2} to {e2}); an event "
                "cannot happen twice on one day: merge the two rows or correct their dates")
            return None
    return FileRule(
        items=tuple(R.Hit(s, e, k) for _, s, e, k in kept), path=path, where=where,
        rows=tuple(n for n, *_ in kept),
    )


def _row(n: int, start: str, end: str, strength: str, length: int,
         problems: list[str]) -> tuple[int, dt.date, dt.date, float] | None:
    """One row as (row, start, end, strength), or None with its problem in ``problems``."""
    try:
        first = parse_date(start) if start else None
    except ValueError as err:
        problems.append(f"row {n}, column 'start': {err}")
        return None
    if first is None:
        problems.append(f"row {n}, column 'start': empty; write the first day as YYYY-MM-DD")
        return None
    try:
        last = parse_date(end) if end else first + dt.timedelta(days=length - 1)
    except ValueError as err:
        problems.append(f"row {n}, column 'end': {err}")
        return None
    if last < first:
        problems.append(f"row {n}: end {last} is before start {first}; end must be on or after start")
        return None
    if (last - first).days + 1 > MAX_DAYS:
        problems.append(f"row {n}: {first} to {last} is longer than {MAX_DAYS} days; split it into rows")
        return None
    k = 1.0
    if strength:
        try:
            k = float(strength)
        except ValueError:
            k = math.nan
        if not (math.isfinite(k) and 0 < k <= MAX_STRENGTH):
            problems.append(f"row {n}, column 'strength': {show(strength)} is not a strength; write a "
                            f"number above 0 and at most {MAX_STRENGTH:g} (1 = a normal occurrence), or "
                            "leave it empty")
            return None
    return n, first, last, k


def _no_rows(bad: Any, where: tuple[tuple[str, str], ...], seen: dict[str, set[str]]) -> None:
    if not where:
        bad("has no rows; add one row per occurrence under the header")
        return
    for key, value in where:
        values = sorted(v for v in seen[key] if v)
        if value not in values:
            near = suggest(value, values, n=1)
            hint = f"did you mean '{near[0]}'?" if near else f"its values of {key}: {_names(values)}"
            bad(f"has no row with {key} = {value!r}; {hint}")
            return
    pairs = ", ".join(f"{k} = {v!r}" for k, v in where)
    bad(f"has no row with {pairs} together; check the filter or add the rows")


def _names(items: list[str]) -> str:
    return clip(", ".join(items), 160) or "none"


def saved_text(files: dict[str, str]) -> str:
    """The ``saved_files:`` block appended to a calendar's text, keeping the files it read.

    Examples
    --------
    >>> print(saved_text({"promo.csv": "start\\n2024-03-02\\n"}), end="")
    <BLANKLINE>
    # saved_files: written by evcal, the date files as they were read when the calendar was loaded
    saved_files:
      "promo.csv": "start\\n2024-03-02\\n"
    """
    # one double-quoted line per file: every character kept exactly (escaped), whatever the CSV holds
    lines = [yaml.safe_dump({path: files[path]}, default_style='"', allow_unicode=True, width=1 << 30)
             for path in sorted(files)]
    body = f"{SAVED_KEY}:\n" + "".join("  " + line for line in lines)
    return ("\n# saved_files: written by evcal, the date files as they were read when the calendar was "
            "loaded\n" + body)


@dataclass(frozen=True)
class FileReach:
    """The days one calendar entry's date file speaks for: its first and last occurrence day.

    ``first``/``last`` are days of the event (the rows' days moved by the entry's ``offset``);
    ``first_row``/``last_row`` the CSV rows they come from; ``longest_gap`` the most days between
    two consecutive kept rows with no occurrence (0 for one row): a stretch the file itself leaves
    without the event.
    """

    event: str
    rule: FileRule
    first: dt.date
    last: dt.date
    first_row: int
    last_row: int
    longest_gap: int

    def source(self) -> str:
        """``promotions.csv (rows with store_region = north)``: the file and its filter."""
        return self.rule.path + (f" (rows with {self.rule.filter_text()})" if self.rule.where else "")


def entry_name(event: Any) -> str:
    """The calendar entry ``event`` comes from: a weekday class (``by_weekday``) or a dip period
    (``dip_after``/``dip_before``) is one of its entry's events, all on the entry's dates."""
    return event.split_of or (event.dip_of.name if event.dip_of is not None else event.name)


def file_reaches(cal: Any) -> list[FileReach]:
    """One :class:`FileReach` per calendar entry whose dates come from a file.

    An entry split ``by_weekday`` or with dip periods is several events of one rule: it is
    counted once, under the entry's own name.
    """
    out: dict[str, FileReach] = {}
    for ev in getattr(cal, "events", []):
        rule = ev.when
        if not isinstance(rule, FileRule) or not rule.items:
            continue
        name = entry_name(ev)
        if name in out:
            continue
        shift = dt.timedelta(days=ev.dip_of.offset if ev.dip_of is not None else ev.offset)
        items = sorted(zip(rule.items, rule.rows, strict=True), key=lambda p: (p[0].start, p[1]))
        ends = sorted(items, key=lambda p: (p[0].end, p[1]))
        gaps = [(b.start - a.end).days - 1 for (a, _), (b, _) in zip(items, items[1:], strict=False)]
        out[name] = FileReach(name, rule, items[0][0].start + shift, ends[-1][0].end + shift, items[0][1],
                              ends[-1][1], max([0, *gaps]))
    return list(out.values())


def coverage_notes(cal: Any, last: Any) -> list[str]:
    """The plan's notes for date files whose rows stop before the horizon's last day ``last`` (a Timestamp).

    A day past a file's last row has no occurrence only because the file says nothing about it,
    not because the event will not happen: never silently zero.
    """
    return [f"{r.event}: {r.source()} lists dates up to {r.last} (row {r.last_row}) and the plan runs to "
            f"{last.date()}, so the plan has no {r.event} after {r.last}{_bridged(cal, r.event)}; add the "
            "later dates to the file and plan again"
            for r in file_reaches(cal) if r.last < last.date()]


def _bridged(cal: Any, event: str) -> str:
    """``, and no fete-bridge either (...)``: the bridge-day entries built on ``event``'s dates (or ``""``).

    A bridge day sits next to a day of its target, so where the file has no rows the bridge entry
    has no days either: the note names it, or the planner would look for the missing days in one
    place only.
    """
    names = list(dict.fromkeys(entry_name(e) for e in getattr(cal, "events", [])
                               if isinstance(e.when, R.BridgeRule) and e.when.target == event))
    if not names:
        return ""
    shown = " or ".join(names)
    return f", and no {shown} either (bridge days of {event}: they follow its dates)"


def history_notes(cal: Any, first: dt.date, last: dt.date) -> list[str]:
    """The fit's notes for date files that do not reach over the history ``first`` .. ``last`` (days).

    Where the file has no rows the history is fitted as if the event did not happen: right if it
    did not, a lift taken into the base if it did. A stretch no longer than the longest gap between
    the file's own rows is what the file shows between occurrences anyway, so only a longer one
    gets a note (a file of one row: any stretch).

    Examples
    --------
    >>> from evcal.calendar import load_calendar
    >>> cal = load_calendar("name: t\\nevents:\\n  - {name: p, when: {file: p.csv}}\\n"
    ...                     + saved_text({"p.csv": "start\\n2021-03-01\\n2021-06-01\\n"}))
    >>> print(history_notes(cal, dt.date(2021, 1, 1), dt.date(2022, 12, 31))[0])  # doctest: +ELLIPSIS
    p: p.csv lists dates up to 2021-06-01 (row 3) and the history runs to 2022-12-31, so 2021-06-02 .. \
2022-12-31 is fitted as if no p happened; ...
    """
    notes = []
    for r in file_reaches(cal):
        spans = []
        if (r.first - first).days > r.longest_gap:
            spans.append((f"lists dates from {r.first} (row {r.first_row}) and the history starts on {first}",
                          first, r.first - dt.timedelta(days=1)))
        if (last - r.last).days > r.longest_gap:
            spans.append((f"lists dates up to {r.last} (row {r.last_row}) and the history runs to {last}",
                          r.last + dt.timedelta(days=1), last))
        for what, lo, hi in spans:
            notes.append(f"{r.event}: {r.source()} {what}, so {lo} .. {hi} is fitted as if no {r.event} "
                         f"happened{_bridged(cal, r.event)}; if it did, add those dates to the file (or "
                         "exclude the periods) and fit again")
    return notes
