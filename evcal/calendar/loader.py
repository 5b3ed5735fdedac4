"""Read a calendar file into a :class:`~evcal.calendar.Calendar`, or list every problem.

Checking happens in three passes, each collecting problems instead of
stopping at the first:

1. YAML (syntax, tags, duplicate keys) in :mod:`evcal.calendar.yamlread`;
2. keys and value types, section by section and event by event, with the
   pydantic models of :mod:`evcal.calendar.schema`;
3. what only the whole file can tell: duplicate names, ``like:`` targets,
   ``moved`` years, public-holiday countries and names.

Every problem becomes one line ``<file>:<line>: <key path>: <what is wrong>;
<what would be right>`` in a :class:`~evcal.errors.CalendarError`.
"""

from __future__ import annotations

import datetime as dt
import re
from pathlib import Path
from typing import Any

import pandas as pd
from pydantic import BaseModel, ValidationError

from evcal.calendar import rules as R
from evcal.calendar.core import Calendar, PublicHolidays
from evcal.calendar.holidays_source import HolidaySource, HolidaySourceError, suggest
from evcal.calendar.schema import (
    CalendarModel,
    EventModel,
    ExclusionModel,
    InterventionModel,
    PublicHolidaysModel,
    WhenModel,
    parse_effect,
    show,
)
from evcal.calendar.spec import (
    EventSpec,
    ExclusionSpec,
    InterventionSpec,
    MovedSpec,
)
from evcal.calendar.yamlread import Lines, Problem, read_yaml
from evcal.errors import CalendarError, clip

# Years whose holiday names make up the public-holiday events when the block gives no
# `years` bounds. Wide enough for any history or plan we expect; a choice, documented.
DEFAULT_HOLIDAY_YEARS = (2000, 2035)


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
    builder = _Builder(source, lines)
    cal = builder.build(data)
    if builder.problems:
        raise CalendarError([p.format(source) for p in sorted(builder.problems, key=_order)])
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


# ------------------------------------------------------------------ pydantic errors -> lines

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
    import typing

    if isinstance(annotation, type) and issubclass(annotation, BaseModel):
        return annotation
    for arg in typing.get_args(annotation):
        found = _inner_model(arg)
        if found is not None:
            return found
    return None


def _expected_choices(ctx: dict[str, Any]) -> list[str]:
    return re.findall(r"'([^']*)'", str(ctx.get("expected", "")))


def _describe(err: dict[str, Any], model: type[BaseModel], loc: tuple[Any, ...]) -> str:
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


# ------------------------------------------------------------------ the builder


class _Builder:
    def __init__(self, source: str, lines: Lines) -> None:
        self.source = source
        self.lines = lines
        self.problems: list[Problem] = []
        self.raw: dict[str, Any] = {}

    # -- where things are -------------------------------------------------

    def line(self, loc: tuple[Any, ...]) -> int | None:
        parts = tuple(str(p) for p in loc)
        while parts:
            if parts in self.lines:
                return self.lines[parts]
            parts = parts[:-1]
        return self.lines.get(())

    def path(self, loc: tuple[Any, ...]) -> str:
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
        self.problems.append(Problem(self.line(loc), self.path(loc), message))

    def validate(self, model: type[BaseModel], raw: Any, prefix: tuple[Any, ...]) -> Any:
        try:
            return model.model_validate(raw)
        except ValidationError as exc:
            for err in exc.errors(include_url=False):
                loc = tuple(err["loc"])
                # pydantic names tagged-union / dict-key branches; keep the file's own keys.
                loc = tuple(p for p in loc if p != "[key]")
                self.add(prefix + loc, _describe(err, model, loc))
            return None

    @staticmethod
    def _without_bad_keys(model: type[BaseModel], raw: Any) -> Any:
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

    # -- the passes -------------------------------------------------------

    def build(self, data: Any) -> Calendar | None:
        if data is None:
            self.problems.append(
                Problem(1, "(top level)", "the file is empty; write at least `name:` and `events:`")
            )
            return None
        if not isinstance(data, dict):
            kind = "a list" if isinstance(data, list) else f"{type(data).__name__} {show(data)}"
            self.problems.append(
                Problem(
                    self.lines.get((), 1),
                    "(top level)",
                    f"the top level is {kind}, not a block of keys; start with `name:` and "
                    "`events:`",
                )
            )
            return None
        self.raw = data
        top = self.validate(CalendarModel, data, ())
        name = top.name if top is not None else str(data.get("name", ""))

        source = None
        public: PublicHolidays | None = None
        if data.get("public_holidays") is not None:
            block = self.validate(PublicHolidaysModel, data["public_holidays"], ("public_holidays",))
            if block is not None:
                source, public = self._public_holidays(block)

        raw_events = data.get("events")
        raw_events = raw_events if isinstance(raw_events, list) else []
        holiday_names = [e.name for e in public.events] if public is not None else []
        self._check_names(raw_events, holiday_names)
        events: list[EventSpec] = []
        for i, raw in enumerate(raw_events):
            ev = self.validate(EventModel, raw, ("events", i))
            if ev is None:
                ev = self._without_bad_keys(EventModel, raw)
            spec = self._event(ev, i, source) if ev is not None else None
            if spec is not None:
                events.append(spec)
        if public is not None:
            events += [e for e in public.events if e.name not in {x.name for x in events}]
        self._check_like(raw_events, holiday_names)
        event_lines = {e.name: e.line for e in events}

        interventions: list[InterventionSpec] = []
        raw_iv = data.get("interventions")
        for i, raw in enumerate(raw_iv if isinstance(raw_iv, list) else []):
            iv = self.validate(InterventionModel, raw, ("interventions", i))
            if iv is None:
                continue
            line = self.line(("interventions", i))
            if iv.name in event_lines or any(x.name == iv.name for x in interventions):
                self.add(
                    ("interventions", i, "name"),
                    f"name '{iv.name}' is already used by an event or intervention; "
                    "give each its own name",
                )
                continue
            interventions.append(
                InterventionSpec(
                    name=iv.name,
                    type=iv.type,
                    start=pd.Timestamp(iv.start),
                    end=pd.Timestamp(iv.end) if iv.end is not None else None,
                    decay=(0.7 if iv.decay is None else iv.decay) if iv.type == "temporary"
                    else None,
                    label=iv.label or iv.name,
                    line=line,
                )
            )

        exclusions: list[ExclusionSpec] = []
        raw_ex = data.get("exclude")
        for i, raw in enumerate(raw_ex if isinstance(raw_ex, list) else []):
            ex = self.validate(ExclusionModel, raw, ("exclude", i))
            if ex is not None:
                exclusions.append(
                    ExclusionSpec(
                        pd.Timestamp(ex.start), pd.Timestamp(ex.end), ex.reason,
                        self.line(("exclude", i)),
                    )
                )

        if self.problems:
            return None
        return Calendar(
            name=name,
            source=self.source,
            events=events,
            interventions=interventions,
            exclusions=exclusions,
            public_holidays=public,
        )

    # -- sections ---------------------------------------------------------

    def _public_holidays(
        self, block: PublicHolidaysModel
    ) -> tuple[HolidaySource | None, PublicHolidays | None]:
        loc = ("public_holidays",)
        try:
            source = HolidaySource.create(block.country, block.subdivision, block.language)
        except HolidaySourceError as err:
            self.add((*loc, err.key), str(err))
            return None, None
        lo, hi = block.years.bounds()
        name_years = range(lo or DEFAULT_HOLIDAY_YEARS[0], (hi or DEFAULT_HOLIDAY_YEARS[1]) + 1)
        if block.only is not None:
            names = []
            for j, wanted in enumerate(block.only):
                try:
                    source.check_name(wanted, name_years)
                except HolidaySourceError as err:
                    self.add((*loc, "only", j), str(err))
                    continue
                if wanted not in names:
                    names.append(wanted)
        else:
            names = source.names(name_years)
        line = self.line(loc)
        events = [
            EventSpec(
                name=n,
                rule="holiday",
                when=R.HolidayRule(n, source),
                label=n,
                group="public_holiday",
                before=block.before,
                after=block.after,
                shape=block.shape,
                years=block.years,
                line=line,
            )
            for n in names
        ]
        return source, PublicHolidays(source, tuple(name_years), tuple(events))

    def _event(self, ev: EventModel, i: int, source: HolidaySource | None) -> EventSpec | None:
        loc: tuple[Any, ...] = ("events", i)
        name = ev.name.strip()
        if not name or any(c in name for c in "[]\n"):
            self.add((*loc, "name"), f"'{ev.name}' cannot be an event name; use letters, "
                     "digits, spaces or dashes (no square brackets)")
        rule = self._rule(ev.when, (*loc, "when"), source)
        if rule is None:
            return None
        kind = ev.when.kind
        length = ev.length if ev.length is not None else 1
        if kind == "span":
            if ev.length is not None:
                self.add((*loc, "length"), "a span sets its own length from start to end; "
                         "remove `length`")
            assert isinstance(rule, R.SpanRule)
            length = rule.max_length()
        if kind == "every_weekday" and ev.moved:
            self.add((*loc, "moved"), "every_weekday occurs on many days a year, so it cannot "
                     "be moved; use skip and a `dates` event instead")
        if kind == "dates" and ev.years.kind != "all":
            self.add((*loc, "years"), "a `dates` rule lists its own years; remove `years`")
        if ev.shape == "daily":
            self._check_daily(ev, loc, rule, length)
        spec = EventSpec(
            name=name,
            rule=kind,
            when=rule,
            label=(ev.label or name).strip(),
            group=ev.group,
            length=length,
            before=ev.before,
            after=ev.after,
            shape=ev.shape,
            effect=ev.effect,
            years=ev.years,
            skip=tuple(sorted(set(ev.skip))),
            moved={},
            offset=ev.when.offset,
            line=self.line(loc),
        )
        moved: dict[int, MovedSpec] = {}
        for year, item in ev.moved.items():
            where = (*loc, "moved", year)
            if year in spec.skip:
                self.add(where, f"{year} is both skipped and moved; keep one of them")
                continue
            if kind != "every_weekday" and not spec.occurs_in(year):
                self.add(where, f"{year} is not a year this event occurs in ({_years_text(spec)});"
                         " move one of its years, or add the year to `years`")
                continue
            end = item.end if item.end is not None else item.start + dt.timedelta(days=length - 1)
            moved[year] = MovedSpec(pd.Timestamp(item.start), pd.Timestamp(end), item.strength)
        object.__setattr__(spec, "moved", moved)
        return spec

    def _check_daily(self, ev: EventModel, loc: tuple[Any, ...], rule: R.Rule, length: int) -> None:
        items: list[tuple[tuple[Any, ...], dt.date, dt.date | None]] = []
        if isinstance(rule, R.DatesRule):
            items += [((*loc, "when", "dates", j), h.start, h.end) for j, h in enumerate(rule.items)]
        items += [((*loc, "moved", y), m.start, m.end) for y, m in ev.moved.items()]
        for where, start, end in items:
            days = (end - start).days + 1 if end is not None else length
            if days != length:
                self.add(where, f"lasts {days} days but shape daily needs every occurrence to last"
                         f" `length` = {length} days; make them the same length")

    def _rule(self, when: WhenModel, loc: tuple[Any, ...], source: HolidaySource | None
              ) -> R.Rule | None:
        kind = when.kind
        if kind == "easter":
            return R.EasterRule(when.easter or 0)
        if kind == "orthodox_easter":
            return R.OrthodoxEasterRule(when.orthodox_easter or 0)
        if kind == "fixed":
            assert when.fixed is not None
            return R.FixedRule(*when.fixed)
        if kind == "weekday":
            w = when.weekday
            assert w is not None
            return R.WeekdayRule(month=w.month, weekday=w.day, nth=w.nth)
        if kind == "span":
            s = when.span
            assert s is not None
            return R.SpanRule(*s.start, *s.end)
        if kind == "every_weekday":
            assert when.every_weekday is not None
            return R.EveryWeekdayRule(when.every_weekday)
        if kind == "dates":
            assert when.dates is not None
            if not when.dates:
                self.add((*loc, "dates"), "the list of dates is empty; list at least one date")
                return None
            return R.DatesRule(tuple(R.Hit(d.start, d.end, d.strength) for d in when.dates))
        # holiday
        name = (when.holiday or "").strip()
        if source is None:
            self.add((*loc, "holiday"), f"there is no public_holidays block to look '{name}' up in;"
                     " add one, e.g. public_holidays: {country: GB, subdivision: ENG}")
            return None
        try:
            lo, hi = DEFAULT_HOLIDAY_YEARS
            source.check_name(name, range(lo, hi + 1))
        except HolidaySourceError as err:
            self.add((*loc, "holiday"), str(err))
            return None
        return R.HolidayRule(name, source)

    def _check_names(self, raw_events: list[Any], holiday_names: list[str]) -> None:
        """Duplicate event names, also against the public-holiday events."""
        first: dict[str, int | None] = {}
        for i, raw in enumerate(raw_events):
            name = raw.get("name") if isinstance(raw, dict) else None
            if not isinstance(name, str) or not name.strip():
                continue
            name = name.strip()
            where = ("events", i, "name")
            if name in first:
                self.add(where, f"event name '{name}' is used twice (first at line "
                         f"{first[name]}); give each event its own name")
            elif name in holiday_names:
                self.add(where, f"'{name}' is also a public holiday from public_holidays; "
                         "rename this event, or leave the holiday out with `only`")
            first.setdefault(name, self.line(where))

    def _check_like(self, raw_events: list[Any], holiday_names: list[str]) -> None:
        """``like:`` must name another event, and must not go round in a circle."""
        likes: dict[str, tuple[int, str | None]] = {}
        names = list(holiday_names)
        for i, raw in enumerate(raw_events):
            if not isinstance(raw, dict) or not isinstance(raw.get("name"), str):
                continue
            name = raw["name"].strip()
            names.append(name)
            try:
                effect = parse_effect(raw.get("effect"))
            except ValueError:
                continue  # already reported by the schema pass
            likes.setdefault(name, (i, effect.like if effect.kind == "like" else None))
        for name, (i, target) in likes.items():
            if target is None:
                continue
            where = ("events", i, "effect", "like")
            if target == name:
                self.add(where, "an event cannot borrow its own lift; name another event")
                continue
            if target not in names:
                near = suggest(target, names, n=1)
                hint = f"did you mean '{near[0]}'?" if near else "name an event of this calendar"
                self.add(where, f"'{target}' is not an event of this calendar; {hint}")
                continue
            chain = [name]
            cur: str | None = target
            while cur is not None and cur not in chain:
                chain.append(cur)
                cur = likes.get(cur, (0, None))[1]
            if cur == name:
                self.add(where, f"`like` goes round in a circle ({' -> '.join(chain)} -> "
                         f"{name}); one of them needs its own effect")


def _years_text(spec: EventSpec) -> str:
    if isinstance(spec.when, R.DatesRule):
        return "its dates are in " + ", ".join(str(y) for y in spec.when.years())
    text = spec.years.describe()
    if spec.years.kind == "every" and spec.years.start is not None and spec.years.every:
        first = spec.years.start
        text += ": " + ", ".join(str(first + k * spec.years.every) for k in range(3)) + ", ..."
    elif spec.years.kind == "all":
        text = "every year"
    return text


__all__ = ["load_calendar"]
